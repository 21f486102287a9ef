"""Batch sync: all-or-nothing, replay-safe, and tolerant of partly stored batches."""

from __future__ import annotations

import uuid

import pytest

from projects.models import Context, Relationship, Revision
from tests.api.conftest import assert_error_body, url


def _uid():
    return str(uuid.uuid4())


@pytest.fixture
def batch():
    ctx = [{"uid": _uid(), "label": label, "kind": "deposit", "area": "Trench 1"} for label in ("1001", "1002", "1003")]
    rels = [
        {"uid": _uid(), "subject": "1001", "type": "above", "object": "1002"},
        {"uid": _uid(), "subject": "1003", "type": "below", "object": "1002"},
    ]
    return {"batch_id": _uid(), "contexts": ctx, "relationships": rels}


def _sync(api, body):
    return api.post(url("VML24", "sync"), body, format="json")


def test_a_clean_batch_creates_everything_in_one_revision(api, project, batch):
    response = _sync(api, batch)
    assert response.status_code == 200, response.content
    answer = response.json()
    assert answer["revision"] == 1
    assert [c["status"] for c in answer["contexts"] + answer["relationships"]] == ["created"] * 5
    assert [c["uid"] for c in answer["contexts"]] == [c["uid"] for c in batch["contexts"]]
    assert Revision.objects.filter(project=project).count() == 1
    assert (Context.objects.count(), Relationship.objects.count()) == (3, 2)


def test_a_clean_batch_logs_every_item_under_its_revision(api, project, batch):
    _sync(api, batch)
    changes = api.get(url("VML24", "changes")).json()["results"]
    assert [(c["revision"], c["action"]) for c in changes] == [(1, "record.context.added")] * 3 + [
        (1, "record.relationship.added")
    ] * 2


def test_a_replayed_batch_returns_the_identical_answer(api, project, batch):
    first = _sync(api, batch)
    again = _sync(api, batch)
    assert again.status_code == 200
    assert again.content == first.content


def test_a_replayed_batch_changes_nothing(api, project, batch):
    _sync(api, batch)
    _sync(api, batch)
    project.refresh_from_db()
    assert (project.revision, Context.objects.count(), Relationship.objects.count()) == (1, 3, 2)


def test_a_batch_with_one_bad_item_writes_nothing(api, project, batch):
    batch["relationships"].append({"uid": _uid(), "subject": "1002", "type": "above", "object": "1001"})
    _sync(api, batch)
    project.refresh_from_db()
    assert (project.revision, Context.objects.count(), Relationship.objects.count()) == (0, 0, 0)


def test_a_batch_with_one_bad_item_lists_it_with_index_uid_and_reason(api, project, batch):
    bad = {"uid": _uid(), "subject": "1002", "type": "above", "object": "1001"}
    batch["relationships"].append(bad)
    error = assert_error_body(_sync(api, batch), 409, "batch-rejected")
    assert [(i["collection"], i["index"], i["uid"], i["code"]) for i in error["items"]] == [
        ("relationships", 2, bad["uid"], "inverse-recorded")
    ]


def test_a_batch_lists_every_bad_item(api, project, batch):
    batch["contexts"][1]["label"] = "1009"
    batch["relationships"][0]["object"] = "9999"
    error = assert_error_body(_sync(api, batch), 409, "batch-rejected")
    assert [(i["collection"], i["index"], i["field"], i["code"]) for i in error["items"]] == [
        ("relationships", 0, "object", "unknown-context"),
        ("relationships", 1, "object", "unknown-context"),
    ]


def test_a_batch_item_of_an_unknown_kind_is_refused_like_a_single_post(api, project, batch):
    batch["contexts"][1]["kind"] = "pit"
    error = assert_error_body(_sync(api, batch), 400, "batch-invalid")
    assert [(i["collection"], i["index"], i["field"], i["code"]) for i in error["items"]] == [
        ("contexts", 1, "kind", "invalid-choice"),
    ]


def test_a_batch_closing_a_cycle_within_itself_is_refused_with_the_path(api, project, batch):
    bad = {"uid": _uid(), "subject": "1003", "type": "above", "object": "1001"}
    batch["relationships"].append(bad)
    item = assert_error_body(_sync(api, batch), 409, "batch-rejected")["items"][0]
    assert (item["index"], item["code"]) == (2, "cycle")
    assert [(s["from"], s["to"]) for s in item["cycle"]] == [("1003", "1001"), ("1001", "1002"), ("1002", "1003")]


def test_a_corrected_batch_is_accepted_after_a_refusal(api, project, batch):
    bad = dict(batch, relationships=batch["relationships"] + [{"uid": _uid(), "subject": "1002", "type": "above", "object": "1001"}])
    assert _sync(api, bad).status_code == 409
    assert _sync(api, dict(batch, batch_id=_uid())).status_code == 200


def test_an_overlapping_batch_reports_stored_items_as_existing(api, project, batch):
    _sync(api, batch)
    new_ctx = {"uid": _uid(), "label": "1004", "kind": "cut"}
    new_rel = {"uid": _uid(), "subject": "1004", "type": "cuts", "object": "1001"}
    overlap = {
        "batch_id": _uid(),
        "contexts": batch["contexts"][1:] + [new_ctx],
        "relationships": batch["relationships"][1:] + [new_rel],
    }
    answer = _sync(api, overlap).json()
    assert [(c["label"], c["status"]) for c in answer["contexts"]] == [
        ("1002", "existing"), ("1003", "existing"), ("1004", "created")
    ]
    assert [r["status"] for r in answer["relationships"]] == ["existing", "created"]
    assert answer["revision"] == 2


def test_an_overlapping_batch_returns_the_stored_ids(api, project, batch):
    first = _sync(api, batch).json()
    overlap = {"batch_id": _uid(), "contexts": batch["contexts"], "relationships": []}
    again = _sync(api, overlap).json()
    assert [c["id"] for c in again["contexts"]] == [c["id"] for c in first["contexts"]]


def test_a_batch_of_only_stored_items_makes_no_revision(api, project, batch):
    _sync(api, batch)
    answer = _sync(api, dict(batch, batch_id=_uid())).json()
    assert answer["revision"] == 1
    assert Revision.objects.filter(project=project).count() == 1


def test_a_batch_without_a_batch_id_is_refused(api, project, batch):
    del batch["batch_id"]
    assert assert_error_body(_sync(api, batch), 400)["field"] == "batch_id"
