"""Calibration curves as imported data: validation with the line, dedupe, scope and rights."""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import CommandError, call_command
from rest_framework.test import APIClient

from chronology.evidence.curves import import_curve
from chronology.evidence.models import Curve, CurveTable
from projects.models import Role
from tests.api.conftest import assert_error_body
from tests.conftest import token_client

from .conftest import curve_text

CURVES = "/api/v1/curves/"
META = {"name": "TEST-CURVE", "citation": "invented for tests", "licence": "test only"}

GOOD_TABLE = "cal_bp,c14_bp,sigma\n0,0,10\n5,6,10\n10,11,10\n15,15,11\n"
MALFORMED = [
    # (table, line of the mistake, code) — line numbers count the header as line 1.
    ("cal_bp,c14_bp,sigma\n0,0,10\n5,6\n10,11,10\n", 3, "curve-bad-row"),
    ("cal_bp,c14_bp,sigma\n0,0,10\n5,6,10\n10,eleven,10\n", 4, "curve-bad-row"),
    ("cal_bp,c14_bp,sigma\n0,0,10\n5,6,10\n5,11,10\n", 4, "curve-not-monotonic"),
    ("cal_bp,c14_bp,sigma\n0,0,10\n5,6,-1\n10,11,10\n", 3, "curve-bad-sigma"),
]


@pytest.fixture
def admin(db):
    user = get_user_model().objects.create_superuser("root.admin", password="pw-root")
    return token_client(user, "admin console")


@pytest.mark.parametrize("table, line, code", MALFORMED)
def test_a_malformed_table_is_refused_with_the_line(admin, table, line, code):
    error = assert_error_body(admin.post(CURVES, {**META, "table": table}), 400)
    assert (error["field"], error["code"], error["line"]) == ("table", code, line)
    assert not Curve.objects.exists()


def test_a_gap_wider_than_the_maximum_step_is_refused_with_the_line(admin):
    table = "cal_bp,c14_bp,sigma\n0,0,10\n5,6,10\n30,28,10\n"
    error = assert_error_body(admin.post(CURVES, {**META, "table": table, "max_step": 10}), 400)
    assert (error["field"], error["code"], error["line"]) == ("table", "curve-gap", 4)


@pytest.mark.parametrize("missing", ["name", "citation", "licence"])
def test_a_curve_needs_a_name_a_citation_and_a_licence(admin, missing):
    error = assert_error_body(admin.post(CURVES, {**META, missing: "", "table": GOOD_TABLE}), 400)
    assert (error["field"], error["code"]) == (missing, "required")


def test_an_administrator_imports_a_global_curve_and_a_repeat_changes_nothing(admin):
    first = admin.post(CURVES, {**META, "table": GOOD_TABLE})
    assert first.status_code == 201, first.content
    assert first.json()["organisation"] is None and first.json()["rows"] == 4
    again = admin.post(CURVES, {**META, "table": GOOD_TABLE})
    assert again.status_code == 200 and again.json()["id"] == first.json()["id"]


def test_the_rows_are_stored_once_whatever_the_name(admin):
    assert admin.post(CURVES, {**META, "table": GOOD_TABLE}).status_code == 201
    # The same numbers, another layout: oldest first, comments, spaces.
    reordered = "# a comment\ncal_bp, c14_bp, sigma\n15, 15, 11\n10, 11, 10\n5, 6, 10\n0, 0, 10\n"
    second = admin.post(CURVES, {**META, "name": "TEST-CURVE-COPY", "table": reordered})
    assert second.status_code == 201
    assert CurveTable.objects.count() == 1 and Curve.objects.count() == 2


def test_another_table_under_a_used_name_is_a_conflict(admin):
    assert admin.post(CURVES, {**META, "table": GOOD_TABLE}).status_code == 201
    error = assert_error_body(admin.post(CURVES, {**META, "table": GOOD_TABLE.replace("15,15,11", "15,16,11")}), 409)
    assert (error["field"], error["code"]) == ("name", "curve-name-taken")


def test_a_curve_can_be_uploaded_as_a_file(admin):
    upload = SimpleUploadedFile("curve.csv", GOOD_TABLE.encode(), content_type="text/csv")
    response = admin.post(CURVES, {**META, "file": upload}, format="multipart")
    assert response.status_code == 201, response.content


def test_a_member_who_is_not_an_administrator_cannot_import_a_global_curve(client_for):
    error = assert_error_body(client_for(Role.MANAGER).post(CURVES, {**META, "table": GOOD_TABLE}), 403)
    assert error["field"] == "organisation"


def test_a_manager_imports_a_curve_for_their_organisation_only(client_for, org):
    assert_error_body(client_for(Role.ANALYST).post(CURVES, {**META, "table": GOOD_TABLE, "organisation": org.slug}),
                      403)
    created = client_for(Role.MANAGER).post(CURVES, {**META, "table": GOOD_TABLE, "organisation": org.slug})
    assert created.status_code == 201 and created.json()["organisation"] == org.slug


def test_a_curve_cannot_be_imported_for_another_organisation(client_for, other_org):
    error = assert_error_body(
        client_for(Role.MANAGER).post(CURVES, {**META, "table": GOOD_TABLE, "organisation": other_org.slug}), 400)
    assert (error["field"], error["code"]) == ("organisation", "unknown-organisation")


def test_the_caller_sees_global_curves_and_their_organisations_but_not_others(client_for, org, other_org, curve):
    own, _ = import_curve(GOOD_TABLE, organisation=org, **META)
    foreign, _ = import_curve(GOOD_TABLE.replace("15,15,11", "15,17,11"), organisation=other_org,
                              name="QUILLMOOR-CURVE", citation="theirs", licence="theirs")
    api = client_for(Role.VIEWER)
    names = {c["name"] for c in api.get(CURVES).json()["results"]}
    assert names == {curve.name, own.name}
    assert api.get(f"{CURVES}{own.id}/").status_code == 200
    assert_error_body(api.get(f"{CURVES}{foreign.id}/"), 404)
    assert_error_body(api.get(f"{CURVES}{foreign.id}/table/"), 404)


def test_an_anonymous_caller_sees_no_curves(curve):
    assert APIClient().get(CURVES).status_code in (401, 403)


def test_the_stored_table_reads_back_to_the_same_checksum(client_for, curve):
    text = client_for(Role.VIEWER).get(f"{CURVES}{curve.id}/table/").content.decode()
    again, created = import_curve(text, name="ROUND-TRIP", citation="c", licence="l")
    assert again.table_id == curve.table_id and created


def test_the_command_imports_a_curve_and_a_repeat_changes_nothing(tmp_path, db):
    path = tmp_path / "curve.csv"
    path.write_text(curve_text())
    call_command("import_curve", str(path), "--name", "CMD-SYNTHETIC", "--citation", "c", "--licence", "l",
                 "--max-step", "5")
    call_command("import_curve", str(path), "--name", "CMD-SYNTHETIC", "--citation", "c", "--licence", "l")
    curve = Curve.objects.get(name="CMD-SYNTHETIC")
    assert curve.organisation is None and curve.synthetic  # the name says SYNTHETIC
    assert Curve.objects.count() == 1


def test_the_command_names_the_wrong_line(tmp_path, db):
    path = tmp_path / "bad.csv"
    path.write_text(MALFORMED[2][0])
    with pytest.raises(CommandError, match=r"line 4"):
        call_command("import_curve", str(path), "--name", "BAD", "--citation", "c", "--licence", "l")


def test_the_command_imports_for_an_organisation(tmp_path, org):
    path = tmp_path / "curve.csv"
    path.write_text(GOOD_TABLE)
    call_command("import_curve", str(path), "--organisation", org.slug, *sum([[f"--{k}", v] for k, v in META.items()], []))
    assert Curve.objects.get().organisation == org
