"""Bad evidence values are refused with a 4xx naming the field, and nothing is written."""

from __future__ import annotations

import pytest

from projects.models import ChangeLogEntry, Role
from tests.api.conftest import assert_error_body

from .conftest import url

GOOD = {"sample": "S101", "lab_code": "VXL-0101", "cra": 2200, "cra_sigma": 30}


@pytest.fixture
def api(client_for, contexts):
    client = client_for(Role.ANALYST)
    assert client.post(url("VML24", "samples"), {"context": "1021", "code": "S101", "material": "grain"}).status_code == 201
    return client


@pytest.mark.parametrize(
    "change, field, code",
    [
        ({"cra_sigma": -30}, "cra_sigma", "invalid-error"),
        ({"cra_sigma": 0}, "cra_sigma", "invalid-error"),
        ({"cra": None, "cra_sigma": None, "f14c": 2.5, "f14c_sigma": 0.003}, "f14c", "out-of-range"),
        ({"cra": None, "cra_sigma": None, "f14c": -0.2, "f14c_sigma": 0.003}, "f14c", "out-of-range"),
        ({"cra": None, "cra_sigma": None, "f14c": 0.7, "f14c_sigma": -0.003}, "f14c_sigma", "invalid-error"),
        ({"f14c": 0.7, "f14c_sigma": 0.003}, "cra", "ambiguous-measurement"),
        ({"cra": None, "cra_sigma": None}, "cra", "required"),
        ({"cra": 60000}, "cra", "outside-curve"),  # the test curve ends at 6000 cal BP
        ({"curve": "NO-SUCH-CURVE"}, "curve", "unknown-curve"),
        ({"delta_r": 50, "delta_r_sigma": -5}, "delta_r_sigma", "invalid-error"),
        ({"marine_fraction": 1.5, "marine_curve": "TEST-MARINE-SYNTHETIC"}, "marine_fraction", "out-of-range"),
        ({"marine_fraction": -0.1, "marine_curve": "TEST-MARINE-SYNTHETIC"}, "marine_fraction", "out-of-range"),
        ({"marine_fraction": 0.3}, "marine_curve", "required"),
        ({"sample": "S999"}, "sample", "unknown-sample"),
        ({"cra": "old"}, "cra", "invalid"),
    ],
)
def test_a_bad_determination_is_refused_naming_the_field(api, project, curve, marine_curve, change, field, code):
    body = {**GOOD, "curve": curve.name, **change}
    body = {k: v for k, v in body.items() if v is not None}
    project.refresh_from_db()
    revision = project.revision
    error = assert_error_body(api.post(url("VML24", "determinations"), body), 400)
    assert (error["field"], error["code"]) == (field, code)
    project.refresh_from_db()
    assert project.revision == revision
    assert not ChangeLogEntry.objects.filter(project=project, object_kind="determination").exists()


@pytest.mark.parametrize(
    "body, field, code",
    [
        ({"context": "1011", "kind": "normal", "mean": 118, "sd": -2}, "sd", "invalid-error"),
        ({"context": "1011", "kind": "normal", "sd": 2}, "mean", "required"),
        ({"context": "1011", "kind": "uniform", "start": 200, "end": 100}, "end", "range-inverted"),
        ({"context": "1011", "kind": "normal", "mean": -90000, "sd": 5}, "mean", "out-of-range"),
        ({"context": "1011", "kind": "sometime", "mean": 1, "sd": 1}, "kind", "invalid-choice"),
        ({"kind": "normal", "mean": 118, "sd": 2}, "context", "required"),
        ({"sample": "S101", "context": "1011", "kind": "normal", "mean": 118, "sd": 2}, "context", "context-mismatch"),
    ],
)
def test_a_bad_calendar_date_is_refused_naming_the_field(api, body, field, code):
    error = assert_error_body(api.post(url("VML24", "calendar-dates"), body), 400)
    assert (error["field"], error["code"]) == (field, code)


@pytest.mark.parametrize(
    "body, field, code",
    [
        ({"context": "3031", "kind": "post_quem", "year": 260, "year_end": 250, "find": "coin"}, "year_end",
         "range-inverted"),
        ({"context": "3031", "kind": "before", "year": 260, "find": "coin"}, "kind", "invalid-choice"),
        ({"context": "9999", "kind": "post_quem", "year": 260, "find": "coin"}, "context", "unknown-context"),
        ({"context": "3031", "kind": "post_quem", "year": 260, "find": " "}, "find", "blank"),
    ],
)
def test_a_bad_terminus_is_refused_naming_the_field(api, body, field, code):
    error = assert_error_body(api.post(url("VML24", "termini"), body), 400)
    assert (error["field"], error["code"]) == (field, code)


def test_a_sample_from_an_unknown_context_is_refused(api):
    error = assert_error_body(api.post(url("VML24", "samples"), {"context": "4242", "code": "S9", "material": "bone"}),
                              400)
    assert (error["field"], error["code"]) == ("context", "unknown-context")


def test_a_duplicate_lab_code_is_a_conflict_naming_the_field(api, curve):
    assert api.post(url("VML24", "determinations"), {**GOOD, "curve": curve.id}).status_code == 201
    error = assert_error_body(api.post(url("VML24", "determinations"), {**GOOD, "curve": curve.id}), 409)
    assert (error["field"], error["code"]) == ("lab_code", "duplicate-lab-code")


def test_a_marine_determination_with_an_offset_and_a_mixture_is_accepted(api, curve, marine_curve):
    marine = api.post(url("VML24", "determinations"), {**GOOD, "cra": 2600, "curve": marine_curve.name,
                                                       "delta_r": 40, "delta_r_sigma": 20})
    assert marine.status_code == 201, marine.content
    mixed = api.post(url("VML24", "determinations"), {**GOOD, "lab_code": "VXL-0102", "cra": 2400, "curve": curve.id,
                                                      "marine_fraction": 0.4, "marine_fraction_sigma": 0.1,
                                                      "marine_curve": marine_curve.id, "delta_r": 40,
                                                      "delta_r_sigma": 20})
    assert mixed.status_code == 201, mixed.content
    assert mixed.json()["marine_curve"] == "TEST-MARINE-SYNTHETIC" and mixed.json()["marine_fraction"] == 0.4
