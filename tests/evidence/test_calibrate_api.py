"""The calibrate endpoint, calibrations of stored determinations, plots and combination."""

from __future__ import annotations

import numpy as np
import pytest

from chronology.engine.calibration import calibrate as engine_calibrate
from chronology.engine.calibration import curve_on_grid
from chronology.engine.combination import combine_determinations
from chronology.engine.plots.calibration_plot import CAUTION, SYNTHETIC_WARNING
from chronology.evidence import writes
from chronology.evidence.models import Sample
from projects.models import Role
from tests.api.conftest import assert_error_body

from .conftest import url


@pytest.fixture(autouse=True)
def _site(project):
    return project


@pytest.fixture
def stored(project, actor, contexts, curve):
    writes.add_sample(project, actor, context="1011", code="S104", material="animal bone", short_lived=True)
    first = writes.add_determination(project, actor, sample="S104", lab_code="VXL-0104", cra=2450, cra_sigma=30,
                                     curve=curve.id).object
    second = writes.add_determination(project, actor, sample="S104", lab_code="VXL-0105", cra=2410, cra_sigma=35,
                                      curve=curve.id).object
    return first, second


def _ranges(result, level):
    block = next(h for h in result["hpd"] if h["level"] == level)
    return [(r["start"], r["end"], r["probability"]) for r in block["ranges"]]


def test_ad_hoc_calibration_matches_the_engine(client_for, curve, engine_synthetic):
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.name}]}
    result = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()["results"][0]
    # Reference: chronology.engine.calibration.calibrate on the same curve and grid.
    expected = engine_calibrate(2450, 30, curve_on_grid(engine_synthetic))
    for level in (0.683, 0.954):
        assert _ranges(result, level) == [(r.start, r.end, r.probability) for r in expected.hpd[level]]
    assert result["median"]["year"] == pytest.approx(expected.median)


def test_a_calibration_carries_curve_citation_warning_and_caution(client_for, curve):
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.id}]}
    response = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()
    result = response["results"][0]
    assert result["curve"] == curve.name and result["citation"] == curve.citation
    assert result["synthetic"] and SYNTHETIC_WARNING in result["warnings"]
    assert result["caution"] == CAUTION == response["caution"]


def test_ranges_are_given_in_cal_bc_ad_and_cal_bp(client_for, curve):
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.id}]}
    result = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()["results"][0]
    r = next(h for h in result["hpd"] if h["level"] == 0.954)["ranges"][0]
    # Domain primer §3.5: cal BP = 1950 - t; t = 1 - y for y BC.
    assert r["cal_bp"] == [1950 - r["start"], 1950 - r["end"]]
    assert r["bc_ad"].startswith(f"{1 - int(r['start'])}") and r["bc_ad"].endswith("cal BC")


def test_the_95_percent_region_holds_the_68_percent_one(client_for, curve):
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.id}], "density": True}
    result = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()["results"][0]
    wide = _ranges(result, 0.954)
    for start, end, _p in _ranges(result, 0.683):
        assert any(a <= start and end <= b for a, b, _q in wide)
    density = result["density"]
    assert sum(density["values"]) * density["step"] == pytest.approx(1.0)


def test_a_stored_determination_calibrates_as_the_same_values_given_ad_hoc(client_for, stored, curve):
    first, _ = stored
    api = client_for(Role.VIEWER)
    body = {"determinations": [first.id], "values": [{"cra": 2450, "error": 30, "curve": curve.id}]}
    by_id, ad_hoc = api.post(url("VML24", "calibrate"), body).json()["results"]
    assert by_id["label"] == "VXL-0104" and by_id["hpd"] == ad_hoc["hpd"]
    detail = api.get(url("VML24", "determinations", first.id, "calibration")).json()
    assert detail["hpd"] == by_id["hpd"]


def test_a_reservoir_offset_shifts_the_curve_by_delta_r(client_for, curve):
    # With ΔR ± 0, y against μ(t) + ΔR is y − ΔR against μ(t) (domain primer §3.2).
    body = {"values": [{"cra": 2550, "error": 30, "curve": curve.id, "delta_r": 100, "delta_r_sigma": 0},
                       {"cra": 2450, "error": 30, "curve": curve.id}]}
    shifted, plain = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()["results"]
    assert shifted["hpd"] == plain["hpd"]


def test_a_marine_fraction_of_nought_or_one_gives_the_pure_curves(client_for, curve, marine_curve):
    api = client_for(Role.VIEWER)
    values = [
        {"cra": 2450, "error": 30, "curve": curve.id, "marine_fraction": 0.0, "marine_curve": marine_curve.id},
        {"cra": 2450, "error": 30, "curve": curve.id},
        {"cra": 2850, "error": 30, "curve": curve.id, "marine_fraction": 1.0, "marine_curve": marine_curve.id},
        {"cra": 2850, "error": 30, "curve": marine_curve.id},
    ]
    r = api.post(url("VML24", "calibrate"), {"values": values}).json()["results"]
    for mixed, pure in ((r[0], r[1]), (r[2], r[3])):
        for level in (0.683, 0.954):
            assert [x[:2] for x in _ranges(mixed, level)] == [x[:2] for x in _ranges(pure, level)]
            assert np.allclose([x[2] for x in _ranges(mixed, level)], [x[2] for x in _ranges(pure, level)])


def test_a_coarser_grid_step_gives_ranges_on_that_grid(client_for, curve):
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.id}], "step": 5}
    result = client_for(Role.VIEWER).post(url("VML24", "calibrate"), body).json()["results"][0]
    first_year = -4050.0  # the test curve's oldest year: 1950 - 6000
    for start, end, _p in _ranges(result, 0.954):
        assert (start - first_year) % 5 == 0 and (end - first_year) % 5 == 0


@pytest.mark.parametrize(
    "value, field, code",
    [
        ({"cra": 90000, "error": 30}, "values", "outside-curve"),
        ({"cra": 2450, "error": -30}, "values[0].error", "invalid-error"),
        ({"cra": 2450, "error": 30, "curve": "NOPE"}, "values[0].curve", "unknown-curve"),
    ],
)
def test_a_bad_ad_hoc_value_is_refused_naming_the_field(client_for, curve, value, field, code):
    body = {"values": [{"curve": curve.id, **value}]}
    error = assert_error_body(client_for(Role.VIEWER).post(url("VML24", "calibrate"), body), 400)
    assert (error["field"], error["code"]) == (field, code)


def test_an_unknown_stored_determination_is_refused(client_for, curve):
    error = assert_error_body(client_for(Role.VIEWER).post(url("VML24", "calibrate"), {"determinations": [999]}), 400)
    assert (error["field"], error["code"]) == ("determinations", "unknown-determination")


def test_the_plot_is_served_as_svg_and_png_with_its_warnings(client_for, stored):
    first, _ = stored
    api = client_for(Role.VIEWER)
    svg = api.get(url("VML24", "determinations", first.id, "plot"))
    assert svg.status_code == 200 and svg["Content-Type"] == "image/svg+xml"
    text = svg.content.decode()
    assert "VXL-0104" in text and "SYNTHETIC" in text and "qualified specialist" in text
    png = api.get(url("VML24", "determinations", first.id, "plot") + "?image=png")
    assert png["Content-Type"] == "image/png" and png.content.startswith(b"\x89PNG")


def test_the_combination_of_a_samples_determinations_follows_ward_and_wilson(client_for, stored):
    first, _ = stored
    body = client_for(Role.VIEWER).get(url("VML24", "samples", first.sample_id, "combination")).json()
    # Domain primer §3.6 (Ward & Wilson 1978): 2450 ± 30 and 2410 ± 35 give 2433 ± 23, T = 0.75.
    assert round(body["test"]["mean"]) == 2433 and round(body["test"]["sigma"]) == 23
    assert round(body["test"]["T"], 2) == 0.75 and body["test"]["consistent"]
    assert body["calibration"]["cra"] == pytest.approx(combine_determinations([2450, 2410], [30, 35]).mean)


def test_inconsistent_determinations_are_flagged_not_combined(client_for, project, actor, contexts, curve):
    writes.add_sample(project, actor, context="1015", code="S105", material="bone", short_lived=True)
    for lab, age in (("VXL-0201", 2450), ("VXL-0202", 2250)):
        writes.add_determination(project, actor, sample="S105", lab_code=lab, cra=age, cra_sigma=30, curve=curve.id)
    sample_id = Sample.objects.get(code="S105").id
    body = client_for(Role.VIEWER).get(url("VML24", "samples", sample_id, "combination")).json()
    # T = 200² / (30² + 30²) ≈ 22.2 > 3.84, the 5% χ² value for 1 df (Ward & Wilson 1978).
    assert not body["test"]["consistent"] and body["calibration"] is None


def test_a_combination_needs_two_determinations(client_for, project, actor, contexts):
    sample = writes.add_sample(project, actor, context="1021", code="S101", material="grain").object
    error = assert_error_body(client_for(Role.VIEWER).get(url("VML24", "samples", sample.id, "combination")), 400)
    assert (error["field"], error["code"]) == ("sample", "too-few-determinations")


def test_a_retracted_determination_still_calibrates_at_a_past_revision(client_for, project, actor, stored):
    first, _ = stored
    then = project.revision
    writes.retract_evidence(project, actor, "determination", first.id, reason="laboratory withdrew the result")
    api = client_for(Role.VIEWER)
    assert_error_body(api.get(url("VML24", "determinations", first.id, "calibration")), 404)
    past = api.get(url("VML24", "determinations", first.id, "calibration") + f"?at={then}")
    assert past.status_code == 200 and past.json()["label"] == "VXL-0104" and past.json()["revision"] == then
