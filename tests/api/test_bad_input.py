"""Malformed input gets a 4xx with the error body, never a 500."""

from __future__ import annotations

import uuid

import pytest

from tests.api.conftest import assert_error_body, url
from tests.record.helpers import add_contexts

HUGE = "9" * 200_000


@pytest.fixture
def recorded(project, actor):
    return add_contexts(project, actor, ["1001", "1002"])


def test_a_body_that_is_not_json_is_refused(api, recorded):
    response = api.post(url("VML24", "relationships"), data="{subject: 1001", content_type="application/json")
    assert_error_body(response, 400, "parse-error")


def test_a_body_that_is_a_json_list_is_refused(api, recorded):
    response = api.post(url("VML24", "contexts"), [1, 2, 3], format="json")
    assert_error_body(response, 400)


def test_a_form_encoded_body_is_handled(api, recorded):
    response = api.post(url("VML24", "contexts"), data="label=1003&kind=bogus", content_type="application/x-www-form-urlencoded")
    assert_error_body(response, 400)


def test_an_unsupported_media_type_is_refused(api, recorded):
    response = api.post(url("VML24", "contexts"), data="<label/>", content_type="application/xml")
    assert_error_body(response, 415, "unsupported-media-type")


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ({"type": "above", "object": "1002"}, "subject"),
        ({"subject": None, "type": "above", "object": "1002"}, "subject"),
        ({"subject": ["1001"], "type": "above", "object": "1002"}, "subject"),
        ({"subject": {"id": 1}, "type": "above", "object": "1002"}, "subject"),
        ({"subject": True, "type": "above", "object": "1002"}, "subject"),
        ({"subject": 1.5, "type": "above", "object": "1002"}, "subject"),
        ({"subject": "1001", "type": 7, "object": "1002"}, "type"),
        ({"subject": "1001", "type": "above", "object": "1002", "certainty": "probably"}, "certainty"),
        ({"subject": "1001", "type": "above", "object": "1002", "uid": "not-a-uuid"}, "uid"),
        ({"subject": "", "type": "above", "object": "1002"}, "subject"),
        ({"subject": HUGE, "type": "above", "object": "1002"}, "subject"),
        ({"subject": 10**30, "type": "above", "object": "1002"}, "subject"),
        ({"subject": -5, "type": "above", "object": "1002"}, "subject"),
    ],
    ids=["missing subject", "null subject", "list subject", "object subject", "boolean subject", "float subject",
         "numeric type", "unknown certainty", "bad uid", "empty subject", "huge subject", "huge id", "negative id"],
)
def test_a_malformed_relationship_is_refused_naming_the_field(body, field, api, recorded):
    response = api.post(url("VML24", "relationships"), body, format="json")
    assert 400 <= response.status_code < 500, response.content
    assert assert_error_body(response, response.status_code)["field"] == field


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ({"kind": "deposit"}, "label"),
        ({"label": None, "kind": "deposit"}, "label"),
        ({"label": HUGE, "kind": "deposit"}, "label"),
        ({"label": "1003", "kind": "pit"}, "kind"),
        ({"label": "1003", "kind": "deposit", "top_level": "high"}, "top_level"),
        ({"label": "1003", "kind": "deposit", "top_level": "NaN"}, "top_level"),
        ({"label": "1003", "kind": "deposit", "area": HUGE}, "area"),
        ({"label": "1003", "kind": "deposit", "top_level": 10.0, "base_level": 11.0}, "base_level"),
        ({"label": "1001", "kind": "deposit"}, "label"),
    ],
    ids=["missing label", "null label", "huge label", "unknown kind", "text level", "nan level",
         "huge area", "inverted levels", "duplicate label"],
)
def test_a_malformed_context_is_refused_naming_the_field(body, field, api, recorded):
    response = api.post(url("VML24", "contexts"), body, format="json")
    assert 400 <= response.status_code < 500, response.content
    assert assert_error_body(response, response.status_code)["field"] == field


@pytest.mark.parametrize(
    "body",
    [{"label": None}, {"label": ""}, {"kind": "pit"}, {"top_level": "x"}, {"label": HUGE}, {"base_level": 1e9}],
    ids=["null label", "empty label", "unknown kind", "text level", "huge label", "base above top"],
)
def test_a_malformed_edit_is_refused(body, api, project, actor, recorded):
    from projects.record import writes

    writes.edit_context(project, actor, recorded["1001"].id, {"top_level": 10.0})
    response = api.patch(url("VML24", "contexts", recorded["1001"].id), body, format="json")
    assert_error_body(response, 400)


@pytest.mark.parametrize("reason", [None, "", "   ", HUGE, ["x"]], ids=["null", "empty", "blank", "huge", "list"])
def test_a_retraction_without_a_usable_reason_is_refused(reason, api, recorded):
    response = api.post(url("VML24", "contexts", recorded["1001"].id, "retract"), {"reason": reason}, format="json")
    assert assert_error_body(response, 400)["field"] == "reason"


@pytest.mark.parametrize(
    "body",
    [
        {"batch_id": "nope"},
        {"batch_id": str(uuid.uuid4()), "contexts": "1001"},
        {"batch_id": str(uuid.uuid4()), "contexts": [1, 2]},
        {"batch_id": str(uuid.uuid4()), "relationships": [None]},
        {"batch_id": None},
    ],
    ids=["bad batch id", "contexts not a list", "contexts not objects", "null relationship", "null batch id"],
)
def test_a_malformed_batch_is_refused(body, api, recorded):
    assert_error_body(api.post(url("VML24", "sync"), body, format="json"), 400)


@pytest.mark.parametrize(
    "item",
    [
        {"subject": "1001", "type": ["above"], "object": "1002"},
        {"subject": "1001", "type": "above", "object": "1002", "certainty": ["certain"]},
        {"subject": "1001", "type": "above", "object": "1002", "uid": {"a": 1}},
        {"subject": "1001", "type": "above", "object": "1002", "note": {"a": 1}},
        {"subject": "1001", "type": {"a": 1}, "object": "1002"},
    ],
    ids=["list type", "list certainty", "object uid", "object note", "object type"],
)
def test_a_malformed_batch_item_is_refused_without_a_crash(item, api, recorded):
    body = {"batch_id": str(uuid.uuid4()), "relationships": [item]}
    response = api.post(url("VML24", "sync"), body, format="json")
    assert_error_body(response, 400, "batch-invalid")


def test_a_batch_item_naming_a_huge_context_id_is_refused_without_a_crash(api, recorded):
    item = {"subject": 10**30, "type": "above", "object": "1002"}
    body = {"batch_id": str(uuid.uuid4()), "relationships": [item]}
    assert_error_body(api.post(url("VML24", "sync"), body, format="json"), 409, "batch-rejected")


@pytest.mark.parametrize(
    "item",
    [
        {"label": ["1003"], "kind": "deposit"},
        {"label": "1003", "kind": ["deposit"]},
        {"label": "1003", "kind": "deposit", "top_level": {"m": 1}},
        {"label": "1003", "kind": "deposit", "description": {"colour": "brown"}},
        {"label": "1003", "kind": "deposit", "colour": "brown"},
    ],
    ids=["list label", "list kind", "object level", "object description", "unknown attribute"],
)
def test_a_malformed_batch_context_is_refused_without_a_crash(item, api, recorded):
    body = {"batch_id": str(uuid.uuid4()), "contexts": [item]}
    assert_error_body(api.post(url("VML24", "sync"), body, format="json"), 400, "batch-invalid")


def test_an_overlong_idempotency_key_is_refused(api, recorded):
    response = api.post(url("VML24", "contexts"), {"label": "1003", "kind": "cut"}, format="json",
                        HTTP_IDEMPOTENCY_KEY="k" * 500)
    assert_error_body(response, 400)


def test_an_infinite_level_is_refused(api, recorded):
    body = '{"label": "1003", "kind": "deposit", "top_level": 1e400}'  # json.loads reads 1e400 as inf
    response = api.post(url("VML24", "contexts"), data=body, content_type="application/json")
    assert assert_error_body(response, 400)["field"] == "top_level"


def test_a_non_numeric_object_id_in_the_path_answers_not_found(api, recorded):
    assert api.get(url("VML24", "contexts", "abc")).status_code == 404


def test_an_id_too_large_for_the_database_answers_not_found(api, recorded):
    assert_error_body(api.get(url("VML24", "contexts", "9" * 30)), 404)


def test_an_id_too_large_for_the_database_cannot_be_retracted(api, recorded):
    response = api.post(url("VML24", "relationships", "9" * 30, "retract"), {"reason": "x"}, format="json")
    assert_error_body(response, 404)


def test_a_huge_since_in_the_change_feed_is_handled(api, recorded):
    response = api.get(url("VML24", "changes") + "?since=" + "9" * 30)
    assert response.status_code in (200, 400)
