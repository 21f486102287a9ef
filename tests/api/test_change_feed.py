"""The change log: one entry per change, attributed, ordered, and never edited."""

from __future__ import annotations

import pytest

from projects.models import ChangeLogEntry, Revision
from projects.models.append_only import AppendOnlyViolation
from tests.api.conftest import assert_error_body, url
from tests.conftest import token_client


@pytest.fixture
def tablet(recorder, project):
    return token_client(recorder, "trench tablet 2")


@pytest.fixture
def worked(tablet):
    """Add, edit, relate, retract: returns the responses in order."""
    out = []
    out.append(tablet.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json"))
    out.append(tablet.post(url("VML24", "contexts"), {"label": "1002", "kind": "deposit"}, format="json"))
    out.append(tablet.patch(url("VML24", "contexts", out[0].json()["id"]), {"description": "mid brown silt"}, format="json"))
    out.append(tablet.post(url("VML24", "relationships"), {"subject": "1001", "type": "above", "object": "1002"}, format="json"))
    out.append(tablet.post(url("VML24", "relationships", out[3].json()["id"], "retract"), {"reason": "misread"}, format="json"))
    out.append(tablet.post(url("VML24", "contexts", out[1].json()["id"], "retract"), {"reason": "duplicate"}, format="json"))
    assert [r.status_code for r in out] == [201, 201, 200, 201, 200, 200]
    return out


def _feed(client, query=""):
    response = client.get(url("VML24", "changes") + query)
    assert response.status_code == 200
    return response.json()["results"]


def test_every_change_has_an_entry_with_its_action_code(tablet, worked):
    assert [(e["revision"], e["action"]) for e in _feed(tablet)] == [
        (1, "record.context.added"),
        (2, "record.context.added"),
        (3, "record.context.edited"),
        (4, "record.relationship.added"),
        (5, "record.relationship.retracted"),
        (6, "record.context.retracted"),
    ]


def test_every_entry_names_the_user_and_the_device_token(tablet, worked):
    assert {(e["user"], e["device"]) for e in _feed(tablet)} == {("ada.recorder", "trench tablet 2")}


def test_an_edit_entry_holds_the_state_before_and_after(tablet, worked):
    edit = _feed(tablet)[2]
    assert (edit["before"]["description"], edit["after"]["description"]) == ("", "mid brown silt")
    assert {k: v for k, v in edit["before"].items() if k != "description"} == {
        k: v for k, v in edit["after"].items() if k != "description"
    }


def test_an_added_entry_has_no_before_and_a_retracted_entry_no_after(tablet, worked):
    feed = _feed(tablet)
    assert (feed[0]["before"], feed[0]["after"]["label"]) == (None, "1001")
    assert (feed[4]["before"]["type"], feed[4]["after"], feed[4]["message"]) == ("above", None, "misread")


def test_since_returns_only_later_entries_in_order(tablet, worked):
    feed = _feed(tablet, "?since=3")
    assert [e["revision"] for e in feed] == [4, 5, 6]
    assert [e["id"] for e in feed] == sorted(e["id"] for e in feed)


def test_since_the_current_revision_returns_nothing(tablet, worked):
    assert _feed(tablet, "?since=6") == []


def test_the_response_request_id_is_stored_on_its_entries(tablet, worked):
    feed = _feed(tablet)
    for revision, response in enumerate(worked, start=1):
        assert response["X-Request-ID"]
        assert [e["request_id"] for e in feed if e["revision"] == revision] == [response["X-Request-ID"]]


def test_a_client_supplied_request_id_is_kept_apart_from_the_servers_own(tablet, project):
    response = tablet.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json",
                           HTTP_X_REQUEST_ID="forged:dan.manager")
    server_id = response["X-Request-ID"]
    assert server_id != "forged:dan.manager"
    entry = ChangeLogEntry.objects.get(project=project)
    assert (entry.request_id, entry.client_request_id) == (server_id, "forged:dan.manager")


def test_a_cascaded_retraction_logs_every_object_under_one_request_id(tablet, project):
    for label in ("1001", "1002", "1003"):
        tablet.post(url("VML24", "contexts"), {"label": label, "kind": "deposit"}, format="json")
    tablet.post(url("VML24", "relationships"), {"subject": "1001", "type": "above", "object": "1002"}, format="json")
    tablet.post(url("VML24", "relationships"), {"subject": "1002", "type": "above", "object": "1003"}, format="json")
    middle = _feed(tablet)[1]["object_id"]
    response = tablet.post(url("VML24", "contexts", middle, "retract"), {"reason": "spoil heap"}, format="json")
    entries = _feed(tablet, "?since=5")
    assert sorted(e["action"] for e in entries) == [
        "record.context.retracted", "record.relationship.retracted", "record.relationship.retracted"
    ]
    assert {e["request_id"] for e in entries} == {response["X-Request-ID"]}


def test_the_revisions_list_chains_each_digest_to_the_previous(tablet, worked):
    revisions = tablet.get(url("VML24", "revisions")).json()["results"]
    assert [r["number"] for r in revisions] == [1, 2, 3, 4, 5, 6]
    assert revisions[0]["parent_digest"] == ""
    assert all(revisions[i]["parent_digest"] == revisions[i - 1]["digest"] for i in range(1, 6))
    assert {r["device"] for r in revisions} == {"trench tablet 2"}


def test_a_web_session_change_is_recorded_as_such(recorder, project):
    from rest_framework.test import APIClient

    client = APIClient()
    client.force_login(recorder)
    client.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json")
    assert _feed(client)[0]["device"] == "web session"


def test_a_log_entry_cannot_be_edited(worked):
    entry = ChangeLogEntry.objects.first()
    entry.message = "rewritten"
    with pytest.raises(AppendOnlyViolation):
        entry.save()


def test_a_log_entry_cannot_be_edited_field_by_field(worked):
    entry = ChangeLogEntry.objects.first()
    entry.action = "record.context.edited"
    with pytest.raises(AppendOnlyViolation):
        entry.save(update_fields=["action"])


def test_a_log_entry_cannot_be_deleted(worked):
    with pytest.raises(AppendOnlyViolation):
        ChangeLogEntry.objects.first().delete()


def test_the_log_cannot_be_deleted_in_bulk(worked):
    with pytest.raises(AppendOnlyViolation):
        ChangeLogEntry.objects.all().delete()


def test_the_log_cannot_be_updated_in_bulk(worked):
    with pytest.raises(AppendOnlyViolation):
        ChangeLogEntry.objects.all().update(message="rewritten")
    assert not ChangeLogEntry.objects.filter(message="rewritten").exists()


def test_a_revision_cannot_be_deleted(worked):
    with pytest.raises(AppendOnlyViolation):
        Revision.objects.first().delete()


def test_the_change_feed_refuses_writes(tablet, worked):
    response = tablet.post(url("VML24", "changes"), {"action": "record.context.added"}, format="json")
    assert_error_body(response, 405, "method-not-allowed")


def test_after_an_entry_id_returns_the_entries_logged_since_that_entry(tablet, worked):
    feed = _feed(tablet)
    later = _feed(tablet, f"?after={feed[3]['id']}")
    assert [e["id"] for e in later] == [e["id"] for e in feed[4:]]
