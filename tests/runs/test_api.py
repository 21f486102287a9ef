"""The runs API: submit, poll, results and files; refusals; roles and tenant isolation."""

from __future__ import annotations

import pytest

from chronology.runs.models import Run, RunState
from projects.models import Role
from tests.conftest import token_client

from .conftest import SMALL, commit_content

pytestmark = pytest.mark.django_db(transaction=False)


def _runs(project, *parts):
    tail = "".join(f"{p}/" for p in parts)
    return f"/api/v1/projects/{project.code}/runs/{tail}"


@pytest.fixture
def submitted(site, client_for, project, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        response = client_for(Role.ANALYST).post(_runs(project), {"version": site["version"].pk, "seed": 11, **SMALL},
                                                 format="json")
    assert response.status_code == 202, response.json()
    return response


def test_submitting_answers_202_with_the_run_url(submitted):
    body = submitted.json()
    assert body["url"].endswith(f"/runs/{body['id']}/")
    assert submitted["Location"] == body["url"]


def test_polling_shows_state_and_progress_per_chain(submitted, client_for, project):
    body = client_for(Role.VIEWER).get(_runs(project, submitted.json()["id"])).json()
    assert body["state"] == "done"
    assert [c["chain"] for c in body["progress"]["chains"]] == [0, 1]
    assert all(c["sweeps_done"] == c["sweeps_total"] == 500 for c in body["progress"]["chains"])
    assert "specialist" in body["caution"]
    assert body["converged"] in (True, False)
    if body["converged"] is False:
        assert body["convergence_warning"].startswith("NOT CONVERGED")


def test_results_model_samples_and_plots_are_served(submitted, client_for, project):
    client = client_for(Role.VIEWER)
    run_id = submitted.json()["id"]
    results = client.get(_runs(project, run_id, "results"))
    assert results.status_code == 200 and results["Content-Type"] == "application/json"
    data = b"".join(results.streaming_content)
    assert b"specialist" in data and b"TELLSTACK-SYNTHETIC-1" in data
    model = client.get(_runs(project, run_id, "model"))
    assert model.status_code == 200 and model["X-Model-Hash"] == submitted.json()["model_hash"]
    samples = client.get(_runs(project, run_id, "samples"))
    assert samples.status_code == 200 and b"".join(samples.streaming_content)[:4] == b"\x89HDF"
    svg = client.get(_runs(project, run_id, "plot.svg"))
    assert svg.status_code == 200 and b"<svg" in b"".join(svg.streaming_content)[:500]
    png = client.get(_runs(project, run_id, "plot.png"))
    assert png.status_code == 200 and b"".join(png.streaming_content)[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_list_holds_the_projects_runs(submitted, client_for, project):
    body = client_for(Role.VIEWER).get(_runs(project)).json()
    assert [r["id"] for r in body["results"]] == [submitted.json()["id"]]


def test_an_unbuildable_model_is_refused_with_its_reason(site, client_for, project, analyst_actor):
    version = commit_content(project, analyst_actor, dict(site["content"], evidence=[], questions=[]), "No dates")
    response = client_for(Role.ANALYST).post(_runs(project), {"version": version.pk, **SMALL}, format="json")
    assert response.status_code == 422
    assert response.json()["code"] == "no-evidence" and response.json()["errors"][0]["message"]
    assert not Run.objects.exists()


def test_a_cycle_is_refused_with_409_and_the_cycle(site, client_for, project, analyst_actor):
    ids = {label: c.id for label, c in site["contexts"].items()}
    content = dict(site["content"], orderings=[{"earlier": ids["1006"], "later": ids["1002"], "strict": True,
                                                "reason": "a wrong reading"}])
    version = commit_content(project, analyst_actor, content, "Cyclic")
    response = client_for(Role.ANALYST).post(_runs(project), {"version": version.pk, **SMALL}, format="json")
    assert response.status_code == 409
    body = response.json()
    assert body["code"] == "cycle"
    # the relationships that close the cycle: the recorded 1006-above-... chain and the interpretive ordering
    assert any(step["recorded"] is False for step in body["errors"][0]["cycle"])


def test_results_of_an_unfinished_run_answer_409(site, client_for, project):
    response = client_for(Role.ANALYST).post(_runs(project), {"version": site["version"].pk, **SMALL}, format="json")
    run_id = response.json()["id"]  # on_commit never fires inside the test transaction: still queued
    assert client_for(Role.VIEWER).get(_runs(project, run_id, "results")).json()["code"] == "run-not-done"


def test_cancel_through_the_api(site, client_for, project):
    client = client_for(Role.ANALYST)
    run_id = client.post(_runs(project), {"version": site["version"].pk, **SMALL}, format="json").json()["id"]
    response = client.post(_runs(project, run_id, "cancel"))
    assert response.status_code == 202 and response.json()["state"] == "cancelled"


def test_continue_through_the_api(submitted, client_for, project, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        response = client_for(Role.MANAGER).post(_runs(project, submitted.json()["id"], "continue"),
                                                 {"iterations": 100}, format="json")
    assert response.status_code == 202
    assert response.json()["continues"] == submitted.json()["id"]
    assert Run.objects.get(pk=response.json()["id"]).state == RunState.DONE


@pytest.mark.parametrize("role", [Role.VIEWER, Role.RECORDER])
def test_viewers_and_recorders_may_not_submit(role, site, client_for, project):
    response = client_for(role).post(_runs(project), {"version": site["version"].pk, **SMALL}, format="json")
    assert response.status_code == 403 and response.json()["code"] == "permission-denied"


@pytest.mark.parametrize("role", [Role.VIEWER, Role.RECORDER])
def test_viewers_and_recorders_may_not_cancel_or_continue(role, submitted, client_for, project):
    run_id = submitted.json()["id"]
    assert client_for(role).post(_runs(project, run_id, "cancel")).status_code == 403
    assert client_for(role).post(_runs(project, run_id, "continue"), {}, format="json").status_code == 403


def test_another_organisation_sees_not_found(submitted, project, outsider):
    client = token_client(outsider)
    run_id = submitted.json()["id"]
    for path in (_runs(project), _runs(project, run_id), _runs(project, run_id, "results"),
                 _runs(project, run_id, "plot.svg")):
        response = client.get(path)
        assert response.status_code == 404 and response.json()["code"] == "not-found", path
    assert client.post(_runs(project, run_id, "cancel")).status_code == 404


def test_a_run_is_not_found_under_another_project(submitted, other_project, outsider):
    response = token_client(outsider).get(_runs(other_project, submitted.json()["id"]))
    assert response.status_code == 404


def test_a_version_of_another_project_is_unknown(site, other_project, outsider):
    response = token_client(outsider).post(_runs(other_project), {"version": site["version"].pk, **SMALL},
                                           format="json")
    assert response.status_code == 404 and response.json()["code"] == "unknown-version"
