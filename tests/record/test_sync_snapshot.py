"""A sync batch is planned against a snapshot and written in one short locked step.

These tests put a write of another client between the snapshot and the
locked step (by wrapping the planning function), and check that the batch
then still gives exactly the answer the item-by-item path would have given.
"""

from __future__ import annotations

import uuid

import pytest

from projects.models import ChangeLogEntry, Context, Relationship, Revision
from projects.record import sync
from projects.record.errors import BatchRejected
from projects.record.sync import BatchReused, sync_batch
from projects.record.writes import add_context, add_relationship, retract_relationship


def _uid():
    return str(uuid.uuid4())


def _contexts(*labels):
    return [{"uid": _uid(), "label": label, "kind": "deposit", "area": "Trench 1"} for label in labels]


@pytest.fixture
def stored(project, actor):
    """Three contexts in sequence: 1003 above 1002 above 1001."""
    sync_batch(project, actor, batch_id=_uid(), contexts=_contexts("1001", "1002", "1003"), relationships=[
        {"subject": "1002", "type": "above", "object": "1001"},
        {"subject": "1003", "type": "above", "object": "1002"},
    ])
    return project


def _with_write_after_snapshot(monkeypatch, write):
    """Make ``write`` happen after the batch is planned and before it takes the lock."""
    original = sync._plan_on_snapshot
    calls = []

    def planned_then_written(project, contexts, relationships):
        plan = original(project, contexts, relationships)
        if not calls:
            calls.append(True)
            write()
        return plan

    monkeypatch.setattr(sync, "_plan_on_snapshot", planned_then_written)


def test_a_batch_reusing_its_batch_id_with_other_items_is_refused_naming_the_difference(project, actor):
    batch_id = _uid()
    sync_batch(project, actor, batch_id=batch_id, contexts=_contexts("1001", "1002"))
    with pytest.raises(BatchReused) as refused:
        sync_batch(project, actor, batch_id=batch_id, contexts=_contexts("1001", "1009"))
    assert refused.value.status == 422
    assert refused.value.details["difference"] == "contexts[0] differs in uid"


def test_a_batch_reusing_its_batch_id_with_other_items_writes_nothing(project, actor):
    batch_id = _uid()
    sync_batch(project, actor, batch_id=batch_id, contexts=_contexts("1001"))
    with pytest.raises(BatchReused):
        sync_batch(project, actor, batch_id=batch_id, contexts=_contexts("1001", "1002"))
    assert sorted(Context.objects.values_list("label", flat=True)) == ["1001"]


def test_an_item_repeated_within_a_batch_is_written_once_and_reported_as_existing(project, actor):
    [ctx] = _contexts("1001")
    answer = sync_batch(project, actor, batch_id=_uid(), contexts=[ctx, dict(ctx)])
    assert [c["status"] for c in answer["contexts"]] == ["created", "existing"]
    assert answer["contexts"][0]["id"] == answer["contexts"][1]["id"]
    assert Context.objects.count() == 1


def test_a_relationship_repeated_within_a_batch_is_written_once(project, actor):
    rel = {"subject": "1002", "type": "above", "object": "1001"}
    answer = sync_batch(project, actor, batch_id=_uid(), contexts=_contexts("1001", "1002"),
                        relationships=[rel, dict(rel)])
    assert [r["status"] for r in answer["relationships"]] == ["created", "existing"]
    assert Relationship.objects.count() == 1


def test_a_batch_writes_one_change_log_entry_per_new_item_in_one_revision(project, actor):
    sync_batch(project, actor, batch_id=_uid(), contexts=_contexts("1001", "1002", "1003"),
               relationships=[{"subject": "1002", "type": "above", "object": "1001"}])
    assert list(ChangeLogEntry.objects.values_list("revision", "action").order_by("id")) == [
        (1, "record.context.added")] * 3 + [(1, "record.relationship.added")]
    assert Revision.objects.count() == 1


def test_an_unrelated_write_after_the_snapshot_does_not_stop_the_batch(stored, actor, monkeypatch):
    _with_write_after_snapshot(monkeypatch, lambda: add_context(stored, actor, label="2001", kind="deposit"))
    answer = sync_batch(stored, actor, batch_id=_uid(), contexts=_contexts("1004"),
                        relationships=[{"subject": "1004", "type": "above", "object": "1003"}])
    assert answer["revision"] == 3
    assert Relationship.objects.filter(later__label="1004", earlier__label="1003").exists()


def test_a_batch_is_judged_as_of_its_snapshot_when_a_context_it_names_appears_meanwhile(
    stored, actor, monkeypatch
):
    # The batch names 1004, which another client records only after the batch was planned.
    def meanwhile():
        add_context(stored, actor, label="1004", kind="deposit")
        add_relationship(stored, actor, subject="1004", type="above", object="1003")

    batch_ctx = _contexts("1005")
    _with_write_after_snapshot(monkeypatch, meanwhile)
    with pytest.raises(BatchRejected) as refused:
        sync_batch(stored, actor, batch_id=_uid(), contexts=batch_ctx, relationships=[
            {"subject": "1005", "type": "above", "object": "1003"},
            {"subject": "1001", "type": "above", "object": "1004"},
        ])
    [item] = refused.value.details["items"]
    assert (item["index"], item["code"]) == (1, "unknown-context")


def test_an_edge_logged_after_the_snapshot_is_checked_together_with_the_batch(stored, actor, monkeypatch):
    # 1004 exists before the batch; another client records 1004 above 1003 while the batch
    # (1001 above 1004) is being planned: together they close 1001 > 1004 > 1003 > 1002 > 1001.
    add_context(stored, actor, label="1004", kind="deposit")
    _with_write_after_snapshot(
        monkeypatch, lambda: add_relationship(stored, actor, subject="1004", type="above", object="1003")
    )
    with pytest.raises(BatchRejected) as refused:
        sync_batch(stored, actor, batch_id=_uid(), relationships=[
            {"subject": "1001", "type": "above", "object": "1004"},
        ])
    [item] = refused.value.details["items"]
    assert item["code"] == "cycle"
    assert [(s["from"], s["to"]) for s in item["cycle"]][0] == ("1001", "1004")
    assert not Relationship.objects.filter(later__label="1001").exists()


def test_a_retraction_after_the_snapshot_turns_a_stored_duplicate_into_a_new_item(stored, actor, monkeypatch):
    rel = Relationship.objects.get(later__label="1003")
    _with_write_after_snapshot(monkeypatch, lambda: retract_relationship(stored, actor, rel.pk, reason="misread"))
    answer = sync_batch(stored, actor, batch_id=_uid(), relationships=[
        {"subject": "1003", "type": "above", "object": "1002"},
    ])
    assert answer["relationships"][0]["status"] == "created"
    assert Relationship.objects.filter(later__label="1003", retracted_revision__isnull=True).count() == 1


def test_a_large_batch_written_in_bulk_reads_back_exactly_and_keeps_the_chain_whole(project, actor):
    from projects.record.bulk_insert import COPY_FROM
    from projects.record.history import verify

    n = COPY_FROM + 50  # past the size where the history rows are streamed rather than inserted
    labels = [f"{2000 + i}" for i in range(n)]
    answer = sync_batch(project, actor, batch_id=_uid(), contexts=_contexts(*labels), relationships=[
        {"subject": labels[i + 1], "type": "above", "object": labels[i]} for i in range(n - 1)
    ])
    stored = dict(Context.objects.values_list("label", "id"))
    assert [c["id"] for c in answer["contexts"]] == [stored[label] for label in labels]
    assert ChangeLogEntry.objects.filter(revision=1).count() == 2 * n - 1
    project.refresh_from_db()
    _head, broken, _links = verify(project)
    assert broken is None
    assert project.head_digest == _head
