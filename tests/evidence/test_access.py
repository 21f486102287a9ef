"""Tenant isolation and role permissions on evidence and curves."""

from __future__ import annotations

import pytest

from chronology.evidence import writes
from chronology.evidence.curves import import_curve
from projects.models import Role
from projects.record import writes as record_writes
from projects.record.changes import Actor
from tests.api.conftest import assert_error_body
from tests.conftest import token_client

from .conftest import url


@pytest.fixture
def foreign(other_project, outsider, curve):
    """Evidence of another organisation's project, on a curve of its own."""
    actor = Actor(user=outsider, device="quillmoor tablet")
    record_writes.add_context(other_project, actor, label="Q1", kind="fill")
    sample = writes.add_sample(other_project, actor, context="Q1", code="QS1", material="bone").object
    det = writes.add_determination(other_project, actor, sample="QS1", lab_code="QX-1", cra=2300, cra_sigma=30,
                                   curve=curve.id).object
    own_curve, _ = import_curve("0,0,10\n5,6,10\n10,11,10\n", name="QUILLMOOR-CURVE", citation="theirs",
                                licence="theirs", organisation=other_project.organisation)
    return {"sample": sample, "determination": det, "curve": own_curve, "client": token_client(outsider)}


@pytest.mark.parametrize("path", ["samples", "determinations", "calendar-dates", "termini"])
def test_another_organisations_project_evidence_is_not_found(client_for, project, foreign, path):
    code = foreign["sample"].project.code
    assert_error_body(client_for(Role.MANAGER).get(url(code, path)), 404)


def test_another_organisations_determination_is_not_found_by_id_in_our_project(client_for, project, foreign):
    det = foreign["determination"]
    api = client_for(Role.MANAGER)
    assert_error_body(api.get(url("VML24", "determinations", det.id)), 404)
    assert_error_body(api.get(url("VML24", "determinations", det.id, "calibration")), 404)
    error = assert_error_body(api.post(url("VML24", "calibrate"), {"determinations": [det.id]}), 400)
    assert error["code"] == "unknown-determination"


def test_another_organisations_curve_cannot_be_used(client_for, project, contexts, foreign):
    api = client_for(Role.ANALYST)
    api.post(url("VML24", "samples"), {"context": "1021", "code": "S101", "material": "grain"})
    body = {"sample": "S101", "lab_code": "VXL-0101", "cra": 2, "cra_sigma": 5, "curve": foreign["curve"].id}
    error = assert_error_body(api.post(url("VML24", "determinations"), body), 400)
    assert (error["field"], error["code"]) == ("curve", "unknown-curve")
    by_name = {"values": [{"cra": 2, "error": 5, "curve": "QUILLMOOR-CURVE"}]}
    assert assert_error_body(api.post(url("VML24", "calibrate"), by_name), 400)["code"] == "unknown-curve"


def test_the_other_organisation_sees_its_own_curve_but_not_ours(foreign, org):
    ours, _ = import_curve("0,0,10\n5,6,10\n10,12,10\n", name="NORTHFOLD-CURVE", citation="ours", licence="ours",
                           organisation=org)
    theirs = foreign["client"]
    names = {c["name"] for c in theirs.get("/api/v1/curves/").json()["results"]}
    assert "QUILLMOOR-CURVE" in names and "NORTHFOLD-CURVE" not in names
    assert_error_body(theirs.get(f"/api/v1/curves/{ours.id}/"), 404)


@pytest.mark.parametrize("path, body", [
    ("samples", {"context": "1021", "code": "S101", "material": "grain"}),
    ("termini", {"context": "3031", "kind": "post_quem", "year": 260, "find": "coin"}),
    ("calendar-dates", {"context": "3041", "kind": "normal", "mean": 118, "sd": 1}),
])
def test_a_viewer_cannot_write_evidence(client_for, contexts, path, body):
    assert_error_body(client_for(Role.VIEWER).post(url("VML24", path), body), 403)
    assert client_for(Role.RECORDER).post(url("VML24", path), body).status_code == 201


def test_a_viewer_cannot_retract_evidence(client_for, project, actor, contexts):
    sample = writes.add_sample(project, actor, context="1021", code="S101", material="grain").object
    viewer = client_for(Role.VIEWER)
    assert_error_body(viewer.post(url("VML24", "samples", sample.id, "retract"), {"reason": "no"}), 403)
    done = client_for(Role.RECORDER).post(url("VML24", "samples", sample.id, "retract"), {"reason": "mislabelled"})
    assert done.status_code == 200 and done.json()["retracted_revision"] == project.revision + 1


def test_a_viewer_reads_and_calibrates(client_for, project, curve):
    viewer = client_for(Role.VIEWER)
    assert viewer.get(url("VML24", "samples")).status_code == 200
    body = {"values": [{"cra": 2450, "error": 30, "curve": curve.id}]}
    assert viewer.post(url("VML24", "calibrate"), body).status_code == 200
