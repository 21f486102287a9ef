"""Weighing readings by the evidence through the API: submit, poll, compare; refusals and roles."""

from __future__ import annotations

import math

import pytest

from chronology.weighing import candidates
from projects.models import Role

from .conftest import QUICK

pytestmark = pytest.mark.django_db(transaction=False)


def _url(project, *parts):
    return f"/api/v1/projects/{project.code}/weighings/" + "".join(f"{p}/" for p in parts)


def _post(client_for, project, body, capture, role=Role.ANALYST):
    with capture(execute=True):
        return client_for(role).post(_url(project), body, format="json")


def test_weighing_two_versions_gives_bayes_factors_and_probabilities_that_sum_to_one(
        readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["sequential"].pk, readings["contiguous"].pk],
                                           "settings": QUICK, "seed": 5}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    assert body["state"] == "done", body
    result = body["result"]
    assert [c["name"] for c in result["candidates"]] == ["Sequential v1", "Contiguous v1"]
    assert math.isclose(sum(c["posterior_probability"] for c in result["candidates"]), 1.0)
    assert all(c["mcse"] > 0 for c in result["candidates"])
    assert "depend on the priors" in body["caution"]
    assert "stepping-stone" in result["method"] and "specialist" in result["review"]
    assert any(c["synthetic"] for c in result["curves"])


def test_each_candidate_is_its_own_background_job(readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["sequential"].pk, readings["contiguous"].pk],
                                           "settings": QUICK, "seed": 5}, django_capture_on_commit_callbacks)
    jobs = [c["job"] for c in response.json()["candidates"]]
    assert len(set(jobs)) == 2
    job = client_for(Role.VIEWER).get(f"/api/v1/projects/{project.code}/jobs/{jobs[0]}/").json()
    assert job["kind"] == "marginal-likelihood" and job["state"] == "done"
    assert len(job["result"]["repeats"]) == QUICK["repeats"]


def test_the_alternatives_of_a_version_are_weighed_one_by_one(readings, client_for, project,
                                                              django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                           "settings": QUICK, "seed": 5}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    rid = readings["uncertain"].pk
    assert body["mode"] == "alternatives"
    assert sorted((c["accepted"], c["rejected"]) for c in body["candidates"]) == [([], [rid]), ([rid], [])]
    assert body["state"] == "done" and len(body["result"]["candidates"]) == 2


def test_too_many_undecided_items_to_weigh_one_by_one_are_refused_with_the_reason(
        readings, client_for, project, monkeypatch, django_capture_on_commit_callbacks):
    monkeypatch.setattr(candidates, "MAX_ALTERNATIVE_ITEMS", 0)
    response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                           "method": "one-by-one"}, django_capture_on_commit_callbacks)
    assert response.status_code == 422
    body = response.json()
    assert body["code"] == "too-many-alternatives" and body["errors"][0]["field"] == "version"
    assert "2^1" in body["message"]


def test_a_version_with_nothing_undecided_has_no_alternatives_to_weigh(readings, client_for, project,
                                                                      django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["contiguous"].pk, "alternatives": True},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 422 and response.json()["code"] == "no-alternatives"


def test_versions_that_use_different_evidence_are_refused(readings, client_for, project,
                                                          django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["first"].pk, readings["sequential"].pk]},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 422
    assert response.json()["code"] == "different-evidence" and response.json()["errors"][0]["field"] == "versions"


@pytest.mark.parametrize("given, field", [({"stones": 1000}, "settings.stones"),
                                             ({"repeats": 1}, "settings.repeats"),
                                             ({"ladder": 3}, "settings.ladder")])
def test_bad_settings_are_refused_naming_the_field(readings, client_for, project, given, field,
                                                   django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["sequential"].pk, readings["contiguous"].pk],
                                           "settings": given}, django_capture_on_commit_callbacks)
    assert response.status_code == 400 and response.json()["errors"][0]["field"] == field


def test_a_weighing_needs_versions_or_one_version_with_alternatives(readings, client_for, project,
                                                                    django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk}, django_capture_on_commit_callbacks)
    assert response.status_code == 400


def test_an_unknown_version_is_not_found(readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["sequential"].pk, 999999]},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 404 and response.json()["errors"][0]["field"] == "versions"


def test_a_viewer_may_read_but_not_start_a_weighing(readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"versions": [readings["sequential"].pk, readings["contiguous"].pk]},
                     django_capture_on_commit_callbacks, role=Role.VIEWER)
    assert response.status_code == 403
    assert client_for(Role.VIEWER).get(_url(project)).status_code == 200


def test_another_organisation_cannot_see_a_weighing(readings, client_for, project, outsider,
                                                    django_capture_on_commit_callbacks):
    from tests.conftest import token_client

    response = _post(client_for, project, {"versions": [readings["sequential"].pk, readings["contiguous"].pk],
                                           "settings": QUICK, "seed": 5}, django_capture_on_commit_callbacks)
    assert token_client(outsider).get(response["Location"]).status_code == 404
