"""The record's digest chain: what it covers, how to extend it, how to check it.

The history of a project is one chain of SHA-256 links, oldest first:

* a **revision** link, made by ``record_change``: the digest of the chain
  head before it, the revision's own fields (number, time, user, token,
  device, both request ids, summary), every field of each of its
  change-log entries in the order written, the ``RecordState`` rows it
  wrote (kind, object, ``valid_from``, data) and the rows it closed (kind
  and object whose ``valid_to`` became this revision);
* a **workflow** link, made by ``log_entry`` for an entry logged between
  revisions (committing, proposing, approving or rejecting an
  interpretation version): the chain head before it and every field of the
  entry.  The entry keeps its link in ``ChangeLogEntry.digest``.

``Project.head_digest`` is the newest link; ``Project.record_digest`` stays
the digest of the latest revision (the order cache is tagged with it).  A
revision's ``parent_digest`` is the head it was chained to, so it differs
from the previous revision's digest exactly when workflow entries came in
between.  Row ids are left out (they are the database's, not the record's);
everything a reader is served is in.  Digests are computed from the values
being written, never read back.  ``verify`` recomputes the chain from the
stored rows and names the first link that does not match; whoever holds
an earlier head digest (printed in exports) can tell a rewrite.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from datetime import timezone as dt_timezone

from django.db import transaction
from django.utils import timezone

from projects.models import ChangeLogEntry, Project, RecordState, Revision

__all__ = ["BrokenLink", "head_digest", "log_entry", "revision_digest", "verify", "workflow_digest"]


def _canonical(value) -> bytes:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False, default=str).encode()


def _time(value) -> str:
    return value.astimezone(dt_timezone.utc).isoformat() if value is not None else ""


def _who(row) -> list:
    return [row.user_id, row.user_name, row.token_id, row.device, row.request_id, row.client_request_id]


def entry_fields(entry) -> list:
    """Every field of a change-log entry except its row id and its own link."""
    return [
        entry.project_id, entry.revision, _time(entry.created_at), *_who(entry), entry.action,
        entry.object_kind, entry.object_id, entry.object_repr, entry.before, entry.after, entry.message,
    ]


def revision_digest(parent: str, revision, entries, states, closed) -> str:
    """The link of one revision; ``states`` are RecordState rows, ``closed`` (kind, object id) pairs."""
    body = {
        "revision": [revision.project_id, revision.number, _time(revision.created_at), *_who(revision),
                     revision.summary],
        "entries": [entry_fields(e) for e in entries],
        "states": sorted([s.kind, s.object_id, s.valid_from, s.data] for s in states),
        "closed": sorted([kind, object_id] for kind, object_id in closed),
    }
    return hashlib.sha256(parent.encode() + b"\n" + _canonical(body)).hexdigest()


def workflow_digest(parent: str, entry) -> str:
    """The link of one entry logged between revisions."""
    return hashlib.sha256(parent.encode() + b"\n" + _canonical({"entry": entry_fields(entry)})).hexdigest()


def head_digest(project: Project) -> str:
    """The newest link of ``project``'s chain (empty for a project with no history)."""
    value = Project.objects.filter(pk=project.pk).values_list("head_digest", flat=True).first()
    return value or ""


def log_entry(project: Project, actor, action: str, *, kind: str, object_id, repr_: str,
              before=None, after=None, message: str = "") -> ChangeLogEntry:
    """Log one workflow entry at the current revision (not bumped), as its own link of the chain."""
    user = actor.user if getattr(actor.user, "is_authenticated", False) else None
    with transaction.atomic():
        locked = Project.objects.select_for_update().only("id", "revision", "head_digest").get(pk=project.pk)
        now = timezone.now()
        common = dict(user=user, user_name=getattr(user, "username", "") if user else "", token=actor.token,
                      device=actor.device_name, request_id=actor.request_id,
                      client_request_id=getattr(actor, "client_request_id", ""))
        if getattr(actor, "imported", None) is not None:  # a replayed action keeps its original provenance
            now, common = imported_provenance(actor.imported, common)
        entry = ChangeLogEntry(
            project_id=locked.pk, revision=locked.revision, created_at=now, **common,
            action=action, object_kind=kind, object_id=object_id, object_repr=repr_[:200],
            before=before, after=after, message=message,
        )
        entry.digest = workflow_digest(locked.head_digest, entry)
        entry.save()
        Project.objects.filter(pk=locked.pk).update(head_digest=entry.digest)
    project.head_digest = entry.digest
    return entry


@dataclass(frozen=True)
class BrokenLink:
    """The first link whose stored digest does not match the recomputed one."""

    kind: str  # "revision", "workflow entry" or "head"
    revision: int
    entry_id: int | None
    stored: str
    computed: str

    def __str__(self) -> str:
        where = f"revision {self.revision}" if self.entry_id is None else f"entry {self.entry_id} (revision {self.revision})"
        return f"{self.kind} link broken at {where}: stored {self.stored or '-'}, recomputed {self.computed}"


def verify(project: Project) -> tuple[str, BrokenLink | None, int]:
    """Recompute ``project``'s chain: (head, first broken link or None, links checked)."""
    entries: dict[int, list] = {}
    for entry in ChangeLogEntry.objects.filter(project=project).order_by("revision", "id").iterator(chunk_size=2000):
        entries.setdefault(entry.revision, []).append(entry)
    written, closed = _states_by_revision(project)
    revisions = {r.number: r for r in Revision.objects.filter(project=project)}
    head, links = "", 0
    top = max([project.revision, *revisions, *entries], default=0)
    for number in range(0, top + 1):
        own = [e for e in entries.get(number, []) if not e.digest]
        revision = revisions.get(number)
        if number > 0:
            if revision is None:
                return head, BrokenLink("revision", number, None, "", "(the revision row is missing)"), links
            computed = revision_digest(head, revision, own, written.get(number, []), closed.get(number, []))
            if revision.parent_digest != head or revision.digest != computed:
                return head, BrokenLink("revision", number, None, revision.digest, computed), links
            head, links = computed, links + 1
        elif own:
            return head, BrokenLink("workflow entry", 0, own[0].pk, "", "(an entry outside any revision)"), links
        for entry in (e for e in entries.get(number, []) if e.digest):
            computed = workflow_digest(head, entry)
            if entry.digest != computed:
                return head, BrokenLink("workflow entry", number, entry.pk, entry.digest, computed), links
            head, links = computed, links + 1
    stored_head = head_digest(project)
    if stored_head != head:
        return head, BrokenLink("head", top, None, stored_head, head), links
    return head, None, links


def _states_by_revision(project: Project):
    written: dict[int, list] = {}
    closed: dict[int, list] = {}
    rows = RecordState.objects.filter(project=project).order_by().iterator(chunk_size=5000)
    for state in rows:
        written.setdefault(state.valid_from, []).append(state)
        if state.valid_to is not None:
            closed.setdefault(state.valid_to, []).append((state.kind, state.object_id))
    return written, closed


def imported_provenance(imported, common: dict) -> tuple[object, dict]:
    """The time and log fields of a replayed change: the original ones, no token."""
    return imported.at, {**common, "user": imported.user, "user_name": imported.user_name[:150],
                         "token": None, "device": imported.device[:100], "request_id": imported.request_id[:64]}
