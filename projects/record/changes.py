"""The core of the one write path: a change set that becomes one revision.

``record_change(project, actor)`` opens a transaction, locks the project row
(so writes to one project are serialised across processes), and yields a
``ChangeSet``.  Each change made through it writes the object's new state into
``RecordState`` and a ``ChangeLogEntry``; on leaving the block the project's
revision is bumped once and a ``Revision`` row with a chained digest is
written.  If nothing changed (a replayed no-op), no revision is made.  If
anything raises, nothing is written.
"""

from __future__ import annotations

import hashlib
import json
from contextlib import contextmanager
from dataclasses import dataclass, field

from django.db import transaction
from django.utils import timezone

from projects.models import ChangeLogEntry, Project, RecordState, Revision


@dataclass(frozen=True)
class ImportedProvenance:
    """Where a replayed change really came from (a project package being imported).

    The change log and the revision then keep the original time, user name,
    device and request id; ``user`` is the matching account in the target
    organisation, or None when the original actor is known only by name.
    Who ran the import is recorded by the import itself (``exchange``).
    """

    at: object
    user_name: str
    device: str = ""
    request_id: str = ""
    user: object | None = None


@dataclass(frozen=True)
class Actor:
    """Who makes a change: a user, the device token used, and the request.

    ``imported`` (keyword only, optional) replaces the provenance written to
    the log with that of the original change; see ``ImportedProvenance``.
    """

    user: object
    token: object | None = None
    request_id: str = ""
    device: str = ""
    imported: ImportedProvenance | None = field(default=None, kw_only=True)

    @property
    def device_name(self) -> str:
        if self.token is not None:
            return self.token.name
        return self.device

    @classmethod
    def from_request(cls, request) -> "Actor":
        from api.middleware import current_request_id
        from projects.models import ApiToken

        token = request.auth if isinstance(request.auth, ApiToken) else None
        return cls(user=request.user, token=token, request_id=current_request_id(), device="" if token else "web session")


@dataclass
class _Entry:
    action: str
    kind: str
    object_id: int | None
    object_repr: str
    before: dict | None
    after: dict | None
    message: str = ""


@dataclass
class ChangeSet:
    project: Project
    actor: Actor
    revision: int
    summary: str = ""
    entries: list[_Entry] = field(default_factory=list)

    def created(self, kind: str, obj, data: dict, *, repr_: str, message: str = "") -> None:
        RecordState.objects.create(project=self.project, kind=kind, object_id=obj.pk, valid_from=self.revision, data=data)
        self.entries.append(_Entry(f"record.{kind}.added", kind, obj.pk, repr_, None, data, message))

    def edited(self, kind: str, obj, before: dict, after: dict, *, repr_: str, message: str = "") -> None:
        self._close(kind, obj.pk)
        RecordState.objects.create(project=self.project, kind=kind, object_id=obj.pk, valid_from=self.revision, data=after)
        self.entries.append(_Entry(f"record.{kind}.edited", kind, obj.pk, repr_, before, after, message))

    def retracted(self, kind: str, obj, before: dict, *, repr_: str, reason: str) -> None:
        self._close(kind, obj.pk)
        self.entries.append(_Entry(f"record.{kind}.retracted", kind, obj.pk, repr_, before, None, reason))

    def logged(self, action: str, kind: str, object_id, *, repr_: str, before=None, after=None, message="") -> None:
        """A change that is not a record object's state (e.g. an interpretation action)."""
        self.entries.append(_Entry(action, kind, object_id, repr_, before, after, message))

    def _close(self, kind: str, object_id: int) -> None:
        RecordState.objects.filter(
            project=self.project, kind=kind, object_id=object_id, valid_to__isnull=True
        ).update(valid_to=self.revision)

    def finish(self) -> Revision | None:
        if not self.entries:
            return None
        now = timezone.now()
        user = self.actor.user if getattr(self.actor.user, "is_authenticated", False) else None
        common = dict(
            project=self.project,
            user=user,
            user_name=getattr(user, "username", "") if user else "",
            token=self.actor.token,
            device=self.actor.device_name,
            request_id=self.actor.request_id,
        )
        if self.actor.imported is not None:
            now, common = imported_provenance(self.actor.imported, common)
        ChangeLogEntry.objects.bulk_create(
            [
                ChangeLogEntry(
                    revision=self.revision,
                    created_at=now,
                    action=e.action,
                    object_kind=e.kind,
                    object_id=e.object_id,
                    object_repr=e.object_repr[:200],
                    before=e.before,
                    after=e.after,
                    message=e.message,
                    **common,
                )
                for e in self.entries
            ]
        )
        parent = self.project.record_digest
        revision = Revision.objects.create(
            number=self.revision,
            parent_digest=parent,
            digest=_digest(parent, self.entries),
            created_at=now,
            summary=(self.summary or _summarise(self.entries))[:300],
            **common,
        )
        Project.objects.filter(pk=self.project.pk).update(revision=self.revision, record_digest=revision.digest)
        self.project.revision = self.revision
        self.project.record_digest = revision.digest
        return revision


def imported_provenance(imported: ImportedProvenance, common: dict) -> tuple[object, dict]:
    """The time and log fields of a replayed change: the original ones, no token."""
    return imported.at, {**common, "user": imported.user, "user_name": imported.user_name[:150],
                         "token": None, "device": imported.device[:100], "request_id": imported.request_id[:64]}


def _digest(parent: str, entries: list[_Entry]) -> str:
    payload = json.dumps(
        [[e.action, e.kind, e.object_id, e.before, e.after, e.message] for e in entries],
        sort_keys=True,
        separators=(",", ":"),
        default=str,
    )
    return hashlib.sha256((parent + payload).encode()).hexdigest()


def _summarise(entries: list[_Entry]) -> str:
    if len(entries) == 1:
        e = entries[0]
        return f"{e.action.rsplit('.', 1)[-1]} {e.kind} {e.object_repr}"
    return f"{len(entries)} changes"


@contextmanager
def record_change(project: Project, actor: Actor, *, summary: str = ""):
    """Open one revision of ``project``'s record; see the module docstring."""
    with transaction.atomic():
        locked = Project.objects.select_for_update().get(pk=project.pk)
        changes = ChangeSet(locked, actor, locked.revision + 1, summary)
        yield changes
        changes.finish()
    project.revision = locked.revision
