"""The core of the one write path: a change set that becomes one revision.

``record_change(project, actor)`` opens a transaction, locks the project row
(so writes to one project are serialised across processes), and yields a
``ChangeSet``.  Each change made through it is buffered: the object's new
state for ``RecordState``, the rows to close, and a ``ChangeLogEntry``.  On
leaving the block the buffer is written with one bulk insert per table, the
revision's digest is computed over exactly what is written (see
``projects.record.history``), and the project's revision is bumped once.  If
nothing changed (a replayed no-op), no revision is made.  If anything
raises, nothing is written.
"""

from __future__ import annotations

from contextlib import contextmanager
from dataclasses import dataclass, field

from django.db import connection, transaction
from django.utils import timezone

from projects.models import ChangeLogEntry, Project, RecordState, Revision

from .bulk_insert import COPY_FROM, insert_rows, insert_statement, run_together
from .history import imported_provenance, revision_digest


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

    ``request_id`` is the server's own id of the request; ``client_request_id``
    is whatever id the client sent, kept apart because nobody vouches for it.
    The HTTP layer builds actors (``api.actor``); commands and the demo build
    them directly.
    """

    user: object
    token: object | None = None
    request_id: str = ""
    device: str = ""
    client_request_id: str = ""
    #: Keyword only: the original provenance of a replayed change (see ``ImportedProvenance``).
    imported: ImportedProvenance | None = field(default=None, kw_only=True)

    @property
    def device_name(self) -> str:
        if self.token is not None:
            return self.token.name
        return self.device


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
    """The changes of one revision, buffered until ``finish`` writes them in bulk.

    Record writers call ``created`` / ``edited`` / ``retracted`` after
    writing the object's own row; ``logged`` adds an entry that is not an
    object's state.  The state rows land in ``RecordState`` at ``finish``, so
    code inside the change set reads objects from their own tables.
    """

    project: Project
    actor: Actor
    revision: int
    summary: str = ""
    entries: list[_Entry] = field(default_factory=list)
    _states: dict = field(default_factory=dict)  # (kind, object id) -> data
    _born: set = field(default_factory=set)  # objects created in this change set
    _closing: set = field(default_factory=set)  # (kind, object id) whose open row closes

    def created(self, kind: str, obj, data: dict, *, repr_: str, message: str = "") -> None:
        self._states[(kind, obj.pk)] = data
        self._born.add((kind, obj.pk))
        self.entries.append(_Entry(f"record.{kind}.added", kind, obj.pk, repr_, None, data, message))

    def edited(self, kind: str, obj, before: dict, after: dict, *, repr_: str, message: str = "") -> None:
        self._close(kind, obj.pk)
        self._states[(kind, obj.pk)] = after
        self.entries.append(_Entry(f"record.{kind}.edited", kind, obj.pk, repr_, before, after, message))

    def retracted(self, kind: str, obj, before: dict, *, repr_: str, reason: str) -> None:
        self._close(kind, obj.pk)
        self._states.pop((kind, obj.pk), None)
        self.entries.append(_Entry(f"record.{kind}.retracted", kind, obj.pk, repr_, before, None, reason))

    def logged(self, action: str, kind: str, object_id, *, repr_: str, before=None, after=None, message="") -> None:
        """A change that is not a record object's state (e.g. an interpretation action)."""
        self.entries.append(_Entry(action, kind, object_id, repr_, before, after, message))

    def _close(self, kind: str, object_id: int) -> None:
        if (kind, object_id) not in self._born:
            self._closing.add((kind, object_id))

    def finish(self) -> Revision | None:
        """Write the buffered revision (once); None if nothing changed."""
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
            client_request_id=self.actor.client_request_id,
        )
        if self.actor.imported is not None:
            now, common = imported_provenance(self.actor.imported, common)
        rows = [
            ChangeLogEntry(
                revision=self.revision, created_at=now, action=e.action, object_kind=e.kind, object_id=e.object_id,
                object_repr=e.object_repr[:200], before=e.before, after=e.after, message=e.message, **common,
            )
            for e in self.entries
        ]
        states = [
            RecordState(project=self.project, kind=kind, object_id=object_id, valid_from=self.revision, data=data)
            for (kind, object_id), data in self._states.items()
        ]
        parent = self.project.head_digest
        revision = Revision(
            number=self.revision, parent_digest=parent, created_at=now,
            summary=(self.summary or _summarise(self.entries))[:300], **common,
        )
        revision.digest = revision_digest(parent, revision, rows, states, self._closing)
        if connection.vendor == "postgresql" and len(rows) + len(states) < COPY_FROM:
            self._write_together(rows, states, revision)
        else:
            self._close_rows()
            insert_rows(ChangeLogEntry, rows)
            insert_rows(RecordState, states)
            revision.save(force_insert=True)
            Project.objects.filter(pk=self.project.pk).update(
                revision=self.revision, record_digest=revision.digest, head_digest=revision.digest
            )
        self.project.revision = self.revision
        self.project.record_digest = self.project.head_digest = revision.digest
        self.entries, self._states, self._born, self._closing = [], {}, set(), set()
        return revision

    def _write_together(self, rows: list, states: list, revision: Revision) -> None:
        """A small revision's rows in one round trip: log, states, closed rows, revision, project head."""
        statements = [insert_statement(ChangeLogEntry, rows), insert_statement(Revision, [revision])]
        if states:
            statements.append(insert_statement(RecordState, states))
        table = RecordState._meta.db_table
        for kind, ids in self._closing_by_kind().items():
            statements.append((
                f"UPDATE {table} SET valid_to = %s WHERE project_id = %s AND kind = %s "
                "AND object_id = ANY(%s) AND valid_to IS NULL",
                [self.revision, self.project.pk, kind, ids],
            ))
        run_together(statements, (
            f"UPDATE {Project._meta.db_table} SET revision = %s, record_digest = %s, head_digest = %s WHERE id = %s",
            [self.revision, revision.digest, revision.digest, self.project.pk],
        ))

    def _closing_by_kind(self) -> dict[str, list[int]]:
        by_kind: dict[str, list[int]] = {}
        for kind, object_id in sorted(self._closing):
            by_kind.setdefault(kind, []).append(object_id)
        return by_kind

    def _close_rows(self) -> None:
        for kind, ids in self._closing_by_kind().items():
            RecordState.objects.filter(
                project=self.project, kind=kind, object_id__in=ids, valid_to__isnull=True
            ).update(valid_to=self.revision)


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
    project.record_digest, project.head_digest = locked.record_digest, locked.head_digest
