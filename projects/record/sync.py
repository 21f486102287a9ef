"""Batch sync for field apps: many contexts and relationships in one request.

A batch is **all-or-nothing**: it becomes one revision, or, if any item is
refused, nothing is written and the answer lists every refused item with its
index, its client uid and the reason, so the app can correct and resend.
Items carry client-generated uids, so items already stored (from an earlier,
partly acknowledged batch) are reported as ``existing`` rather than
duplicated; a batch replayed with the same ``batch_id`` returns exactly the
answer it got the first time and changes nothing.
"""

from __future__ import annotations

import json
import uuid as uuid_module

from projects.models import Project, SyncBatch

from .changes import Actor, record_change
from .errors import BatchRejected, RecordError, RecordInvalid
from .writes import _add_context, _add_relationship, _parse_uid

MAX_ITEMS = 5000


def sync_batch(project: Project, actor: Actor, *, batch_id, contexts=(), relationships=()) -> dict:
    """Apply one batch; see the module docstring.  Returns the answer to send."""
    batch_uuid = _parse_uid(batch_id, "batch_id")
    if batch_uuid is None:
        raise RecordInvalid("a batch needs a client-generated batch_id", field="batch_id", code="required")
    contexts, relationships = list(contexts or []), list(relationships or [])
    if len(contexts) + len(relationships) > MAX_ITEMS:
        raise RecordInvalid(f"a batch holds at most {MAX_ITEMS} items", field="contexts", code="batch-too-large")
    stored = SyncBatch.objects.filter(project=project, batch_id=batch_uuid).first()
    if stored is not None:
        return _stored_answer(stored)

    errors: list[dict] = []
    answer = {"batch_id": str(batch_uuid), "contexts": [], "relationships": []}
    with record_change(project, actor, summary=f"sync batch {batch_uuid}") as changes:
        # Again under the project lock: the same batch may have been sent twice at once.
        stored = SyncBatch.objects.filter(project=changes.project, batch_id=batch_uuid).first()
        if stored is not None:
            return _stored_answer(stored)
        for index, item in enumerate(contexts):
            try:
                if not isinstance(item, dict):
                    raise RecordInvalid("each context must be an object", code="invalid")
                fields = {k: v for k, v in item.items() if k != "uid"}
                result = _add_context(changes, fields, item.get("uid"))
                answer["contexts"].append(_item(result, item, label=result.object.label))
            except RecordError as exc:
                errors.append(_error("contexts", index, item, exc))
        for index, item in enumerate(relationships):
            try:
                if not isinstance(item, dict):
                    raise RecordInvalid("each relationship must be an object", code="invalid")
                result = _add_relationship(changes, item)
                answer["relationships"].append(_item(result, item))
            except RecordError as exc:
                errors.append(_error("relationships", index, item, exc))
        if errors:
            raise BatchRejected(
                f"{len(errors)} item(s) refused; nothing in the batch was written", field=None, items=errors
            )
        changes.finish()  # make the revision now so the answer can name it
        changes.entries = []
        answer["revision"] = changes.project.revision
        SyncBatch.objects.create(
            project=changes.project, batch_id=batch_uuid, user=actor.user, revision=changes.project.revision,
            # JSON text, not an object: jsonb would reorder the keys of the answer a replay must repeat.
            response=json.dumps(answer),
        )
    return answer


def _stored_answer(stored: SyncBatch) -> dict:
    return json.loads(stored.response) if isinstance(stored.response, str) else stored.response


def _item(result, item, **extra) -> dict:
    return {
        "uid": str(result.object.uid),
        "id": result.object.id,
        "status": "created" if result.created else "existing",
        **extra,
    }


def _error(collection: str, index: int, item, exc: RecordError) -> dict:
    uid = item.get("uid") if isinstance(item, dict) else None
    return {"collection": collection, "index": index, "uid": uid, **exc.as_error()}


__all__ = ["sync_batch", "MAX_ITEMS", "uuid_module"]
