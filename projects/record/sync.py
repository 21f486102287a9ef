"""Batch sync for field apps: many contexts and relationships in one request.

A batch is **all-or-nothing**: it becomes one revision, or, if any item is
refused, nothing is written and the answer lists every refused item with its
index, its client uid and the reason, so the app can correct and resend.
Items carry client-generated uids, so items already stored (from an earlier,
partly acknowledged batch) are reported as ``existing`` rather than
duplicated; a batch replayed with the same ``batch_id`` and the same items
returns exactly the answer it got the first time and changes nothing, and the
same ``batch_id`` with other items is refused (422), naming the first item
that differs.

The batch is checked against a snapshot of the record outside the project's
write lock (``batch_plan``), then written in one short locked step with bulk
inserts; see ``batch_plan`` for what is re-checked when other writes landed
in between.
"""

from __future__ import annotations

import hashlib
import json

from django.db import IntegrityError, connection, transaction

from chronology.engine.record_data import RelationshipData

from projects.models import ChangeLogEntry, Context, Project, Relationship, SyncBatch

from . import order_cache
from .bulk_insert import insert_rows
from .batch_plan import BatchPlan, PlannedContext, PlannedRelationship, Repeat, plan_batch
from .changes import Actor, record_change
from .errors import BatchRejected, RecordConflict, RecordError, RecordInvalid
from .representation import context_data, relationship_data, relationship_text
from .writes import parse_uid

MAX_ITEMS = 5000


class BatchReused(RecordError):
    """A ``batch_id`` already used for a batch with other items."""

    status = 422
    code = "batch-id-reused"


def sync_batch(project: Project, actor: Actor, *, batch_id, contexts=(), relationships=()) -> dict:
    """Apply one batch; see the module docstring.  Returns the answer to send."""
    batch_uuid = parse_uid(batch_id, "batch_id")
    if batch_uuid is None:
        raise RecordInvalid("a batch needs a client-generated batch_id", field="batch_id", code="required")
    contexts, relationships = list(contexts or []), list(relationships or [])
    if len(contexts) + len(relationships) > MAX_ITEMS:
        raise RecordInvalid(f"a batch holds at most {MAX_ITEMS} items", field="contexts", code="batch-too-large")
    body = _body_text(contexts, relationships)
    stored = SyncBatch.objects.filter(project=project, batch_id=batch_uuid).first()
    if stored is not None:
        return _replayed(stored, body)

    plan = _plan_on_snapshot(project, contexts, relationships)
    _refuse_if_bad(plan)
    try:
        with record_change(project, actor, summary=f"sync batch {batch_uuid}") as changes:
            # Again under the project lock: the same batch may have been sent twice at once.
            stored = SyncBatch.objects.filter(project=changes.project, batch_id=batch_uuid).first()
            if stored is not None:
                return _replayed(stored, body)
            order = order_cache.checkout(changes.project)
            changes._order = order
            recheck = False
            if changes.project.revision != plan.revision:
                since = _record_changes_since(changes.project, plan.revision)
                recheck = any(kind == "relationship" for kind, _, _ in since)
                if not plan.still_holds(since):
                    plan = plan_batch(changes.project, order_cache.private_copy(order), contexts, relationships)
                    _refuse_if_bad(plan)
                    recheck = False
            answer = _apply(changes, order, plan, recheck=recheck, batch_uuid=batch_uuid, body=body)
    except _Replan:  # an edge logged since the snapshot closes a cycle with the batch: plan it afresh
        return sync_batch(project, actor, batch_id=batch_id, contexts=contexts, relationships=relationships)
    except IntegrityError as exc:  # a concurrent post of one of the batch's uids or labels
        raise RecordConflict("an item of the batch was posted concurrently; retry", code="concurrent-write") from exc
    return answer


class _Replan(Exception):
    """Raised inside the locked step to roll it back and plan the batch again."""


def _plan_on_snapshot(project: Project, contexts: list, relationships: list) -> BatchPlan:
    """Plan against one consistent read of the record, holding no lock."""
    outermost = not connection.in_atomic_block
    with transaction.atomic():
        # Every read of the plan sees one revision (inside an enclosing transaction, e.g. a test, it cannot).
        if connection.vendor == "postgresql" and outermost:
            with connection.cursor() as cursor:
                cursor.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ")
        fresh = Project.objects.get(pk=project.pk)
        return plan_batch(fresh, order_cache.snapshot(fresh), contexts, relationships)


def _refuse_if_bad(plan: BatchPlan) -> None:
    if plan.errors:
        raise BatchRejected(
            f"{len(plan.errors)} item(s) refused; nothing in the batch was written", field=None, items=plan.errors
        )


def _record_changes_since(project: Project, revision: int) -> list[tuple]:
    return list(
        ChangeLogEntry.objects.filter(
            project=project, revision__gt=revision, object_kind__in=("context", "relationship")
        ).values_list("object_kind", "before", "after")
    )


def _apply(changes, order, plan: BatchPlan, *, recheck: bool, batch_uuid, body: str) -> dict:
    """Write the plan's new items in bulk and store the answer.

    With ``recheck``, each edge is checked again as it is added (other
    relationships were logged since the snapshot); a cycle raises ``_Replan``.
    """
    project, revision = changes.project, changes.revision
    new_contexts = plan.new_contexts
    rows = [
        Context(project=project, uid=c.uid, created_revision=revision, **c.fields) for c in new_contexts
    ]
    insert_rows(Context, rows, with_ids=True)
    ids = {c.placeholder: row.pk for c, row in zip(new_contexts, rows)}
    written = {c.placeholder: row for c, row in zip(new_contexts, rows)}
    for row in rows:
        changes.created("context", row, context_data(row), repr_=row.label)
        order.add_context(row.pk)

    new_relationships = plan.new_relationships
    edges = []
    for r in new_relationships:
        later, earlier = ids.get(r.later, r.later), ids.get(r.earlier, r.earlier)
        edges.append(Relationship(
            project=project, uid=r.uid, type=r.type, later_id=later, earlier_id=earlier, certainty=r.certainty,
            recorded_as=r.recorded_as, note=r.note, created_revision=revision,
        ))
    insert_rows(Relationship, edges, with_ids=True)
    labels = {ids.get(k, k): v for k, v in plan.labels.items()}
    for r, rel in zip(new_relationships, edges):
        data = RelationshipData(id=rel.pk, type=rel.type, later=rel.later_id, earlier=rel.earlier_id,
                                certain=rel.certainty == "certain")
        if recheck and order.find_cycle(data) is not None:
            raise _Replan
        order.add(data)
        changes.created("relationship", rel, relationship_data(rel),
                        repr_=relationship_text(rel.type, labels[rel.later_id], labels[rel.earlier_id]))

    written.update({r.placeholder: rel for r, rel in zip(new_relationships, edges)})
    answer = {"batch_id": str(batch_uuid), "contexts": [], "relationships": []}
    for collection, items in (("contexts", plan.contexts), ("relationships", plan.relationships)):
        for item in items:
            row, created = _row_of(item, written)
            extra = {"label": row.label} if collection == "contexts" else {}
            answer[collection].append(_item(row, created=created, **extra))
    changes.finish()  # make the revision now so the answer can name it
    answer["revision"] = changes.project.revision
    SyncBatch.objects.create(
        project=project, batch_id=batch_uuid, user=changes.actor.user, revision=changes.project.revision,
        # JSON text, not an object: jsonb would reorder the keys of the answer a replay must repeat.
        response=json.dumps(answer), body=body, body_digest=_digest(body),
    )
    return answer


def _row_of(item, written: dict) -> tuple[object, bool]:
    """The row an item of the plan stands for, and whether the batch created it."""
    if isinstance(item, (PlannedContext, PlannedRelationship)):
        return written[item.placeholder], True
    if isinstance(item, Repeat):
        return written[item.of.placeholder], False
    return item, False


def _item(obj, *, created: bool, **extra) -> dict:
    return {"uid": str(obj.uid), "id": obj.id, "status": "created" if created else "existing", **extra}


# -- replays --------------------------------------------------------------------

def _body_text(contexts: list, relationships: list) -> str:
    """The batch's items as canonical JSON text: what a replay is compared with."""
    return json.dumps({"contexts": contexts, "relationships": relationships}, sort_keys=True, default=str,
                      separators=(",", ":"))


def _digest(text: str) -> str:
    return hashlib.sha256(text.encode()).hexdigest()


def _replayed(stored: SyncBatch, body: str) -> dict:
    """The first answer again, if the items are the same; otherwise refuse naming the first difference."""
    if stored.body_digest and stored.body_digest != _digest(body):
        raise BatchReused(
            f"batch {stored.batch_id} was already sent with other items ({_first_difference(stored.body, body)}); "
            "send new items under a new batch_id",
            field="batch_id", difference=_first_difference(stored.body, body),
        )
    return json.loads(stored.response) if isinstance(stored.response, str) else stored.response


def _first_difference(before: str, after: str) -> str:
    try:
        old, new = json.loads(before), json.loads(after)
    except ValueError:
        return "the items differ"
    for collection in ("contexts", "relationships"):
        a, b = old.get(collection, []), new.get(collection, [])
        for index in range(max(len(a), len(b))):
            if index >= len(a):
                return f"{collection}[{index}] is new"
            if index >= len(b):
                return f"{collection}[{index}] is missing"
            if a[index] != b[index]:
                keys = sorted(k for k in set(a[index]) | set(b[index]) if a[index].get(k) != b[index].get(k))
                return f"{collection}[{index}] differs in {', '.join(keys)}"
    return "the items differ"


__all__ = ["sync_batch", "MAX_ITEMS", "BatchReused"]
