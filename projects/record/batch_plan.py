"""Planning a sync batch against a snapshot of the record, without the project's lock.

A batch of thousands of items used to be checked item by item inside the
project's write lock, three or four queries an item, so one tablet's batch
held every other writer of the project for a minute.  Here the whole batch is
checked against one consistent snapshot (the record at revision ``R0`` and a
private copy of the write-time order) with a handful of bulk queries and the
order check in memory.  The result, a ``BatchPlan``, says for every item
whether it is new, already stored, or refused and why, with exactly the
outcomes and error bodies the single-item path gives (``writes``).

``sync`` then applies the plan in one short locked step.  If other writes
landed after ``R0`` it asks ``BatchPlan.still_holds`` whether any of them
touches what the batch names; if so the batch is planned again under the
lock, otherwise only the order check is repeated as the edges are added.
"""

from __future__ import annotations

import uuid as uuid_module
from dataclasses import dataclass, field
from types import SimpleNamespace

from django.db.models import Q

from chronology.engine.record_data import EQUALITY_TYPES, ORDERED_TYPES, RelationshipData, canonical_relationship
from projects.models import Context, Project, Relationship

from .errors import RecordConflict, RecordError, RecordInvalid
from .representation import relationship_text
from .writes import _clean_context_fields, _cycle_body, normalise_label, parse_uid, relationship_fields


@dataclass
class PlannedContext:
    index: int
    uid: uuid_module.UUID
    fields: dict
    placeholder: int  # negative: stands for the id the row gets when it is written


@dataclass
class PlannedRelationship:
    index: int
    uid: uuid_module.UUID
    type: str
    later: int  # context id, or a PlannedContext placeholder
    earlier: int
    certainty: str
    recorded_as: str
    note: str
    placeholder: int


@dataclass(frozen=True)
class Repeat:
    """An item that repeats an earlier new item of the same batch (same uid, or the same relationship)."""

    of: object


@dataclass
class BatchPlan:
    """What a batch will do, item by item, as checked at ``revision``."""

    revision: int
    #: Per collection, in the batch's order: a Planned* (new), a Repeat, or an existing model object.
    contexts: list = field(default_factory=list)
    relationships: list = field(default_factory=list)
    errors: list[dict] = field(default_factory=list)
    labels: dict[int, str] = field(default_factory=dict)  # every context id/placeholder named
    #: What the batch depends on, for ``still_holds``.
    uids: set[str] = field(default_factory=set)
    label_set: set[str] = field(default_factory=set)
    context_ids: set[int] = field(default_factory=set)

    @property
    def new_contexts(self) -> list[PlannedContext]:
        return [c for c in self.contexts if isinstance(c, PlannedContext)]

    @property
    def new_relationships(self) -> list[PlannedRelationship]:
        return [r for r in self.relationships if isinstance(r, PlannedRelationship)]

    def still_holds(self, entries) -> bool:
        """Whether the record changes in ``entries`` (change log rows after ``revision``) leave the plan valid.

        Only the order check is left to repeat: a relationship logged since
        may close a cycle together with the batch's own, which the apply step
        finds as it adds them.
        """
        for kind, before, after in entries:
            for data in (before, after):
                if not data:
                    continue
                if data.get("uid") in self.uids:
                    return False
                if kind == "context" and (data.get("label") in self.label_set or data.get("id") in self.context_ids):
                    return False
                if kind == "relationship" and (
                    data.get("later_id") in self.context_ids and data.get("earlier_id") in self.context_ids
                ):
                    return False
            if kind == "relationship" and before and not after:
                return False  # a retraction may turn a stored duplicate into a new item
        return True


def plan_batch(project: Project, order, contexts: list, relationships: list) -> BatchPlan:
    """Check every item against the record at ``project.revision`` and ``order`` (a private copy).

    ``order`` is mutated: the batch's own contexts and relationships are
    added to it (under placeholder ids) so that later items are checked
    against earlier ones, as the single-item path would.
    """
    plan = BatchPlan(revision=project.revision)
    _Planner(project, order, plan).run(contexts, relationships)
    return plan


class _Planner:
    def __init__(self, project: Project, order, plan: BatchPlan) -> None:
        self.project, self.order, self.plan = project, order, plan
        self.next_placeholder = -1
        self.by_label: dict[str, object] = {}  # active label -> existing Context or PlannedContext
        self.by_id: dict[int, Context] = {}
        self.context_uids: dict[uuid_module.UUID, object] = {}
        self.relationship_uids: dict[uuid_module.UUID, object] = {}
        self.between: dict[frozenset, list] = {}  # active relationships per pair of ends

    def _placeholder(self) -> int:
        value, self.next_placeholder = self.next_placeholder, self.next_placeholder - 1
        return value

    def run(self, contexts: list, relationships: list) -> None:
        self._load(contexts, relationships)
        for index, item in enumerate(contexts):
            self._guarded("contexts", index, item, self._context)
        for index, item in enumerate(relationships):
            self._guarded("relationships", index, item, self._relationship)

    def _guarded(self, collection: str, index: int, item, step) -> None:
        try:
            outcome = step(index, item)
        except RecordError as exc:
            uid = item.get("uid") if isinstance(item, dict) else None
            self.plan.errors.append({"collection": collection, "index": index, "uid": uid, **exc.as_error()})
            return
        getattr(self.plan, collection).append(outcome)

    # -- one round of bulk reads ------------------------------------------------
    def _load(self, contexts: list, relationships: list) -> None:
        project = self.project
        uids, labels, ids = set(), set(), set()
        for item in contexts:
            if isinstance(item, dict):
                uids.add(_uid_or_none(item.get("uid")))
                if isinstance(item.get("label"), (str, int)):
                    labels.add(_label_or_none(item["label"]))
        rel_uids = set()
        for item in relationships:
            if isinstance(item, dict):
                rel_uids.add(_uid_or_none(item.get("uid")))
                for end in (item.get("subject"), item.get("object")):
                    if isinstance(end, int) and not isinstance(end, bool):
                        ids.add(end)
                    elif isinstance(end, str):
                        labels.add(_label_or_none(end))
        uids.discard(None), labels.discard(None), rel_uids.discard(None)
        # Plain rows, not model instances: a batch names thousands of stored objects.
        active = Context.objects.filter(project=project, retracted_revision__isnull=True)
        found = _rows(active.filter(Q(label__in=labels) | Q(pk__in=ids)), _CONTEXT_COLUMNS)
        for ctx in found:
            self.by_label[ctx.label] = ctx
            self.by_id[ctx.pk] = ctx
        for ctx in _rows(Context.objects.filter(project=project, uid__in=uids), _CONTEXT_COLUMNS):
            self.context_uids[ctx.uid] = ctx
        for rel in _rows(Relationship.objects.filter(project=project, uid__in=rel_uids), _RELATIONSHIP_COLUMNS):
            self.relationship_uids[rel.uid] = rel
        named = [c.pk for c in found]
        rels = Relationship.objects.filter(
            project=project, retracted_revision__isnull=True, later_id__in=named, earlier_id__in=named
        )
        for rel in _rows(rels, _RELATIONSHIP_COLUMNS):
            self.between.setdefault(frozenset((rel.later_id, rel.earlier_id)), []).append(rel)
        self.plan.uids = {str(u) for u in uids | rel_uids}
        self.plan.label_set = set(labels)
        self.plan.context_ids = set(self.by_id)

    # -- contexts -----------------------------------------------------------------
    def _context(self, index: int, item) -> object:
        if not isinstance(item, dict):
            raise RecordInvalid("each context must be an object", code="invalid")
        uid = parse_uid(item.get("uid"))
        cleaned = _clean_context_fields({k: v for k, v in item.items() if k != "uid"}, partial=False)
        if uid is not None and uid in self.context_uids:
            existing = self.context_uids[uid]
            stored = existing.fields if isinstance(existing, PlannedContext) else {
                k: getattr(existing, k) for k in cleaned
            }
            if any(stored.get(k) != v for k, v in cleaned.items()):
                raise RecordConflict(
                    "a different context was already posted with this uid",
                    field="uid", code="uid-reused", existing_id=_public_id(existing),
                )
            return _found(existing)
        if cleaned["label"] in self.by_label:
            raise RecordConflict(
                f"context {cleaned['label']} already exists in project {self.project.code}",
                field="label", code="duplicate-label",
            )
        planned = PlannedContext(index, uid or uuid_module.uuid4(), cleaned, self._placeholder())
        self.by_label[cleaned["label"]] = planned
        self.context_uids[planned.uid] = planned
        self.plan.labels[planned.placeholder] = cleaned["label"]
        self.order.add_context(planned.placeholder)
        return planned

    # -- relationships --------------------------------------------------------
    def _end(self, ref, field: str) -> tuple[int, str]:
        if isinstance(ref, int) and not isinstance(ref, bool):
            ctx = self.by_id.get(ref)
        elif isinstance(ref, str) and ref.strip():
            ctx = self.by_label.get(normalise_label(ref, field))
        else:
            raise RecordInvalid("name a context by its number or label", field=field, code="required")
        if ctx is None:
            raise RecordInvalid(f"no context {ref!r} in project {self.project.code}", field=field, code="unknown-context")
        if isinstance(ctx, PlannedContext):
            return ctx.placeholder, ctx.fields["label"]
        return ctx.pk, ctx.label

    def _relationship(self, index: int, data) -> object:
        if not isinstance(data, dict):
            raise RecordInvalid("each relationship must be an object", code="invalid")
        wording, certainty, note, uid = relationship_fields(data)
        (subject, subject_label), (obj, object_label) = self._end(data.get("subject"), "subject"), self._end(
            data.get("object"), "object"
        )
        if subject == obj:
            raise RecordInvalid(f"context {subject_label} cannot be related to itself", field="object",
                                code="self-relationship")
        type_, later, earlier = canonical_relationship(subject, wording, obj)
        labels = self.plan.labels
        labels[subject], labels[obj] = subject_label, object_label
        if uid is not None and uid in self.relationship_uids:
            existing = self.relationship_uids[uid]
            if _relationship_key(existing) != (type_, later, earlier, certainty):
                raise RecordConflict(
                    "a different relationship was already posted with this uid",
                    field="uid", code="uid-reused", existing_id=_public_id(existing),
                )
            return _found(existing)
        pair = frozenset((later, earlier))
        between = self.between.get(pair, [])
        for duplicate in between:
            d_type, d_later, d_earlier, d_certainty = _relationship_key(duplicate)
            if d_type == type_ and ((d_later, d_earlier) == (later, earlier) or type_ in EQUALITY_TYPES):
                if d_certainty != certainty:
                    raise RecordConflict(
                        f"{relationship_text(type_, labels[later], labels[earlier])} is already recorded as "
                        f"{d_certainty}; retract it to change its certainty",
                        field="certainty", code="duplicate-differs", existing_id=_public_id(duplicate),
                    )
                return _found(duplicate)
        if type_ in ORDERED_TYPES:
            for inverse in between:
                i_type, i_later, i_earlier, _ = _relationship_key(inverse)
                if i_type in ORDERED_TYPES and (i_later, i_earlier) == (earlier, later):
                    raise RecordConflict(
                        f"the inverse is already recorded: {relationship_text(i_type, labels[i_later], labels[i_earlier])}",
                        field="type", code="inverse-recorded", existing_id=_public_id(inverse),
                        existing={"id": _public_id(inverse), "type": i_type, "later": labels[i_later],
                                  "earlier": labels[i_earlier]},
                    )
        proposal = RelationshipData(id=None, type=type_, later=later, earlier=earlier, certain=certainty == "certain")
        self.order.add_context(later)
        self.order.add_context(earlier)
        cycle = self.order.find_cycle(proposal)
        if cycle is not None:
            raise self._cycle_error(cycle, type_, later, earlier)
        planned = PlannedRelationship(
            index, uid or uuid_module.uuid4(), type_, later, earlier, certainty, wording, note, self._placeholder()
        )
        self.order.add(RelationshipData(id=planned.placeholder, type=type_, later=later, earlier=earlier,
                                        certain=proposal.certain))
        self.relationship_uids[planned.uid] = planned
        self.between.setdefault(pair, []).append(planned)
        return planned

    def _cycle_error(self, cycle, type_: str, later: int, earlier: int) -> RecordConflict:
        labels = self.plan.labels
        missing = {c for step in cycle for c in (step.from_context, step.to_context)} - set(labels)
        labels.update(dict(Context.objects.filter(pk__in=missing).values_list("id", "label")))
        body = _cycle_body(cycle, labels)
        for step, shown in zip(cycle, body):
            if step.relationship_id is not None and step.relationship_id < 0:  # an earlier item of this batch
                shown.update(id=None, proposed=False, in_batch=True)
        code = "cycle" if type_ in ORDERED_TYPES else "equality-contradicts-order"
        text = relationship_text(type_, labels[later], labels[earlier])
        return RecordConflict(f"{text} would make the temporal order cyclic", field="type", code=code, cycle=body)


_CONTEXT_COLUMNS = ("id", "uid", "label", "kind", "description", "area", "top_level", "base_level")
_RELATIONSHIP_COLUMNS = ("id", "uid", "type", "later_id", "earlier_id", "certainty")


class _Stored(SimpleNamespace):
    """A stored row as the plan needs it (attributes as on the model, ``pk`` included)."""

    @property
    def pk(self):
        return self.id


def _rows(queryset, columns) -> list[_Stored]:
    return [_Stored(**dict(zip(columns, values))) for values in queryset.order_by("id").values_list(*columns)]


def _found(obj):
    return Repeat(obj) if isinstance(obj, (PlannedContext, PlannedRelationship)) else obj


def _relationship_key(rel) -> tuple:
    if isinstance(rel, PlannedRelationship):
        return rel.type, rel.later, rel.earlier, rel.certainty
    return rel.type, rel.later_id, rel.earlier_id, rel.certainty


def _public_id(obj):
    return None if isinstance(obj, (PlannedContext, PlannedRelationship)) else obj.pk


def _uid_or_none(value):
    try:
        return parse_uid(value)
    except RecordInvalid:
        return None


def _label_or_none(value):
    try:
        return normalise_label(value)
    except RecordInvalid:
        return None


__all__ = ["BatchPlan", "PlannedContext", "PlannedRelationship", "Repeat", "plan_batch"]
