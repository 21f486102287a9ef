"""Sensitivity runs through the API: one request, several variations, how each boundary moves."""

from __future__ import annotations

import pytest

from projects.models import Role

from .conftest import QUICK_SAMPLING

pytestmark = pytest.mark.django_db(transaction=False)


def _url(project):
    return f"/api/v1/projects/{project.code}/sensitivity/"


def _post(client_for, project, body, capture, role=Role.ANALYST):
    with capture(execute=True):
        return client_for(role).post(_url(project), body, format="json")


@pytest.fixture
def finished(readings, client_for, project, django_capture_on_commit_callbacks):
    variations = [
        {"label": "reservoir offset of 100 14C years", "delta_r": {"mean": 100, "sd": 10}},
        {"outlier_prior": 0.2},
        {"range": [-1400, 400]},
        {"arrangement": {"phase": "*", "to": "contiguous"}},
    ]
    response = _post(client_for, project, {"version": readings["sequential"].pk, "variations": variations,
                                           "settings": QUICK_SAMPLING, "seed": 3}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    return client_for(Role.VIEWER).get(response["Location"]).json()


def test_a_sensitivity_run_reports_every_boundary_under_every_variation(finished):
    assert finished["state"] == "done", finished["error"]
    result = finished["result"]
    base = set(result["base"]["boundaries"])
    assert base == {"early:beginning", "early:close", "late:beginning", "late:close"}
    assert [len(v["boundaries"]) for v in result["variations"]] == [4, 4, 4, 4]
    assert "specialist" in result["review"]


def test_a_reservoir_offset_moves_the_early_boundaries_toward_the_present(finished):
    # a positive offset makes each sample's apparent age older than the atmosphere's, so the corrected dates are
    # younger (common practice); the synthetic curve is monotone here, 100 14C years about 100 calendar years.
    # The late phase is left out: its coin (terminus post quem) disagrees with S3 until S3 is corrected
    offset = finished["result"]["variations"][0]
    rows = {b["boundary"]: b for b in offset["boundaries"]}
    assert offset["label"] == "reservoir offset of 100 14C years"
    assert rows["early:beginning"]["median"]["shift"] > 30 and rows["early:close"]["median"]["shift"] > 30


def test_a_wider_range_is_used_by_its_variation(finished):
    wider = finished["result"]["variations"][2]
    assert wider["range"][0] <= -1400 and wider["range"][1] >= 400
    assert all("0.954" in b["ranges"] for b in wider["boundaries"])


def test_a_contiguous_arrangement_is_matched_by_phase_and_side(finished):
    joined = finished["result"]["variations"][3]
    rows = {b["boundary"]: b for b in joined["boundaries"]}
    assert not rows["early:close"]["missing"] and not rows["late:beginning"]["missing"]


@pytest.mark.parametrize("variation, field", [
    ({"outlier_prior": 1.5}, "variations[0].outlier_prior"),
    ({"range": [400, -1400]}, "variations[0].range"),
    ({"colour": "red"}, "variations[0].colour"),
    ({"label": "nothing changed"}, "variations[0]"),
    ({"arrangement": {"phase": "middle", "to": "contiguous"}}, "arrangement.phase"),
])
def test_a_bad_variation_is_refused_before_any_sampling(readings, client_for, project, variation, field,
                                                        django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk, "variations": [variation]},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 400, response.json()
    assert response.json()["errors"][0]["field"] == field


def test_an_unknown_curve_is_refused(readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk, "variations": [{"curve": 999999}]},
                     django_capture_on_commit_callbacks)
    assert response.status_code == 400 and response.json()["code"] == "unknown-curve"


def test_a_viewer_cannot_start_a_sensitivity_run(readings, client_for, project, django_capture_on_commit_callbacks):
    response = _post(client_for, project, {"version": readings["sequential"].pk,
                                           "variations": [{"outlier_prior": 0.1}]},
                     django_capture_on_commit_callbacks, role=Role.VIEWER)
    assert response.status_code == 403


def test_another_curve_is_used_for_every_determination(readings, client_for, project,
                                                       django_capture_on_commit_callbacks):
    from chronology.engine.curves import curve_to_csv
    from chronology.engine.synthetic_curve import synthetic_curve
    from chronology.evidence.curves import import_curve

    other, _ = import_curve(curve_to_csv(synthetic_curve(0, 6000, step=10.0)), name="Synthetic curve, 10-year rows")
    assert other.pk != readings["curve"].pk
    response = _post(client_for, project, {"version": readings["sequential"].pk, "settings": QUICK_SAMPLING,
                                           "seed": 3, "variations": [{"curve": other.pk}]}, django_capture_on_commit_callbacks)
    assert response.status_code == 202, response.json()
    body = client_for(Role.VIEWER).get(response["Location"]).json()
    assert [c["key"] for c in body["result"]["variations"][0]["curves"]] == [str(other.pk)]
    assert [c["key"] for c in body["result"]["base"]["curves"]] == [str(readings["curve"].pk)]
