"""Many new record objects in one change set, checked as a set: the write path for large loads.

An import of a whole project, a register or a benchmark site adds thousands
of contexts and relationships in one revision; one ``_add_context`` or
``_add_relationship`` per object costs several queries each.  These
functions apply exactly the same rules (the same field cleaning, label and
uid uniqueness, no duplicate or inverse relationship, the same write-time
order check against the whole record) with a handful of queries for the
whole set, and write the same rows, states and change-log entries, in the
same order, as the one-at-a-time functions would.  Unlike them they never
treat a repeat as idempotent: a uid or label already used is a conflict.
Anything refused raises, and ``record_change`` then writes nothing.
"""

from __future__ import annotations

import uuid as uuid_module

from django.db.models import Q

from chronology.engine.record_data import EQUALITY_TYPES, ORDERED_TYPES, RelationshipData, canonical_relationship
from projects.models import Context, Relationship

from .changes import ChangeSet
from .errors import RecordConflict, RecordInvalid
from .representation import context_data, relationship_data, relationship_text
from .writes import _clean_context_fields, _cycle_body, _order, normalise_label, parse_uid, relationship_fields

__all__ = ["add_contexts", "add_relationships"]

BATCH = 2000


def add_contexts(changes: ChangeSet, items) -> list[Context]:
    """Add ``items`` — (fields, uid or None) pairs — as new contexts, in order."""
    project = changes.project
    rows = []
    for n, (fields, uid) in enumerate(items):
        cleaned = _clean_context_fields(fields, partial=False)
        rows.append((n, cleaned, parse_uid(uid)))
    uids = [uid for _n, _c, uid in rows if uid is not None]
    labels = [c["label"] for _n, c, _u in rows]
    if len(set(labels)) != len(labels):
        twice = next(label for label in labels if labels.count(label) > 1)
        raise RecordConflict(f"context {twice} is added twice", field="label", code="duplicate-label")
    for chunk in _chunks(uids):
        used = Context.objects.filter(project=project, uid__in=chunk).values_list("uid", flat=True).first()
        if used is not None:
            raise RecordConflict("a context was already posted with this uid", field="uid", code="uid-reused",
                                 uid=str(used))
    for chunk in _chunks(labels):
        taken = Context.objects.filter(project=project, label__in=chunk, retracted_revision__isnull=True).values_list(
            "label", flat=True).first()
        if taken is not None:
            raise RecordConflict(f"context {taken} already exists in project {project.code}", field="label",
                                 code="duplicate-label")
    made = Context.objects.bulk_create(
        [Context(project=project, uid=uid or uuid_module.uuid4(), created_revision=changes.revision, **cleaned)
         for _n, cleaned, uid in rows], batch_size=BATCH)
    order = _order(changes)
    for ctx in made:
        changes.created("context", ctx, context_data(ctx), repr_=ctx.label)
        order.add_context(ctx.id)
    return made


def add_relationships(changes: ChangeSet, items) -> list[Relationship]:
    """Add ``items`` (dicts as for ``_add_relationship``: subject, type, object, certainty, note, uid), in order.

    Subjects and objects are context ids or labels of active contexts.
    """
    project = changes.project
    items = list(items)
    ids = {i[k] for i in items for k in ("subject", "object") if isinstance(i.get(k), int)}
    names = {normalise_label(i[k]) for i in items for k in ("subject", "object") if isinstance(i.get(k), str)}
    active = Context.objects.filter(project=project, retracted_revision__isnull=True)
    by_id, by_label = {}, {}
    for chunk in _chunks(sorted(ids)):
        by_id.update({c.id: c for c in active.filter(pk__in=chunk)})
    for chunk in _chunks(sorted(names)):
        by_label.update({c.label: c for c in active.filter(label__in=chunk)})
    contexts = {**by_id, **{c.id: c for c in by_label.values()}}
    rows, uids = [], []
    for n, data in enumerate(items):
        wording, certainty, note, uid = relationship_fields(data, index=n)
        ends = []
        for field in ("subject", "object"):
            ref = data.get(field)
            ctx = by_id.get(ref) if isinstance(ref, int) else by_label.get(normalise_label(ref or ""))
            if ctx is None:
                raise RecordInvalid(f"no context {ref!r} in project {project.code}", field=field,
                                    code="unknown-context", index=n)
            ends.append(ctx)
        subject, obj = ends
        if subject.pk == obj.pk:
            raise RecordInvalid(f"context {subject.label} cannot be related to itself", field="object",
                                code="self-relationship", index=n)
        type_, later, earlier = canonical_relationship(subject.pk, wording, obj.pk)
        if uid is not None:
            uids.append(uid)
        rows.append((n, type_, later, earlier, wording, certainty, note, uid))
    for chunk in _chunks(uids):
        used = Relationship.objects.filter(project=project, uid__in=chunk).values_list("uid", flat=True).first()
        if used is not None:
            raise RecordConflict("a relationship was already posted with this uid", field="uid", code="uid-reused",
                                 uid=str(used))
    _check_pairs(project, rows, contexts)
    # Rows first (their ids name them in the order); a refusal below rolls them back with the change set.
    made = Relationship.objects.bulk_create(
        [Relationship(project=project, uid=uid or uuid_module.uuid4(), type=type_, later=contexts[later],
                      earlier=contexts[earlier], certainty=certainty, recorded_as=wording, note=note,
                      created_revision=changes.revision)
         for _n, type_, later, earlier, wording, certainty, note, uid in rows], batch_size=BATCH)
    order = _order(changes)
    labels = {pk: c.label for pk, c in contexts.items()}
    for (n, type_, later, earlier, *_rest), rel in zip(rows, made):
        order.add_context(later)
        order.add_context(earlier)
        proposal = RelationshipData(id=None, type=type_, later=later, earlier=earlier,
                                    certain=rel.certainty == "certain")
        cycle = order.find_cycle(proposal)
        if cycle is not None:
            known = {c for step in cycle for c in (step.from_context, step.to_context)} - set(labels)
            labels.update(dict(Context.objects.filter(pk__in=known).values_list("id", "label")))
            code = "cycle" if type_ in ORDERED_TYPES else "equality-contradicts-order"
            raise RecordConflict(f"{relationship_text(type_, labels[later], labels[earlier])} would make the "
                                 "temporal order cyclic", field="type", code=code, index=n,
                                 cycle=_cycle_body(cycle, labels))
        order.add(RelationshipData(id=rel.id, type=type_, later=later, earlier=earlier, certain=proposal.certain))
        changes.created("relationship", rel, relationship_data(rel),
                        repr_=relationship_text(type_, labels[later], labels[earlier]))
    return made


def _check_pairs(project, rows, contexts) -> None:
    """No relationship twice, and no inverse of an ordered one, in the batch or against the record.

    As one at a time: the same type between the same two contexts (either way for an equality) is a
    duplicate; another ordered type the same way is allowed; an ordered one the other way is an inverse.
    """
    seen: dict[tuple, int] = {}
    ordered: dict[tuple, int] = {}
    for n, type_, later, earlier, *_rest in rows:
        if _key(type_, later, earlier) in seen:
            raise RecordConflict(f"{_text(type_, later, earlier, contexts)} is added twice", field="type",
                                 code="duplicate", index=n)
        if type_ in ORDERED_TYPES and (earlier, later) in ordered:
            raise RecordConflict(f"the inverse of {_text(type_, later, earlier, contexts)} is added too",
                                 field="type", code="inverse-recorded", index=n)
        seen[_key(type_, later, earlier)] = n
        if type_ in ORDERED_TYPES:
            ordered[(later, earlier)] = n
    ends = sorted({c for _n, _t, later, earlier, *_r in rows for c in (later, earlier)})
    existing = Relationship.objects.filter(project=project, retracted_revision__isnull=True)
    for chunk in _chunks(ends):
        for r in existing.filter(Q(later_id__in=chunk) | Q(earlier_id__in=chunk)).only(
                "id", "type", "later_id", "earlier_id"):
            key = _key(r.type, r.later_id, r.earlier_id)
            if key in seen:
                raise RecordConflict(f"{_text(r.type, r.later_id, r.earlier_id, contexts)} is already recorded",
                                     field="type", code="duplicate", index=seen[key], existing_id=r.id)
            if r.type in ORDERED_TYPES and (r.earlier_id, r.later_id) in ordered:
                raise RecordConflict("the inverse is already recorded", field="type", code="inverse-recorded",
                                     index=ordered[(r.earlier_id, r.later_id)], existing_id=r.id)


def _key(type_: str, later: int, earlier: int) -> tuple:
    if type_ in EQUALITY_TYPES:
        return (type_, min(later, earlier), max(later, earlier))
    return (type_, later, earlier)


def _text(type_, later, earlier, contexts) -> str:
    name = {pk: c.label for pk, c in contexts.items()}
    return relationship_text(type_, name.get(later, str(later)), name.get(earlier, str(earlier)))


def _chunks(values, size: int = BATCH):
    values = list(values)
    for i in range(0, len(values), size):
        yield values[i:i + size]
