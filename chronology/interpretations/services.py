"""What can be done with interpretations: the one path views, tasks and the demo use.

Each action validates, writes, and logs to the project's change log in one
transaction.  Log entries carry the project's *current* record revision and
never bump it: an interpretation is not a change of the record.
"""

from __future__ import annotations

from django.apps import apps
from django.db import IntegrityError, transaction
from django.db.models import Max, Q
from django.utils import timezone

from chronology.engine.interpretation_diff import diff_interpretations, diff_text
from chronology.engine.record_data import EQUALITY_TYPES, ORDERED_TYPES
from projects.models import ChangeLogEntry, Context, Project, RecordState, Relationship, Role
from projects.record import history, reads
from projects.record.changes import Actor
from projects.record.errors import RecordConflict, RecordError, RecordInvalid, RecordNotFound
from projects.record.representation import relationship_text

from . import content as doc
from .models import TRANSITIONS, Interpretation, Reading, Status, Version
from .validity import RecordAt, assess

__all__ = [
    "NotAllowed",
    "PreconditionFailed",
    "require_role",
    "PreconditionRequired",
    "log_action",
    "record_at",
    "prepare_content",
    "create_interpretation",
    "new_draft",
    "edit_draft",
    "commit",
    "propose",
    "approve",
    "reject",
    "make_current",
    "record_changes",
    "changes_touching",
    "move_on",
    "diff_versions",
    "relationship_texts",
]

KIND = "interpretation_version"


class PreconditionFailed(RecordError):
    status = 412
    code = "precondition-failed"


class PreconditionRequired(RecordError):
    status = 428
    code = "precondition-required"


class NotAllowed(RecordError):
    status = 403
    code = "permission-denied"


def require_role(project: Project, actor: Actor, role: str) -> None:
    """The view checks roles first; this keeps every other caller (tasks, commands) to the same rule."""
    if Role.rank(project.role_of(actor.user)) < Role.rank(role):
        raise NotAllowed(f"this needs the {role} role on project {project.code}")


# -- the change log -------------------------------------------------------------

def log_action(project: Project, actor: Actor, action: str, *, kind: str, object_id, repr_: str,
               before=None, after=None, message: str = "") -> ChangeLogEntry:
    """One change-log entry at the project's current record revision (not bumped), chained by the record."""
    return history.log_entry(project, actor, action, kind=kind, object_id=object_id, repr_=repr_,
                             before=before, after=after, message=message)


def _summary(version: Version) -> dict:
    return {"interpretation": version.interpretation_id, "number": version.number, "status": version.status,
            "record_revision": version.record_revision, "content_hash": version.content_hash or None}


def _log_version(version: Version, actor: Actor, action: str, *, before=None, after=None, message: str = ""):
    return log_action(version.project, actor, f"interpretation.version.{action}", kind=KIND, object_id=version.pk,
                      repr_=str(version), before=before, after=after, message=message)


# -- reading the record ------------------------------------------------------------

def record_at(project: Project, revision: int) -> RecordAt:
    """The record at ``revision`` as engine data, with what had been retracted by then."""
    contexts, relationships = reads.snapshot(project, revision)
    return RecordAt(
        revision=revision,
        contexts=contexts,
        relationships=relationships,
        retracted_contexts=set(Context.objects.filter(project=project, retracted_revision__lte=revision)
                               .values_list("id", flat=True)),
        retracted_relationships=set(Relationship.objects.filter(project=project, retracted_revision__lte=revision)
                                    .values_list("id", flat=True)),
    )


def _evidence_lookup(project: Project):
    """``exists(kind, id)``: True/False where the evidence app has a table of that kind, else None."""

    def exists(kind: str, ident: int):
        try:
            model = apps.get_model("evidence", kind.replace("_", ""))
        except LookupError:
            return None
        qs = model.objects.filter(pk=ident)
        if any(f.name == "project" for f in model._meta.get_fields()):
            qs = qs.filter(project=project)
        return qs.exists()

    return exists


def prepare_content(project: Project, revision: int, raw) -> dict:
    """Labels resolved at ``revision``, shape validated: the canonical document."""
    labels = {data["label"]: object_id for object_id, data in
              reads.states(project, "context", revision).values_list("object_id", "data")}
    label_errors: list[dict] = []
    try:
        resolved = doc.resolve_labels(raw if raw is not None else {}, labels.get)
    except doc.ContentInvalid as exc:
        label_errors = exc.errors
        resolved = doc.resolve_labels(raw, lambda label: labels.get(label, label))
    try:
        cleaned = doc.validate(resolved)
    except doc.ContentInvalid as exc:
        named = {e["field"] for e in label_errors}
        raise doc.ContentInvalid(label_errors + [e for e in exc.errors if e["field"] not in named]) from None
    if label_errors:
        raise doc.ContentInvalid(label_errors)
    return cleaned


def _assess(version_or_project, revision: int, content: dict) -> dict:
    project = version_or_project
    return assess(content, record_at(project, revision), evidence_exists=_evidence_lookup(project))


def _check_revision(project: Project, revision) -> int:
    return reads.resolve_revision(project, revision)


# -- creating and editing ------------------------------------------------------------

def _create_version(interpretation: Interpretation, actor: Actor, *, revision: int, content: dict,
                    parent: Version | None, message: str, extra_log: dict | None = None) -> Version:
    project = interpretation.project
    report = _assess(project, revision, content)
    # Numbers are taken under the interpretation's row lock, so two drafts never get the same one.
    Interpretation.objects.select_for_update().filter(pk=interpretation.pk).first()
    number = (Version.objects.filter(interpretation=interpretation).aggregate(m=Max("number"))["m"] or 0) + 1
    version = Version.objects.create(
        interpretation=interpretation, project=project, number=number, record_revision=revision, parent=parent,
        author=actor.user, message=message, content=content, validity=report, is_valid=report["ok"],
    )
    after = {**_summary(version), "parent": parent.pk if parent else None, **(extra_log or {})}
    _log_version(version, actor, "created", after=after, message=message)
    return version


def create_interpretation(project: Project, actor: Actor, *, name: str, description: str = "", content=None,
                          record_revision=None, message: str = "",
                          version_actor: Actor | None = None) -> tuple[Interpretation, Version]:
    """A new interpretation with its first draft (version 1).

    ``version_actor`` is logged as the author of the draft's creation when it
    differs from the interpretation's (a replayed history keeps both entries'
    own provenance); by default it is ``actor``.
    """
    require_role(project, actor, Role.ANALYST)
    name = (name or "").strip()
    if not name:
        raise RecordInvalid("an interpretation needs a name", field="name", code="required")
    revision = _check_revision(project, record_revision)
    cleaned = prepare_content(project, revision, content)
    duplicate = RecordConflict(f"an interpretation named {name!r} already exists", field="name",
                               code="duplicate-name")
    with transaction.atomic():
        if Interpretation.objects.filter(project=project, name=name).exists():
            raise duplicate
        try:
            with transaction.atomic():
                interpretation = Interpretation.objects.create(project=project, name=name,
                                                               description=description or "", created_by=actor.user)
        except IntegrityError:  # the same name created concurrently
            raise duplicate from None
        log_action(project, actor, "interpretation.created", kind="interpretation", object_id=interpretation.pk,
                   repr_=name, after={"name": name, "description": interpretation.description})
        version = _create_version(interpretation, version_actor or actor, revision=revision, content=cleaned,
                                  parent=None, message=message)
    return interpretation, version


def new_draft(version: Version, actor: Actor, *, message: str = "", content=None, record_revision=None,
              extra_log: dict | None = None) -> Version:
    """A draft child of ``version``: its content (or ``content``) on its revision (or ``record_revision``)."""
    project = version.project
    require_role(project, actor, Role.ANALYST)
    revision = version.record_revision if record_revision is None else _check_revision(project, record_revision)
    cleaned = version.content if content is None else prepare_content(project, revision, content)
    with transaction.atomic():
        return _create_version(version.interpretation, actor, revision=revision, content=cleaned, parent=version,
                               message=message, extra_log=extra_log)


def _locked(version: Version) -> Version:
    return Version.objects.select_for_update().select_related("interpretation", "project").get(pk=version.pk)


def edit_draft(version: Version, actor: Actor, *, if_match: str | None, content=None, message=None,
               record_revision=None) -> Version:
    """Change a draft's content, message or revision; ``if_match`` must be its current ETag."""
    require_role(version.project, actor, Role.ANALYST)
    if if_match is None:
        raise PreconditionRequired("send If-Match with the version's ETag to edit a draft", field="If-Match")
    with transaction.atomic():
        current = _locked(version)
        if current.status != Status.DRAFT:
            raise RecordConflict(f"{current} is {current.status}; only drafts can be edited", code="not-a-draft",
                                 status=current.status)
        if if_match.strip() not in (current.etag, "*"):
            raise PreconditionFailed(f"{current} was changed since you read it (now {current.etag})",
                                     field="If-Match", current_etag=current.etag)
        revision = current.record_revision if record_revision is None else _check_revision(current.project,
                                                                                           record_revision)
        raw = current.content if content is None else content
        cleaned = prepare_content(current.project, revision, raw)
        before = {"record_revision": current.record_revision, "message": current.message,
                  "content_hash": doc.content_hash(current.content, current.record_revision)}
        current.content = cleaned
        current.record_revision = revision
        if message is not None:
            current.message = message
        report = _assess(current.project, revision, cleaned)
        current.validity, current.is_valid = report, report["ok"]
        current.edits += 1
        current.save()
        _log_version(current, actor, "edited", before=before,
                     after={"record_revision": revision, "message": current.message,
                            "content_hash": doc.content_hash(cleaned, revision), "valid": report["ok"]})
    return current


# -- the workflow ---------------------------------------------------------------------

def _move(version: Version, actor: Actor, target: str, *, reason: str = "", fields=()) -> Version:
    if target not in TRANSITIONS[version.status]:
        raise RecordConflict(f"{version} is {version.status}; it cannot become {target}", code="invalid-transition",
                             status=version.status, target=target)
    before = version.status
    version.status = target
    version.status_changed_at = timezone.now()
    version.status_changed_by = actor.user
    version.status_reason = reason
    version.save(update_fields=["status", "status_changed_at", "status_changed_by", "status_reason", "updated_at",
                                *fields])
    _log_version(version, actor, target, before={"status": before}, after=_summary(version), message=reason)
    return version


def commit(version: Version, actor: Actor, *, message: str | None = None) -> Version:
    """Freeze a draft for ever, storing the SHA-256 of its canonical content."""
    require_role(version.project, actor, Role.ANALYST)
    with transaction.atomic():
        current = _locked(version)
        if current.status != Status.DRAFT:
            raise RecordConflict(f"{current} is already {current.status}", code="invalid-transition",
                                 status=current.status, target=Status.COMMITTED)
        report = _assess(current.project, current.record_revision, current.content)
        current.validity, current.is_valid = report, report["ok"]
        if message is not None:
            current.message = message
        current.content_hash = doc.content_hash(current.content, current.record_revision)
        current.committed_at = timezone.now()
        # Content fields first (still a draft), then the status, so the guard sees a draft.
        current.save()
        return _move(current, actor, Status.COMMITTED)


def propose(version: Version, actor: Actor) -> Version:
    """Put a committed, valid version forward for approval."""
    require_role(version.project, actor, Role.ANALYST)
    with transaction.atomic():
        current = _locked(version)
        if current.status == Status.COMMITTED and not current.is_valid:
            raise RecordConflict(f"{current} is not valid at revision {current.record_revision}", code="invalid-version",
                                 report=current.validity)
        return _move(current, actor, Status.PROPOSED)


def approve(version: Version, actor: Actor, *, reason: str = "") -> Version:
    """Approve a proposed version; the interpretation's previously approved one is superseded."""
    require_role(version.project, actor, Role.MANAGER)
    with transaction.atomic():
        list(Version.objects.select_for_update().filter(interpretation_id=version.interpretation_id))
        current = _locked(version)
        if Status.APPROVED not in TRANSITIONS[current.status]:
            return _move(current, actor, Status.APPROVED)  # raises the transition error
        previous = Version.objects.filter(interpretation_id=current.interpretation_id, status=Status.APPROVED).first()
        if previous is not None:
            _move(previous, actor, Status.SUPERSEDED, reason=f"superseded by version {current.number}")
        _move(current, actor, Status.APPROVED, reason=reason)
        reading = Reading.objects.select_for_update().filter(project=current.project).first()
        if previous is not None and reading is not None and reading.version_id == previous.pk:
            _set_reading(reading, current, actor, because="the current reading was superseded")
        return current


def reject(version: Version, actor: Actor, *, reason: str) -> Version:
    """Turn a proposed version down, with a reason."""
    require_role(version.project, actor, Role.MANAGER)
    reason = (reason or "").strip()
    if not reason:
        raise RecordInvalid("a rejection needs a reason", field="reason", code="required")
    with transaction.atomic():
        return _move(_locked(version), actor, Status.REJECTED, reason=reason)


def _set_reading(reading: Reading | None, version: Version, actor: Actor, *, because: str = "") -> Reading:
    before = {"version": reading.version_id} if reading else None
    if reading is None:
        reading = Reading.objects.create(project=version.project, version=version, set_by=actor.user)
    else:
        reading.version, reading.set_by = version, actor.user
        reading.save()
    log_action(version.project, actor, "interpretation.reading.changed", kind="reading", object_id=version.pk,
               repr_=f"current reading: {version}", before=before, after={"version": version.pk, **_summary(version)},
               message=because)
    return reading


def make_current(version: Version, actor: Actor) -> Reading:
    """Mark an approved version as the project's current reading."""
    require_role(version.project, actor, Role.MANAGER)
    with transaction.atomic():
        current = _locked(version)
        if current.status != Status.APPROVED:
            raise RecordConflict(f"{current} is {current.status}; only an approved version can be the current reading",
                                 code="not-approved", status=current.status)
        reading = Reading.objects.select_for_update().filter(project=current.project).first()
        if reading is not None and reading.version_id == current.pk:
            return reading
        return _set_reading(reading, current, actor)


# -- moving on with the record -----------------------------------------------------------

def record_changes(project: Project, since: int, until: int) -> dict:
    """Contexts and relationships added, retracted or edited after ``since`` up to ``until``.

    Read from the temporal table, so each object is compared as it stood at
    the two revisions; the change-log entries in between give who and why.
    """
    window = Q(valid_from__gt=since, valid_from__lte=until) | Q(valid_to__gt=since, valid_to__lte=until)
    out = {}
    for kind in ("context", "relationship"):
        ids = sorted(set(RecordState.objects.filter(project=project, kind=kind).filter(window)
                         .values_list("object_id", flat=True)))
        before = dict(reads.states(project, kind, since).filter(object_id__in=ids).values_list("object_id", "data"))
        after = dict(reads.states(project, kind, until).filter(object_id__in=ids).values_list("object_id", "data"))
        log: dict[int, list] = {}
        for entry in ChangeLogEntry.objects.filter(project=project, object_kind=kind, object_id__in=ids,
                                                   revision__gt=since, revision__lte=until).order_by("revision", "id"):
            log.setdefault(entry.object_id, []).append(
                {"revision": entry.revision, "action": entry.action, "user": entry.user_name,
                 "message": entry.message})
        rows = []
        for object_id in ids:
            a, b = before.get(object_id), after.get(object_id)
            if a == b:
                continue
            change = "added" if a is None else "retracted" if b is None else "edited"
            rows.append({"id": object_id, "change": change, "before": a, "after": b, "log": log.get(object_id, [])})
        out[kind] = rows
    return {"since": since, "until": until, "contexts": out["context"], "relationships": out["relationship"]}


def _rel_is_item(data: dict) -> bool:
    return data["type"] in EQUALITY_TYPES or (data["type"] in ORDERED_TYPES and data["certainty"] != "certain")


def changes_touching(version: Version, until: int | None = None) -> dict:
    """What changed in the record since ``version``'s revision that touches it, and the rest."""
    project = version.project
    until = project.revision if until is None else _check_revision(project, until)
    changes = record_changes(project, version.record_revision, until)
    ctx_refs = doc.referenced_contexts(version.content)
    rel_refs = doc.referenced_relationships(version.content)
    touching, other = [], []
    for row in changes["contexts"]:
        why = [f"named at {p}" for p in ctx_refs.get(row["id"], [])]
        if row["change"] == "added" and version.content.get("phases"):
            why.append("a new context has no phase yet")
        (touching if why else other).append({"kind": "context", **row, "touches": why})
    for row in changes["relationships"]:
        data = row["after"] or row["before"]
        why = [f"named at {p}" for p in rel_refs.get(row["id"], [])]
        for end in ("later_id", "earlier_id"):
            for p in ctx_refs.get(data[end], []):
                why.append(f"links context {data[end]} named at {p}")
        if row["change"] == "added" and _rel_is_item(data):
            why.append("a new equality or uncertain relationship takes its default decision")
        (touching if why else other).append({"kind": "relationship", **row, "touches": why})
    return {"version": version.pk, "since": version.record_revision, "until": until,
            "touching": touching, "other": other, "up_to_date": not (touching or other)}


def _carry(content: dict, record: RecordAt, old_labels: dict[int, str]) -> tuple[dict, list[dict]]:
    """The document with what no longer applies at ``record`` removed, and the list of it."""
    dropped = []

    def why_ctx(cid):
        state = "retracted" if cid in record.retracted_contexts else "unknown"
        return f"context {old_labels.get(cid, cid)} is {state} at revision {record.revision}"

    def why_rel(rid):
        state = "retracted" if rid in record.retracted_relationships else "unknown"
        return f"relationship {rid} is {state} at revision {record.revision}"

    out = dict(content)
    keep = []
    for i, a in enumerate(content["assignments"]):
        if a["context"] in record.context_ids:
            keep.append(a)
        else:
            dropped.append({"path": f"assignments[{i}]", "item": a, "reason": why_ctx(a["context"])})
    out["assignments"] = keep
    keep = []
    for i, o in enumerate(content["orderings"]):
        gone = [c for c in (o["earlier"], o["later"]) if c not in record.context_ids]
        if gone:
            dropped.append({"path": f"orderings[{i}]", "item": o, "reason": why_ctx(gone[0])})
        else:
            keep.append(o)
    out["orderings"] = keep
    out["estimate"] = []
    for i, c in enumerate(content["estimate"]):
        if c in record.context_ids:
            out["estimate"].append(c)
        else:
            dropped.append({"path": f"estimate[{i}]", "item": c, "reason": why_ctx(c)})
    keep = []
    for i, q in enumerate(content["questions"]):
        gone = [int(v.split(":")[1]) for k, v in q.items() if k in ("from", "to", "earlier", "later")
                and isinstance(v, str) and v.startswith("context:") and int(v.split(":")[1]) not in record.context_ids]
        if gone:
            dropped.append({"path": f"questions[{i}]", "item": q, "reason": why_ctx(gone[0])})
        else:
            keep.append(q)
    out["questions"] = keep
    for name, fits in (("equalities", lambda r: r.type in EQUALITY_TYPES),
                       ("uncertain", lambda r: r.type in ORDERED_TYPES and not r.certain),
                       ("set_aside", lambda r: True)):
        keep = []
        for i, e in enumerate(content[name]):
            rel = record.by_id.get(e["relationship"])
            if rel is None:
                dropped.append({"path": f"{name}[{i}]", "item": e, "reason": why_rel(e["relationship"])})
            elif not fits(rel):
                dropped.append({"path": f"{name}[{i}]", "item": e,
                                "reason": f"relationship {rel.id} is now {'certain' if rel.certain else 'uncertain'} "
                                          f"{rel.type}; the decision no longer applies"})
            else:
                keep.append(e)
        out[name] = keep
    return doc.validate(out), dropped


def move_on(version: Version, actor: Actor, *, message: str = "") -> tuple[Version, dict]:
    """A new draft of ``version`` on the latest revision, carrying over what still applies."""
    project = version.project
    project.refresh_from_db(fields=["revision"])
    latest = project.revision
    changes = changes_touching(version, latest)
    record = record_at(project, latest)
    old = record_at(project, version.record_revision)
    carried, dropped = _carry(version.content, record, old.labels)
    old_rels = {r.id for r in old.relationships}
    new_items = [
        {"relationship": r.id, "type": r.type, "certain": r.certain,
         "default": doc.default_equality_decision(r) if r.type in EQUALITY_TYPES else "accepted"}
        for r in record.relationships
        if r.id not in old_rels and (r.type in EQUALITY_TYPES or not r.certain)
    ]
    report = {"from_revision": version.record_revision, "to_revision": latest, "dropped": dropped,
              "new_items": new_items, "changes": changes}
    draft = new_draft(version, actor, message=message or f"moved on from revision {version.record_revision} to {latest}",
                      content=carried, record_revision=latest,
                      extra_log={"moved_from": version.record_revision, "dropped": [d["path"] for d in dropped]})
    return draft, report


# -- comparing ---------------------------------------------------------------------------

def relationship_texts(project: Project, revision: int, ids=None) -> dict[int, str]:
    qs = reads.states(project, "relationship", revision)
    if ids is not None:
        qs = qs.filter(object_id__in=list(ids))
    rows = list(qs.values_list("data", flat=True))
    labels = reads.context_labels(project, revision, {r["later_id"] for r in rows} | {r["earlier_id"] for r in rows})
    return {r["id"]: relationship_text(r["type"], labels.get(r["later_id"], "?"), labels.get(r["earlier_id"], "?"))
            for r in rows}


def _mark_absent(one: dict, other: dict, other_record: RecordAt) -> None:
    """Decisions about relationships the other side's record does not have read "not in the record" there."""
    for name in ("equalities", "uncertain"):
        present = {e["relationship"] for e in other[name]}
        missing = [e["relationship"] for e in one[name]
                   if e["relationship"] not in present and e["relationship"] not in other_record.by_id]
        other[name] = sorted(other[name] + [{"relationship": r, "decision": "not in the record"} for r in missing],
                             key=lambda x: x["relationship"])


def diff_versions(old: Version, new: Version) -> dict:
    """Structured and text difference between two versions of one project."""
    if old.project_id != new.project_id:
        raise RecordNotFound("both versions must belong to the project")
    project = new.project
    rec_old = record_at(project, old.record_revision)
    # Both versions are often of one revision: the record is read once (it is only read here, never changed).
    rec_new = rec_old if new.record_revision == old.record_revision else record_at(project, new.record_revision)
    a = doc.with_effective_decisions(old.content, rec_old.by_id)
    b = doc.with_effective_decisions(new.content, rec_new.by_id)
    _mark_absent(a, b, rec_new)
    _mark_absent(b, a, rec_old)
    structured = diff_interpretations(a, b, old_revision=old.record_revision, new_revision=new.record_revision)
    labels = {**rec_old.labels, **rec_new.labels}
    rel_ids = {e["relationship"] for d in (a, b) for n in ("equalities", "uncertain", "set_aside") for e in d[n]}
    texts = {**relationship_texts(project, old.record_revision, rel_ids),
             **relationship_texts(project, new.record_revision, rel_ids)}
    names = {p["key"]: p["name"] for d in (a, b) for p in d["phases"]}
    title = (f"{old.interpretation.name} v{old.number} (revision {old.record_revision}) → "
             f"{new.interpretation.name} v{new.number} (revision {new.record_revision})")
    text = diff_text(structured, labels=labels, relationships=texts, phase_names=names, title=title)
    return {"from": old.pk, "to": new.pk, "diff": structured, "text": text}
