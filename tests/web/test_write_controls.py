"""Write controls appear only for roles allowed to act; a forced POST by anyone else is refused (403)."""

from __future__ import annotations

import pytest
from django.urls import reverse

from chronology.interpretations.models import Reading, Status
from chronology.runs.models import Run
from projects.models import ChangeLogEntry, Role

from .conftest import ALL_ROLES

V, R, A, M = Role.VIEWER, Role.RECORDER, Role.ANALYST, Role.MANAGER


def _args(site, *more):
    project = site["project"]
    return (project.organisation.slug, project.code, *more)


#: (page, marker of the control, least role that sees it)
CONTROLS = [
    ("check", 'action="/projects/northfold/VML24/check/start/"', R),
    ("version", 'id="approve-form"', M),
    ("version", 'id="reject-form"', M),
    ("runs", 'id="run-form"', A),
    ("alternatives", "Analyse the undecided items", A),
]


def _page(site, name):
    if name in ("version", "alternatives"):
        return reverse(f"web:{name}", args=_args(site, site["first"].pk))
    return reverse(f"web:{name}", args=_args(site))


@pytest.mark.parametrize("role", ALL_ROLES)
@pytest.mark.parametrize("page,marker,least", CONTROLS)
def test_a_write_control_shows_only_to_roles_allowed_to_use_it(site, web_client, role, page, marker, least):
    html = web_client(role).get(_page(site, page)).content.decode()
    assert (marker in html) == (Role.rank(role) >= Role.rank(least))


def _post(site, name):
    first = site["first"]
    return {
        "check-start": (reverse("web:check-start", args=_args(site)), {}),
        "approve": (reverse("web:version-action", args=_args(site, first.pk, "approve")), {"reason": "fits"}),
        "reject": (reverse("web:version-action", args=_args(site, first.pk, "reject")), {"reason": "no"}),
        "run": (reverse("web:run-submit", args=_args(site)),
                {"version": first.pk, "chains": 1, "iterations": 100, "warmup": 0}),
        "alternatives": (reverse("web:alternatives-start", args=_args(site, first.pk)), {}),
    }[name]


FORCED = [
    ("check-start", R), ("approve", M), ("reject", M), ("run", A), ("alternatives", A),
]


@pytest.mark.parametrize("role", [V, R, A])
@pytest.mark.parametrize("action,least", FORCED)
def test_a_forced_post_by_a_role_below_the_action_is_refused(site, web_client, role, action, least):
    if Role.rank(role) >= Role.rank(least):
        pytest.skip("the role is allowed; covered by the allowed-action tests")
    url, data = _post(site, action)
    before = ChangeLogEntry.objects.count()
    assert web_client(role).post(url, data).status_code == 403
    assert ChangeLogEntry.objects.count() == before


def test_a_viewer_sees_no_form_that_posts_on_any_project_page(site, web_client):
    from .conftest import page_urls

    client = web_client(V)
    for name, url in page_urls(site).items():
        html = client.get(url).content.decode()
        # The only forms a viewer meets post to the organisation switcher and sign-out.
        posts = html.count('method="post"')
        allowed = html.count('action="/organisation/"') + html.count('action="/accounts/logout/"')
        assert posts == allowed, name


def test_a_manager_approves_with_a_reason_and_it_becomes_the_current_reading(site, web_client):
    first = site["first"]
    response = web_client(M).post(reverse("web:version-action", args=_args(site, first.pk, "approve")),
                                  {"reason": "matches the section drawings", "make_current": "1"})
    assert response.status_code == 302
    first.refresh_from_db()
    assert first.status == Status.APPROVED and first.status_reason == "matches the section drawings"
    assert Reading.objects.get(project=site["project"]).version_id == first.pk
    entry = ChangeLogEntry.objects.filter(action="interpretation.version.approved").get()
    assert entry.user_name == "dan.manager" and entry.device == "web session" and entry.request_id


def test_an_approval_without_a_reason_is_refused_and_changes_nothing(site, web_client):
    first = site["first"]
    response = web_client(M).post(reverse("web:version-action", args=_args(site, first.pk, "approve")),
                                  {"reason": "  "}, follow=True)
    first.refresh_from_db()
    assert first.status == Status.PROPOSED
    assert "Refused (required)" in response.content.decode()


def test_a_rejection_without_a_reason_is_refused(site, web_client):
    second = site["second"]
    web_client(M).post(reverse("web:version-action", args=_args(site, second.pk, "reject")), {"reason": ""})
    second.refresh_from_db()
    assert second.status == Status.PROPOSED


def test_a_rejection_with_a_reason_is_logged_with_it(site, web_client):
    second = site["second"]
    web_client(M).post(reverse("web:version-action", args=_args(site, second.pk, "reject")),
                       {"reason": "phase 2 is missing"})
    second.refresh_from_db()
    assert second.status == Status.REJECTED
    assert ChangeLogEntry.objects.get(action="interpretation.version.rejected").message == "phase 2 is missing"


def test_an_analyst_submits_a_run_and_is_sent_to_its_page(site, web_client, django_capture_on_commit_callbacks):
    url, data = _post(site, "run")
    with django_capture_on_commit_callbacks(execute=True):
        response = web_client(A).post(url, data)
    run = Run.objects.exclude(pk=site["run"].pk).get()
    assert response.status_code == 302 and str(run.pk) in response["Location"]
    assert run.state == "done"  # tasks run in-process in tests


def test_a_finished_run_shows_its_results_table(site, web_client, django_capture_on_commit_callbacks):
    url, data = _post(site, "run")
    with django_capture_on_commit_callbacks(execute=True):
        response = web_client(A).post(url, data)
    page = web_client(Role.VIEWER).get(response["Location"])
    html = page.content.decode()
    assert page.status_code == 200
    results = html[html.find('id="results"'):]
    assert "<td>Beginning of Early</td>" in results and "<td>Close of Early</td>" in results


def test_a_run_with_settings_out_of_range_is_refused_with_the_reason(site, web_client):
    url, data = _post(site, "run")
    response = web_client(A).post(url, {**data, "chains": 99}, follow=True)
    assert "Refused" in response.content.decode() and Run.objects.count() == 1


def test_a_recorder_starts_a_check_that_is_stored(site, web_client, django_capture_on_commit_callbacks):
    from chronology.models import CheckReport

    from projects.record import writes
    from projects.record.changes import Actor

    writes.add_context(site["project"], Actor(user=site["first"].author, device="t"), label="1008", kind="deposit")
    site["project"].refresh_from_db()
    with django_capture_on_commit_callbacks(execute=True):
        web_client(R).post(reverse("web:check-start", args=_args(site)))
    assert CheckReport.objects.filter(project=site["project"], revision=site["project"].revision).exists()
