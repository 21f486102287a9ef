"""The one write path of the field record.

Every change to contexts and relationships goes through these functions;
views, the sync endpoint, imports and management commands all call them and
nothing else writes the record tables.  Each function validates, writes,
logs and bumps the revision in one transaction (``record_change``), and
raises a ``RecordError`` having written nothing when the change is refused.
"""

from __future__ import annotations

import math
import unicodedata
import uuid as uuid_module
from dataclasses import dataclass

from django.db import IntegrityError
from django.db.models import Q

from chronology.engine.record_data import (
    EQUALITY_TYPES,
    INVERSE_WORDINGS,
    ORDERED_TYPES,
    RelationshipData,
    canonical_relationship,
)
from projects.models import Context, Project, Relationship
from projects.models.record import Certainty, ContextKind

from . import order_cache
from .changes import Actor, ChangeSet, record_change
from .hooks import context_retracting
from .errors import RecordConflict, RecordInvalid, RecordNotFound
from .representation import CONTEXT_FIELDS, context_data, relationship_data, relationship_text

__all__ = [
    "Actor",
    "ChangeSet",
    "WriteResult",
    "parse_uid",
    "normalise_label",
    "add_context",
    "edit_context",
    "retract_context",
    "add_relationship",
    "retract_relationship",
    "record_change",
    "WORDINGS",
]

#: Every wording a recorder may use, canonical and inverse.
WORDINGS = sorted(set(ORDERED_TYPES) | set(EQUALITY_TYPES) | set(INVERSE_WORDINGS))
_WORDING_SET = frozenset(WORDINGS)
# Django's ``Choices.values`` is rebuilt on every access; the write path asks per item.
KINDS = frozenset(ContextKind.values)
CERTAINTIES = frozenset(Certainty.values)


@dataclass(frozen=True)
class WriteResult:
    """The object written (or found, for an idempotent repeat) and whether it is new."""

    object: object
    created: bool
    revision: int


# -- helpers -----------------------------------------------------------------

def _order(changes: ChangeSet):
    order = getattr(changes, "_order", None)
    if order is None:
        order = order_cache.checkout(changes.project)
        changes._order = order
    return order


def parse_uid(value, field="uid"):
    """A client-generated uid as a UUID (None when not given); refused naming ``field``."""
    if value is None or value == "":
        return None
    if isinstance(value, uuid_module.UUID):
        return value
    try:
        return uuid_module.UUID(str(value))
    except ValueError:
        raise RecordInvalid(f"{value!r} is not a UUID", field=field, code="invalid-uuid") from None


_parse_uid = parse_uid  # the batch path's older name

#: Unicode categories refused in labels: control, format (zero-width space,
#: bidirectional overrides) and lone surrogates.
_HIDDEN = frozenset({"Cc", "Cf", "Cs"})


def normalise_label(value, field: str = "label") -> str:
    """A label as stored and looked up: NFKC-normalised and stripped.

    NFKC folds compatibility forms (full-width digits to ASCII digits, for
    instance; Unicode Standard Annex #15), so two labels that read the same
    are the same label.  Characters that do not show (control and format
    characters) are refused rather than dropped: a label with one is most
    likely an encoding fault or an attempt to pass for another label.
    """
    text = unicodedata.normalize("NFKC", str(value))
    hidden = next((ch for ch in text if unicodedata.category(ch) in _HIDDEN), None)
    if hidden is not None:
        raise RecordInvalid(
            f"{field} holds an invisible character U+{ord(hidden):04X}", field=field, code="invalid-character"
        )
    return text.strip()


def _clean_context_fields(fields: dict, *, partial: bool) -> dict:
    unknown = set(fields) - set(CONTEXT_FIELDS)
    if unknown:
        name = sorted(unknown)[0]
        raise RecordInvalid(f"{name!r} is not a context attribute", field=name, code="unknown-field")
    cleaned = {}
    # Batch items reach here without a serializer, so types are checked here too.
    for name in ("label", "kind", "description", "area"):
        value = fields.get(name)
        if value is not None and not isinstance(value, str) and not (name == "label" and _is_int(value)):
            raise RecordInvalid(f"{name} must be text", field=name, code="invalid-type")
    if "label" in fields or not partial:
        label = normalise_label(fields.get("label") or "")
        if not label:
            raise RecordInvalid("a context needs a number or label", field="label", code="required")
        if len(label) > 64:
            raise RecordInvalid("labels are at most 64 characters", field="label", code="too-long")
        cleaned["label"] = label
    if "kind" in fields or not partial:
        kind = fields.get("kind") or ""
        if kind not in KINDS:
            raise RecordInvalid(
                f"kind must be one of {', '.join(ContextKind.values)}", field="kind", code="invalid-choice"
            )
        cleaned["kind"] = kind
    for name in ("description", "area"):
        if name in fields:
            value = fields[name]
            cleaned[name] = "" if value is None else str(value)
    if cleaned.get("area"):
        cleaned["area"] = normalise_label(cleaned["area"], "area")
    if "area" in cleaned and len(cleaned["area"]) > 64:
        raise RecordInvalid("areas are at most 64 characters", field="area", code="too-long")
    for name in ("top_level", "base_level"):
        if name in fields:
            value = fields[name]
            if value is not None:
                try:
                    value = float(value)
                except (TypeError, ValueError):
                    raise RecordInvalid(f"{name} must be a number", field=name, code="invalid-number") from None
                if not math.isfinite(value):
                    raise RecordInvalid(f"{name} must be finite", field=name, code="invalid-number")
            cleaned[name] = value
    _check_levels(cleaned.get("top_level"), cleaned.get("base_level"))
    return cleaned


def _is_int(value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _check_levels(top, base) -> None:
    if top is not None and base is not None and base > top:
        raise RecordInvalid("the base level lies above the top level", field="base_level", code="levels-inverted")


def _active_context(project: Project, ref, field: str) -> Context:
    """A context of ``project`` by label (string) or id (integer).

    A context of another project is answered exactly as a missing one, so
    the answer tells nobody which ids exist elsewhere.
    """
    qs = Context.objects.filter(project=project, retracted_revision__isnull=True)
    ctx = None
    if isinstance(ref, int) and not isinstance(ref, bool):
        ctx = qs.filter(pk=ref).first()
    elif isinstance(ref, str) and ref.strip():
        ctx = qs.filter(label=normalise_label(ref, field)).first()
    else:
        raise RecordInvalid("name a context by its number or label", field=field, code="required")
    if ctx is None:
        raise RecordInvalid(f"no context {ref!r} in project {project.code}", field=field, code="unknown-context")
    return ctx


def _two_contexts(project: Project, subject_ref, object_ref) -> tuple[Context, Context]:
    """Both ends of a relationship; one query in the usual case (two labels)."""
    refs = (subject_ref, object_ref)
    if all(isinstance(r, str) and r.strip() for r in refs):
        subject_label, object_label = normalise_label(subject_ref, "subject"), normalise_label(object_ref, "object")
        wanted = {subject_label, object_label}
        found = {
            c.label: c
            for c in Context.objects.filter(project=project, retracted_revision__isnull=True, label__in=wanted).order_by()
        }
        if len(found) == len(wanted):
            return found[subject_label], found[object_label]
    return _active_context(project, subject_ref, "subject"), _active_context(project, object_ref, "object")


# -- contexts ----------------------------------------------------------------

def _add_context(changes: ChangeSet, fields: dict, uid) -> WriteResult:
    project = changes.project
    uid = parse_uid(uid)
    cleaned = _clean_context_fields(fields, partial=False)
    if uid is not None:
        existing = Context.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            if any(getattr(existing, k) != v for k, v in cleaned.items()):
                raise RecordConflict(
                    "a different context was already posted with this uid",
                    field="uid", code="uid-reused", existing_id=existing.id,
                )
            return WriteResult(existing, False, project.revision)
    if Context.objects.filter(project=project, label=cleaned["label"], retracted_revision__isnull=True).exists():
        raise RecordConflict(
            f"context {cleaned['label']} already exists in project {project.code}", field="label", code="duplicate-label"
        )
    ctx = Context.objects.create(
        project=project, uid=uid or uuid_module.uuid4(), created_revision=changes.revision, **cleaned
    )
    changes.created("context", ctx, context_data(ctx), repr_=ctx.label)
    # Keeping the order current here means the next relationship post finds it
    # at the latest revision and need not catch up from the log.
    _order(changes).add_context(ctx.id)
    return WriteResult(ctx, True, changes.revision)


def add_context(project: Project, actor: Actor, *, uid=None, **fields) -> WriteResult:
    """Record a new context.  Re-posting the same ``uid`` returns the existing one."""
    with record_change(project, actor) as changes:
        result = _add_context(changes, fields, uid)
    return WriteResult(result.object, result.created, project.revision)


def edit_context(project: Project, actor: Actor, context_id: int, changes_: dict, *, message: str = "") -> WriteResult:
    """Change a context's attributes; the old values stay readable at past revisions."""
    with record_change(project, actor) as changes:
        ctx = Context.objects.select_for_update().filter(project=changes.project, pk=context_id).first()
        if ctx is None:
            raise RecordNotFound(f"no context {context_id} in project {project.code}")
        if not ctx.is_active:
            raise RecordConflict("a retracted context cannot be edited", code="retracted")
        cleaned = _clean_context_fields(changes_, partial=True)
        # A partial edit must agree with the level it leaves unchanged.
        _check_levels(cleaned.get("top_level", ctx.top_level), cleaned.get("base_level", ctx.base_level))
        if "label" in cleaned and cleaned["label"] != ctx.label:
            clash = Context.objects.filter(
                project=changes.project, label=cleaned["label"], retracted_revision__isnull=True
            ).exclude(pk=ctx.pk)
            if clash.exists():
                raise RecordConflict(f"context {cleaned['label']} already exists", field="label", code="duplicate-label")
        before = context_data(ctx)
        for key, value in cleaned.items():
            setattr(ctx, key, value)
        after = context_data(ctx)
        if after != before:
            ctx.save()
            changes.edited("context", ctx, before, after, repr_=ctx.label, message=message)
    return WriteResult(ctx, False, project.revision)


def retract_context(project: Project, actor: Actor, context_id: int, *, reason: str) -> WriteResult:
    """Retract a context and, in the same revision, every active relationship it has."""
    reason = (reason or "").strip()
    if not reason:
        raise RecordInvalid("a retraction needs a reason", field="reason", code="required")
    with record_change(project, actor) as changes:
        ctx = Context.objects.select_for_update().filter(project=changes.project, pk=context_id).first()
        if ctx is None:
            raise RecordNotFound(f"no context {context_id} in project {project.code}")
        if not ctx.is_active:
            return WriteResult(ctx, False, project.revision)
        linked = Relationship.objects.filter(project=changes.project, retracted_revision__isnull=True).filter(
            Q(later_id=ctx.pk) | Q(earlier_id=ctx.pk)
        )
        for rel in linked.select_related("later", "earlier"):
            _retract_relationship(changes, rel, f"context {ctx.label} retracted: {reason}")
        # Apps above the record (evidence) retract what hangs on the context, in the same revision.
        context_retracting.send(sender=Context, changes=changes, context=ctx, reason=reason)
        before = context_data(ctx)
        ctx.retracted_revision = changes.revision
        ctx.retraction_reason = reason
        ctx.save(update_fields=["retracted_revision", "retraction_reason"])
        changes.retracted("context", ctx, before, repr_=ctx.label, reason=reason)
    return WriteResult(ctx, False, project.revision)


# -- relationships -----------------------------------------------------------

def _cycle_body(steps, labels: dict[int, str]) -> list[dict]:
    """The cycle as the API shows it: each step's ``to`` is the next step's ``from``."""
    return [
        {
            "id": step.relationship_id,
            "type": step.type,
            "from": labels[step.from_context],
            "to": labels[step.to_context],
            "proposed": step.relationship_id is None,
            "relationship": relationship_text(step.type, labels[step.from_context], labels[step.to_context]),
        }
        for step in steps
    ]


def relationship_fields(data: dict, **details) -> tuple[str, str, str, uuid_module.UUID | None]:
    """(wording, certainty, note, uid) of a relationship as posted, checked; ``details`` go into a refusal."""
    wording = data.get("type")
    if wording not in _WORDING_SET:
        raise RecordInvalid(f"type must be one of {', '.join(WORDINGS)}", field="type", code="invalid-choice",
                            **details)
    certainty = data.get("certainty") or Certainty.CERTAIN
    if certainty not in CERTAINTIES:
        raise RecordInvalid("certainty must be 'certain' or 'uncertain'", field="certainty", code="invalid-choice",
                            **details)
    note = data.get("note") or ""
    if not isinstance(note, str):
        raise RecordInvalid("note must be text", field="note", code="invalid-type", **details)
    return wording, certainty, note, parse_uid(data.get("uid"))


def _add_relationship(changes: ChangeSet, data: dict) -> WriteResult:
    project = changes.project
    wording, certainty, note, uid = relationship_fields(data)
    subject, obj = _two_contexts(project, data.get("subject"), data.get("object"))
    if subject.pk == obj.pk:
        raise RecordInvalid(f"context {subject.label} cannot be related to itself", field="object", code="self-relationship")
    type_, later_id, earlier_id = canonical_relationship(subject.pk, wording, obj.pk)
    labels = {subject.pk: subject.label, obj.pk: obj.label}
    ends = {subject.pk: subject, obj.pk: obj}

    if uid is not None:
        existing = Relationship.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            same = (existing.type, existing.later_id, existing.earlier_id, existing.certainty) == (
                type_, later_id, earlier_id, certainty
            )
            if not same:
                raise RecordConflict(
                    "a different relationship was already posted with this uid",
                    field="uid", code="uid-reused", existing_id=existing.id,
                )
            return WriteResult(existing, False, project.revision)

    # One query finds both a duplicate and an inverse between the same two contexts.
    between = list(
        Relationship.objects.filter(project=project, retracted_revision__isnull=True)
        .filter(Q(later_id=later_id, earlier_id=earlier_id) | Q(later_id=earlier_id, earlier_id=later_id))
        .order_by("id")
    )
    for duplicate in between:
        same_way = (duplicate.later_id, duplicate.earlier_id) == (later_id, earlier_id)
        duplicate.later, duplicate.earlier = ends[duplicate.later_id], ends[duplicate.earlier_id]
        if duplicate.type == type_ and (same_way or type_ in EQUALITY_TYPES):
            if duplicate.certainty != certainty:
                raise RecordConflict(
                    f"{relationship_text(type_, labels[later_id], labels[earlier_id])} is already recorded as "
                    f"{duplicate.certainty}; retract it to change its certainty",
                    field="certainty", code="duplicate-differs", existing_id=duplicate.id,
                )
            return WriteResult(duplicate, False, project.revision)
    if type_ in ORDERED_TYPES:
        for inverse in between:
            if inverse.type in ORDERED_TYPES and (inverse.later_id, inverse.earlier_id) == (earlier_id, later_id):
                raise RecordConflict(
                    f"the inverse is already recorded: "
                    f"{relationship_text(inverse.type, labels[inverse.later_id], labels[inverse.earlier_id])}",
                    field="type", code="inverse-recorded", existing_id=inverse.id,
                    existing={"id": inverse.id, "type": inverse.type, "later": labels[inverse.later_id],
                              "earlier": labels[inverse.earlier_id]},
                )

    order = _order(changes)
    order.add_context(later_id)
    order.add_context(earlier_id)
    proposal = RelationshipData(id=None, type=type_, later=later_id, earlier=earlier_id, certain=certainty == "certain")
    cycle = order.find_cycle(proposal)
    if cycle is not None:
        ids = {c for step in cycle for c in (step.from_context, step.to_context)}
        labels.update(dict(Context.objects.filter(pk__in=ids).values_list("id", "label")))
        code = "cycle" if type_ in ORDERED_TYPES else "equality-contradicts-order"
        text = relationship_text(type_, labels[later_id], labels[earlier_id])
        raise RecordConflict(
            f"{text} would make the temporal order cyclic",
            field="type", code=code, cycle=_cycle_body(cycle, labels),
        )

    rel = Relationship.objects.create(
        project=project,
        uid=uid or uuid_module.uuid4(),
        type=type_,
        later=ends[later_id],
        earlier=ends[earlier_id],
        certainty=certainty,
        recorded_as=wording,
        note=note,
        created_revision=changes.revision,
    )
    order.add(RelationshipData(id=rel.id, type=type_, later=later_id, earlier=earlier_id, certain=proposal.certain))
    changes.created("relationship", rel, relationship_data(rel), repr_=relationship_text(type_, labels[later_id], labels[earlier_id]))
    return WriteResult(rel, True, changes.revision)


def add_relationship(project: Project, actor: Actor, **data) -> WriteResult:
    """Record "subject <type> object" after checking it against the whole record.

    ``data``: ``subject`` and ``object`` (context labels or ids), ``type``
    (any wording in ``WORDINGS``; inverse wordings are stored canonically),
    ``certainty``, ``note``, ``uid``.  Posting the same relationship again is
    a no-op returning the existing one.  Refused with ``RecordConflict``
    (code ``cycle`` and the cycle as recorded relationships) if it would make
    the temporal order cyclic once certain "same as"/"bonded with" are merged.
    """
    try:
        with record_change(project, actor) as changes:
            result = _add_relationship(changes, data)
    except IntegrityError as exc:  # a concurrent post of the same uid
        raise RecordConflict("the relationship was posted concurrently; retry", code="concurrent-write") from exc
    return WriteResult(result.object, result.created, project.revision)


def _retract_relationship(changes: ChangeSet, rel: Relationship, reason: str) -> None:
    before = relationship_data(rel)
    rel.retracted_revision = changes.revision
    rel.retraction_reason = reason
    rel.save(update_fields=["retracted_revision", "retraction_reason"])
    order = getattr(changes, "_order", None)
    if order is not None and not order.remove(rel.id):
        changes._order = order_cache.build_order(changes.project)
    changes.retracted(
        "relationship", rel, before, repr_=relationship_text(rel.type, rel.later.label, rel.earlier.label), reason=reason
    )


def retract_relationship(project: Project, actor: Actor, relationship_id: int, *, reason: str) -> WriteResult:
    """Retract a relationship with a reason, in a new revision."""
    reason = (reason or "").strip()
    if not reason:
        raise RecordInvalid("a retraction needs a reason", field="reason", code="required")
    with record_change(project, actor) as changes:
        rel = (
            Relationship.objects.select_for_update()
            .select_related("later", "earlier")
            .filter(project=changes.project, pk=relationship_id)
            .first()
        )
        if rel is None:
            raise RecordNotFound(f"no relationship {relationship_id} in project {project.code}")
        if rel.is_active:
            _retract_relationship(changes, rel, reason)
    return WriteResult(rel, False, project.revision)
