"""``/api/v1/``: the REST API, nested per project, with its OpenAPI schema and docs."""

from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularSwaggerView
from rest_framework.routers import DefaultRouter, SimpleRouter

from api.routes.evidence import global_urlpatterns as evidence_global
from api.views import exchange, health, record, schemas, tenancy
from api.views.token_obtain import TokenObtainView

root = DefaultRouter()
root.register("organisations", tenancy.OrganisationViewSet, basename="organisation")
root.register("projects", tenancy.ProjectViewSet, basename="project")
root.register("tokens", tenancy.TokenViewSet, basename="token")

nested = SimpleRouter()
nested.register("contexts", record.ContextViewSet, basename="context")
nested.register("relationships", record.RelationshipViewSet, basename="relationship")
nested.register("changes", record.ChangeViewSet, basename="change")
nested.register("revisions", record.RevisionViewSet, basename="revision")
nested.register("sync", record.SyncViewSet, basename="sync")

#: Each app's project-nested routes live in their own module under api/routes/.
project_urlpatterns = [
    *nested.urls,
    path("", include("api.routes.checks")),
    path("", include("api.routes.evidence")),
    path("", include("api.routes.interpretations")),
    path("", include("api.routes.runs")),
    path("", include("api.routes.weighing")),
    path("", include("api.routes.exchange")),
]

urlpatterns = [
    path("v1/", include(root.urls)),
    path("v1/", include(evidence_global)),
    path("v1/projects/<str:project>/", include(project_urlpatterns)),
    path("v1/health/", health.health, name="health"),
    path("v1/schemas/interpretation/", schemas.interpretation_content, name="schema-interpretation"),
    path("v1/schemas/linked-data-context/", exchange.linked_data_context, name="schema-linked-data-context"),
    path("v1/schema/", SpectacularAPIView.as_view(), name="schema"),
    path("v1/docs/", SpectacularSwaggerView.as_view(url_name="schema"), name="docs"),
    path("v1/auth/token/", TokenObtainView.as_view(), name="token-obtain"),
    path("auth/", include("rest_framework.urls")),
]
