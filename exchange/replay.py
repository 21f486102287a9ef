"""Import of a project package: check it, then replay its history through the write path.

The change log is read in order and each source revision is made again as
one revision of the (empty) target project by the same write-path
operation that made it — additions through the change-set functions,
edits and retractions through the public ones, interpretation actions
through the interpretation services — so the target's record at every
revision reads as the source's did, and revision numbers are kept.

Provenance: each replayed change carries the original time, user name,
device and request id (``ImportedProvenance`` on the ``Actor``).  Users are
matched by username among the members of the target's organisation; an
actor with no account there is kept by name only (the log's user is then
empty) and, where the write path needs an account (version authors, role
checks), the importing user stands in.  Nobody is created.  Who imported,
when, and from which package is the ``PackageImport`` row.

Everything happens in one transaction: a package refused at any point
(including the final comparison of every record state with the package's
``record_states`` table) leaves nothing behind.
"""

from __future__ import annotations

import hashlib
import itertools

from django.contrib.auth import get_user_model
from django.db import transaction

from chronology.engine.record_data import canonical_relationship
from chronology.evidence import writes as evidence_writes
from chronology.interpretations.models import Interpretation
from chronology.runs.models import Run
from projects.models import ChangeLogEntry
from projects.record import bulk, writes
from projects.record.changes import Actor, ImportedProvenance, record_change
from projects.record.representation import CONTEXT_FIELDS

from . import replay_curves, replay_interpretations, replay_runs
from .models import PackageImport
from .package import reader, tables
from .package.reader import PackageRefused, refuse
from .portable import KeyMap

_EVIDENCE_ADD = {
    "sample": evidence_writes._add_sample,
    "determination": evidence_writes._add_determination,
    "calendar_date": evidence_writes._add_calendar_date,
    "terminus": evidence_writes._add_terminus,
}


class Actors:
    """Original actors matched to accounts of the target organisation by username."""

    def __init__(self, project, importer):
        self.project, self.importer = project, importer
        self._users: dict[str, object] = {}
        self.unknown: set[str] = set()

    def user(self, name: str):
        if not name:
            return None
        if name not in self._users:
            found = get_user_model().objects.filter(
                username=name, memberships__organisation_id=self.project.organisation_id).first()
            self._users[name] = found
            if found is None:
                self.unknown.add(name)
        return self._users[name]

    def actor(self, row: dict, *, as_importer: bool = False) -> Actor:
        matched = self.user(row.get("user_name") or "")
        provenance = ImportedProvenance(at=row["created_at"], user_name=row.get("user_name") or "",
                                        device=row.get("device") or "", request_id=row.get("request_id") or "",
                                        user=matched)
        acting = self.importer if (as_importer or matched is None) else matched
        return Actor(user=acting, imported=provenance)


class Replay:
    def __init__(self, zf, project, importer):
        self.zf, self.project, self.importer = zf, project, importer
        self.keys = KeyMap()
        self.actors = Actors(project, importer)
        self.interpretations = replay_interpretations.InterpretationReplay(self)

    # -- the record -------------------------------------------------------------

    def run(self) -> None:
        revisions = reader.rows(self.zf, "revisions")
        next(revisions)  # revision 0, the empty record
        changes = itertools.groupby(reader.rows(self.zf, "changes"), key=lambda row: row["revision"])
        pending = next(changes, None)
        if pending is not None and pending[0] == 0:
            self.interpretations.apply(list(pending[1]))
            pending = next(changes, None)
        for revision in revisions:
            if pending is None or pending[0] != revision["number"]:
                raise refuse("changes", None, f"revision {revision['number']} has no changes", "revision-without-changes")
            entries = list(pending[1])
            record = [e for e in entries if e["action"].startswith("record.")]
            self._revision(revision, record)
            self.interpretations.apply([e for e in entries if not e["action"].startswith("record.")])
            pending = next(changes, None)
        if pending is not None:
            raise refuse("changes", None, f"changes at revision {pending[0]}, which is not in revisions",
                         "missing-reference", "revision")

    def _revision(self, revision: dict, entries: list[dict]) -> None:
        number = revision["number"]
        actor = self.actors.actor(revision)
        verbs = {e["action"].rsplit(".", 1)[1] for e in entries}
        actions = [e["action"] for e in entries]
        project = self.project
        if not entries:
            raise refuse("revisions", number + 1, f"revision {number} changes nothing in the record", "empty-revision")
        if verbs == {"added"}:
            with record_change(project, actor, summary=revision["summary"] or "") as changes:
                # Runs of contexts or of relationships go through the record's bulk functions, in log order.
                for kind, run in itertools.groupby(entries, key=lambda e: e["object_kind"]):
                    if kind in ("context", "relationship"):
                        self._add_many(changes, kind, list(run))
                    else:
                        for entry in run:
                            self._add(changes, entry)
        elif "record.context.retracted" in actions:
            entry = entries[actions.index("record.context.retracted")]
            writes.retract_context(project, actor, self._row("context", entry), reason=entry["message"])
        elif actions == ["record.context.edited"]:
            entry = entries[0]
            before, after = entry["before"] or {}, entry["after"] or {}
            fields = {k: after.get(k) for k in CONTEXT_FIELDS if before.get(k) != after.get(k)}
            writes.edit_context(project, actor, self._row("context", entry), fields, message=entry["message"] or "")
        elif actions == ["record.relationship.retracted"]:
            writes.retract_relationship(project, actor, self._row("relationship", entries[0]),
                                        reason=entries[0]["message"])
        elif verbs == {"retracted"} and all(e["object_kind"] in _EVIDENCE_ADD for e in entries):
            samples = [e for e in entries if e["object_kind"] == "sample"]
            root = samples[0] if samples else entries[0]
            if not samples and len(entries) > 1:
                raise self._unreplayable(number, actions)
            evidence_writes.retract_evidence(project, actor, root["object_kind"], self._row(root["object_kind"], root),
                                             reason=root["message"])
        else:
            raise self._unreplayable(number, actions)
        if project.revision != number:
            raise refuse("revisions", number + 1, f"revision {number} replayed as revision {project.revision}",
                         "replay-diverged")

    def _unreplayable(self, number: int, actions: list[str]) -> PackageRefused:
        return refuse("changes", None, f"revision {number} combines {sorted(set(actions))}, which no single "
                      "write-path operation does", "unreplayable-revision")

    def _row(self, kind: str, entry: dict) -> int:
        pk = self.keys.row[kind].get(entry["object_key"])
        if pk is None:
            raise refuse("changes", entry["seq"] + 1, f"{kind} {entry['object_key']} is changed before it is recorded",
                         "missing-reference", "object_key")
        return pk

    def _add(self, changes, entry: dict) -> None:
        kind, after = entry["object_kind"], dict(entry["after"] or {})
        uid = after.get("uid") or entry["object_key"]
        if kind == "context":
            result = writes._add_context(changes, {k: after.get(k) for k in CONTEXT_FIELDS}, uid)
        elif kind == "relationship":
            result = writes._add_relationship(changes, self._relationship_fields(after, uid))
        elif kind in _EVIDENCE_ADD:
            result = _EVIDENCE_ADD[kind](changes, self._evidence_fields(kind, after), uid)
        else:
            raise refuse("changes", entry["seq"] + 1, f"unknown record object kind {kind!r}", "bad-enum", "object_kind")
        if not result.created:
            raise refuse("changes", entry["seq"] + 1, f"{kind} {uid} is recorded twice", "duplicate-key", "object_key")
        self.keys.add(kind, result.object.id, str(result.object.uid))

    def _add_many(self, changes, kind: str, entries: list[dict]) -> None:
        for entry in entries:
            if (entry["after"] or {}).get("uid", entry["object_key"]) in self.keys.row[kind]:
                raise refuse("changes", entry["seq"] + 1, f"{kind} {entry['object_key']} is recorded twice",
                             "duplicate-key", "object_key")
        if kind == "context":
            made = bulk.add_contexts(changes, [({k: (e["after"] or {}).get(k) for k in CONTEXT_FIELDS},
                                                (e["after"] or {}).get("uid") or e["object_key"]) for e in entries])
        else:
            made = bulk.add_relationships(changes, [
                self._relationship_fields(e["after"] or {}, (e["after"] or {}).get("uid") or e["object_key"])
                for e in entries])
        for obj in made:
            self.keys.add(kind, obj.id, str(obj.uid))

    def _relationship_fields(self, after: dict, uid: str) -> dict:
        later, earlier = self.keys.row["context"][after["later_id"]], self.keys.row["context"][after["earlier_id"]]
        wording = after["recorded_as"]
        _type, first_is_later, _ = canonical_relationship(1, wording, 2)
        subject, obj = (later, earlier) if first_is_later == 1 else (earlier, later)
        return {"subject": subject, "type": wording, "object": obj, "certainty": after["certainty"],
                "note": after.get("note") or "", "uid": uid}

    def _evidence_fields(self, kind: str, after: dict) -> dict:
        rows = self.keys.row
        out = {}
        if after.get("context_id") is not None:
            out["context"] = rows["context"][after["context_id"]]
        if after.get("sample_id") is not None:
            out["sample"] = rows["sample"][after["sample_id"]]
        allowed = {
            "sample": ("code", "material", "short_lived", "notes"),
            "determination": ("lab_code", "delta13c", "delta_r", "delta_r_sigma", "marine_fraction",
                              "marine_fraction_sigma", "notes"),
            "calendar_date": ("kind", "mean", "sd", "start", "end", "method", "notes"),
            "terminus": ("kind", "year", "year_end", "find", "notes"),
        }[kind]
        out.update({k: after[k] for k in allowed if after.get(k) is not None})
        if kind == "determination":
            measured = ("f14c", "f14c_sigma") if after["measured"] == "f14c" else ("cra", "cra_sigma")
            out.update({k: after[k] for k in measured})
            out["curve"] = self.keys.curve_row[after["curve_id"]]
            if after.get("marine_curve_id"):
                out["marine_curve"] = self.keys.curve_row[after["marine_curve_id"]]
        return out

    # -- after the replay --------------------------------------------------------

    def verify(self) -> None:
        """Every record state as in the package's ``record_states`` table, row by row."""
        self.keys.add_import_provenance(self.project)
        ours = tables.record_states(self.project, self.keys)
        for number, theirs in enumerate(reader.rows(self.zf, "record_states"), start=2):
            mine = next(ours, None)
            expected = [theirs[f] for f in ("kind", "object", "valid_from", "valid_to", "data")]
            if mine is None or mine != expected:
                raise refuse("record_states", number, "the replayed record differs from the package here",
                             "replay-diverged")
        if next(ours, None) is not None:
            raise refuse("record_states", None, "the replay made more record states than the package has",
                         "replay-diverged")


def _sha256(source) -> str:
    sha = hashlib.sha256()
    if hasattr(source, "seek"):
        source.seek(0)
        while chunk := source.read(1 << 20):
            sha.update(chunk)
        source.seek(0)
    else:
        with open(source, "rb") as f:
            while chunk := f.read(1 << 20):
                sha.update(chunk)
    return sha.hexdigest()


def _require_empty(project) -> None:
    if (project.revision or ChangeLogEntry.objects.filter(project=project).exists()
            or Interpretation.objects.filter(project=project).exists() or Run.objects.filter(project=project).exists()):
        raise PackageRefused(f"project {project.code} is not empty; a package is imported into an empty project",
                             field="project", code="project-not-empty", items=[])


def import_package(source, project, importer) -> PackageImport:
    """Check the package at ``source`` (path or binary file), then replay it into ``project``.

    Raises ``PackageRefused`` (listing every problem) with nothing written.
    """
    project.refresh_from_db()
    _require_empty(project)
    package_sha = _sha256(source)
    zf = reader.open_package(source)
    with zf:
        found = reader.check_package(zf)
        with transaction.atomic():
            replay = Replay(zf, project, importer)
            replay_curves.provide(replay)
            replay.run()
            run_keys = replay_runs.replay(replay)
            source_digests = {str(r["number"]): r["source_digest"] or r["digest"]
                              for r in reader.rows(zf, "revisions") if r["number"]}
            done = PackageImport.objects.create(
                project=project, imported_by=importer, package_sha256=package_sha,
                source_project=f"{found['tellstack:project'].get('organisation')}:{found['tellstack:project']['code']}",
                source_head_digest=found.get("tellstack:head_digest") or "", revisions=project.revision,
                source_digests=source_digests, run_keys=run_keys, unknown_actors=sorted(replay.actors.unknown),
            )
            replay.interpretations.verify()
            replay.verify()
    return done
