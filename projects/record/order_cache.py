"""The per-process order that the write-time check consults.

Loading a large record for every posted relationship would make each check
grow with the record.  Instead each process keeps, per project, an
``IncrementalOrder`` tagged with the revision (number and digest) it reflects.
A write takes it out of the registry, brings it up to date from the change
log (only the revisions it has not seen), checks and applies its own changes,
and puts it back tagged with the new revision once the transaction commits.
If the transaction rolls back the order is simply never put back, so a stale
or phantom state can never be used: the next write rebuilds it from the
database.
"""

from __future__ import annotations

import pickle
import threading
from dataclasses import dataclass

from django.db import transaction

from chronology.engine.incremental import IncrementalOrder
from chronology.engine.record_data import RelationshipData
from projects.models import ChangeLogEntry, Context, Project, Relationship, Revision

_registry: dict[int, "_Cached"] = {}
_lock = threading.Lock()


@dataclass
class _Cached:
    revision: int
    digest: str
    order: IncrementalOrder


def relationship_as_data(rel) -> RelationshipData:
    return RelationshipData(
        id=rel.id, type=rel.type, later=rel.later_id, earlier=rel.earlier_id, certain=rel.certainty == "certain"
    )


def _from_logged(after: dict) -> RelationshipData:
    return RelationshipData(
        id=after["id"],
        type=after["type"],
        later=after["later_id"],
        earlier=after["earlier_id"],
        certain=after["certainty"] == "certain",
    )


def build_order(project: Project) -> IncrementalOrder:
    contexts = Context.objects.filter(project=project, retracted_revision__isnull=True).values_list("id", flat=True)
    rels = Relationship.objects.filter(project=project, retracted_revision__isnull=True).order_by("id")
    return IncrementalOrder.build(contexts, (relationship_as_data(r) for r in rels.iterator(chunk_size=5000)))


def _digest_at(project: Project, number: int) -> str:
    if number == 0:
        return ""
    if number == project.revision:
        return project.record_digest
    return Revision.objects.filter(project=project, number=number).values_list("digest", flat=True).first() or "?"


def _catch_up(project: Project, cached: _Cached) -> IncrementalOrder | None:
    """Apply the logged relationship changes since ``cached``; None if it cannot."""
    if cached.revision > project.revision or _digest_at(project, cached.revision) != cached.digest:
        return None
    order = cached.order
    if cached.revision == project.revision:
        return order
    # Bounded by the revision read: outside the write lock, later revisions may be committing.
    entries = ChangeLogEntry.objects.filter(
        project=project, revision__gt=cached.revision, revision__lte=project.revision, object_kind="relationship"
    ).order_by("revision", "id")
    for action, before, after in entries.values_list("action", "before", "after"):
        if action.endswith(".added"):
            rel = _from_logged(after)
            order.add_context(rel.later)
            order.add_context(rel.earlier)
            order.add(rel)
        elif action.endswith(".retracted") and not order.remove(before["id"]):
            return None
    return order


def _take(project: Project) -> IncrementalOrder:
    """The cached order out of the registry, brought up to ``project``'s revision (or built afresh)."""
    with _lock:
        cached = _registry.pop(project.pk, None)
    order = _catch_up(project, cached) if cached is not None else None
    return order if order is not None else build_order(project)


def _put_back(project: Project, order: IncrementalOrder) -> None:
    """Cache ``order`` as the one at ``project``'s revision, unless a newer one is cached already."""
    with _lock:
        current = _registry.get(project.pk)
        if current is None or current.revision < project.revision:
            _registry[project.pk] = _Cached(project.revision, project.record_digest, order)


def checkout(project: Project) -> IncrementalOrder:
    """The order for ``project`` as of its (locked) current revision, owned by the caller.

    Call inside the write transaction, after locking the project row.  The
    order is returned to the registry when the transaction commits.
    """
    order = _take(project)

    transaction.on_commit(lambda: _put_back(project, order))
    return order


def private_copy(order: IncrementalOrder) -> IncrementalOrder:
    """An independent copy of ``order`` (a pickle round trip: several times faster than ``deepcopy``)."""
    return pickle.loads(pickle.dumps(order, protocol=pickle.HIGHEST_PROTOCOL))


def snapshot(project: Project) -> IncrementalOrder:
    """A private copy of the order at ``project.revision`` (as just read), for planning without the lock.

    The cached order is brought up to date and put back for the next write;
    the caller owns the copy and may add to it freely.
    """
    order = _take(project)
    private = private_copy(order)
    _put_back(project, order)
    return private


def forget(project_id: int | None = None) -> None:
    """Drop cached orders (tests, and after bulk imports)."""
    with _lock:
        if project_id is None:
            _registry.clear()
        else:
            _registry.pop(project_id, None)
