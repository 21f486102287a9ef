"""Alternatives weighed jointly from one encompassing model, through the API."""

from __future__ import annotations

import copy
import math

import pytest

from chronology.evidence import writes as evidence_writes
from chronology.interpretations import services as interpretations
from chronology.weighing import candidates, joint
from projects.models import Role
from projects.record import writes

from .conftest import QUICK

pytestmark = pytest.mark.django_db(transaction=False)

JOINT = {**QUICK, "joint_chains": 2, "joint_iterations": 4000, "joint_warmup": 300}


def _post(client_for, project, body, capture):
    with capture(execute=True):
        return client_for(Role.ANALYST).post(f"/api/v1/projects/{project.code}/weighings/", body, format="json")


def _more_uncertain(project, actor, analyst, readings, *pairs):
    """A version of the fixture's readings with more uncertain relationships left undecided."""
    content = copy.deepcopy(readings["sequential"].content)
    for upper, lower in pairs:
        rel = writes.add_relationship(project, actor, subject=upper, type="above", object=lower,
                                      certainty="uncertain").object
        content["uncertain"].append({"relationship": rel.id, "decision": "undecided"})
    _interp, draft = interpretations.create_interpretation(project, analyst, name="Open", content=content)
    return interpretations.commit(draft, analyst)


def test_a_joint_weighing_gives_every_reading_a_probability(readings, client_for, project,
                                                            django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                           "method": "joint", "settings": JOINT, "seed": 3},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    assert body["mode"] == "joint" and body["state"] == "done", body
    rid = readings["uncertain"].pk
    result = body["result"]
    assert sorted((c["accepted"], c["rejected"]) for c in result["candidates"]) == [([], [rid]), ([rid], [])]
    assert math.isclose(sum(c["posterior_probability"] for c in result["candidates"]), 1.0)
    accepted = next(c for c in result["candidates"] if c["accepted"] == [rid])
    assert result["relationships"][0]["relationship"] == rid
    assert math.isclose(result["relationships"][0]["probability_accepted"], accepted["posterior_probability"])
    assert "encompassing prior" in result["method"] and "stepping-stone" in result["method"]


def test_the_family_is_one_background_job_of_its_own_kind(readings, client_for, project,
                                                          django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                           "method": "joint", "settings": JOINT, "seed": 3},
                     django_capture_on_commit_callbacks)
    (family,) = response.json()["candidates"]
    job = client_for(Role.VIEWER).get(f"/api/v1/projects/{project.code}/jobs/{family['job']}/").json()
    assert job["kind"] == "joint-readings" and job["state"] == "done"
    assert job["result"]["joint"]["prior_draws"] == 2 * 4000


def test_beyond_the_one_by_one_limit_alternatives_are_weighed_jointly(readings, client_for, project, monkeypatch,
                                                                     django_capture_on_commit_callbacks):
    monkeypatch.setattr(candidates, "MAX_ALTERNATIVE_ITEMS", 0)
    response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                           "settings": JOINT, "seed": 3}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    assert response.json()["mode"] == "joint"


def _dated_context(project, actor, readings, label, code, lab_code, cra):
    ctx = writes.add_context(project, actor, label=label, kind="deposit", area="B").object
    sample = evidence_writes.add_sample(project, actor, context=label, code=code, material="charred grain",
                                        short_lived=True).object
    evidence_writes.add_determination(project, actor, sample=code, lab_code=lab_code, cra=cra, cra_sigma=30,
                                      curve=readings["curve"].pk)
    return ctx, sample


def test_readings_that_close_a_cycle_are_listed_as_refused(readings, client_for, project, actor, analyst_actor,
                                                           django_capture_on_commit_callbacks):
    # 2002 is in the late phase and 2004 in none: "2004 above 2002" and "1003 above 2004" each hold alone,
    # but together they put 2002 before 1003 of the early phase, against the phases' order
    late, late_sample = _dated_context(project, actor, readings, "2002", "S5", "VXL-0906", 2160)
    _free, free_sample = _dated_context(project, actor, readings, "2004", "S6", "VXL-0907", 2250)
    content = copy.deepcopy(readings["sequential"].content)
    content["assignments"].append({"context": late.id, "phase": "late"})
    content["evidence"] += [{"evidence": f"sample:{s.id}", "use": "included", "outlier_prior": 0.05}
                            for s in (late_sample, free_sample)]
    for upper, lower in (("2004", "2002"), ("1003", "2004")):
        rel = writes.add_relationship(project, actor, subject=upper, type="above", object=lower,
                                      certainty="uncertain").object
        content["uncertain"].append({"relationship": rel.id, "decision": "undecided"})
    _interp, draft = interpretations.create_interpretation(project, analyst_actor, name="Open", content=content)
    version = interpretations.commit(draft, analyst_actor)
    response = _post(client_for, project, {"version": version.pk, "alternatives": True, "method": "joint",
                                           "settings": JOINT, "seed": 4}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    assert body["state"] == "done", (body["error"], [c["state"] for c in body["candidates"]])
    result = body["result"]
    assert len(result["candidates"]) + len(result["refused"]) == 8
    cycles = [r for r in result["refused"] if r["code"] == "cycle"]
    assert len(cycles) == 2 and all("before" in r["reason"] for r in cycles)
    assert math.isclose(sum(c["posterior_probability"] for c in result["candidates"]), 1.0)
    assert len(result["relationships"]) == 3


def test_relationships_through_a_context_outside_the_model_are_weighed_through_the_record_order(
        readings, client_for, project, actor, analyst_actor, django_capture_on_commit_callbacks):
    # 2003 is undated and in no phase: "2003 above 1006" or "2001 above 2003" alone orders no two events, but
    # together they put 2001 after 1006
    writes.add_context(project, actor, label="2003", kind="deposit", area="B")
    version = _more_uncertain(project, actor, analyst_actor, readings, ("2003", "1006"), ("2001", "2003"))
    response = _post(client_for, project, {"version": version.pk, "alternatives": True, "method": "joint",
                                           "settings": JOINT, "seed": 6}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    assert body["state"] == "done", body["error"]
    first = readings["uncertain"].pk
    rows = {tuple(c["accepted"]): c for c in body["result"]["candidates"] if first not in c["accepted"]}
    assert len(rows) == 4
    alone = [c for key, c in rows.items() if len(key) == 1]
    assert len(alone) == 2 and all(c["log_bayes_factor_vs_encompassing"] == 0.0 for c in alone)
    (together,) = [c for key, c in rows.items() if len(key) == 2]
    assert 0.0 < together["prior_fraction"] < 1.0


@pytest.mark.parametrize("given, field", [
    ({"versions": [1, 2], "method": "joint"}, "method"),
    ({"version": 1, "alternatives": True, "method": "sideways"}, "method"),
    ({"version": 1, "alternatives": True, "settings": {"joint_chains": 1}}, "settings.joint_chains"),
])
def test_bad_joint_requests_are_refused_naming_the_field(readings, client_for, project, given, field,
                                                         django_capture_on_commit_callbacks):
    body = dict(given)
    if "version" in body:
        body["version"] = readings["sequential"].pk
    response = _post(client_for, project, body, django_capture_on_commit_callbacks)
    assert response.status_code == 400, response.json()
    assert response.json()["errors"][0]["field"] == field


def test_the_runs_page_and_the_run_report_show_each_relationships_probability(readings, client_for, users, project,
                                                                              django_capture_on_commit_callbacks):
    from types import SimpleNamespace

    from django.test import Client
    from django.urls import reverse

    from chronology.runs.report_weighing import weighing_for_report

    _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True, "method": "joint",
                                "settings": JOINT, "seed": 3}, django_capture_on_commit_callbacks)
    viewer = Client()
    viewer.force_login(users[Role.VIEWER])
    html = viewer.get(reverse("web:runs", args=(project.organisation.slug, project.code))).content.decode()
    rid = readings["uncertain"].pk
    assert "Each relationship weighed jointly" in html and f"#{rid}" in html
    found = weighing_for_report(SimpleNamespace(project=project, version_id=readings["sequential"].pk))
    assert [r["relationship"] for r in found["relationships"]] == [f"#{rid} 2001 above 1003"]
    assert len(found["rows"]) == 2 and found["more"] == 0


def test_a_page_lists_only_the_most_probable_readings(monkeypatch):
    from chronology.weighing import evidence_jobs

    result = {"candidates": [{"name": str(i), "posterior_probability": i / 100} for i in range(20)]}
    shown, more = evidence_jobs.top_readings(result)
    assert [c["name"] for c in shown[:2]] == ["19", "18"]
    assert len(shown) == evidence_jobs.SHOWN_READINGS and more == 20 - evidence_jobs.SHOWN_READINGS


def test_joint_and_one_by_one_weighing_agree_within_their_errors(readings, client_for, project,
                                                                 django_capture_on_commit_callbacks):
    # two estimators of the same Bayes factor: stepping-stone marginal likelihoods of both readings (Xie et al.
    # 2011) and the encompassing-prior ratio of fractions (Klugkist et al. 2005)
    settings = {"stones": 16, "draws": 200, "thin": 2, "warmup": 100, "repeats": 4,
                "joint_chains": 4, "joint_iterations": 20000, "joint_warmup": 1000}
    rid = readings["uncertain"].pk
    log_bf = {}
    for method in ("one-by-one", "joint"):
        response = _post(client_for, project, {"version": readings["sequential"].pk, "alternatives": True,
                                               "method": method, "settings": settings, "seed": 8},
                         django_capture_on_commit_callbacks)
        result = client_for(Role.VIEWER).get(response["Location"]).json()["result"]
        (other,) = [c for c in result["candidates"] if c["name"] != result["best"]]
        sign = -1.0 if f"#{rid} accepted" in other["name"] else 1.0
        log_bf[method] = (sign * other["log_bayes_factor_of_best"], other["log_bayes_factor_of_best_mcse"])
    (a, sa), (b, sb) = log_bf["one-by-one"], log_bf["joint"]
    assert abs(a - b) <= 4 * math.hypot(sa, sb) + 0.02


def test_the_error_a_familys_readings_share_cancels_from_their_probabilities():
    from chronology.weighing.joint_combine import probabilities, simulated_log_ml

    rows = [{"job": "f", "log_ml": -10.0, "family_mcse": 2.0, "joint_mcse": 0.01},
            {"job": "f", "log_ml": -10.5, "family_mcse": 2.0, "joint_mcse": 0.01}]
    sims = simulated_log_ml(rows, entropy=1)
    assert probabilities(sims).std(axis=0).max() < 0.01
    assert sims[:, 0].std() == pytest.approx(2.0, rel=0.1)
