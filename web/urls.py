"""The pages, at ``/`` and below (the API keeps ``/api/``)."""

from django.contrib.auth import views as auth_views
from django.urls import include, path

from .views import evidence, home, interpretations, order, people, record, runs

app_name = "web"

project_patterns = [
    path("", record.overview, name="project"),
    path("contexts/", record.contexts, name="contexts"),
    path("contexts/<int:context_id>/", record.context_detail, name="context"),
    path("relationships/", record.relationships, name="relationships"),
    path("changes/", record.changes, name="changes"),
    path("diagram/", order.diagram, name="diagram"),
    path("check/", order.check, name="check"),
    path("check/start/", order.check_start, name="check-start"),
    path("jobs/<uuid:job_id>/status/", order.job_status, name="job-status"),
    path("evidence/", evidence.evidence, name="evidence"),
    path("determinations/<int:determination_id>/", evidence.determination, name="determination"),
    path("versions/", interpretations.versions, name="versions"),
    path("versions/compare/", interpretations.compare, name="compare"),
    path("versions/<int:version_id>/", interpretations.version_detail, name="version"),
    path("versions/<int:version_id>/alternatives/", interpretations.alternatives_page, name="alternatives"),
    path("versions/<int:version_id>/alternatives/start/", interpretations.alternatives_start,
         name="alternatives-start"),
    path("versions/<int:version_id>/<slug:name>/", interpretations.version_action, name="version-action"),
    path("runs/", runs.runs, name="runs"),
    path("runs/submit/", runs.run_submit, name="run-submit"),
    path("runs/<uuid:run_id>/", runs.run_detail, name="run"),
    path("runs/<uuid:run_id>/progress/", runs.run_progress, name="run-progress"),
    path("runs/<uuid:run_id>/plot.svg", runs.run_plot, name="run-plot"),
]

urlpatterns = [
    path("", home.home, name="home"),
    path("accounts/login/", auth_views.LoginView.as_view(), name="login"),
    path("accounts/logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("accounts/password/", auth_views.PasswordChangeView.as_view(success_url="/accounts/password/done/"),
         name="password-change"),
    path("accounts/password/done/", auth_views.PasswordChangeDoneView.as_view(), name="password-done"),
    path("organisation/", home.switch_organisation, name="switch-organisation"),
    path("curves/", evidence.curves, name="curves"),
    path("tokens/", people.tokens, name="tokens"),
    path("tokens/new/", people.token_create, name="token-create"),
    path("tokens/<int:token_id>/revoke/", people.token_revoke, name="token-revoke"),
    path("people/<slug:org>/", people.people_page, name="people"),
    path("people/<slug:org>/add/", people.member_add, name="member-add"),
    path("people/<slug:org>/<int:membership_id>/role/", people.member_role, name="member-role"),
    path("people/<slug:org>/<int:membership_id>/remove/", people.member_remove, name="member-remove"),
    path("projects/<slug:org>/<str:code>/", include(project_patterns)),
]
