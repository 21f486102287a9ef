"""A register checked against a project's record (the dry run), and committed as one revision.

The dry run reads the record as it is, adds the register's new contexts and
then its relationships one at a time, in row order, to the record's own
write-time order check (``chronology.engine.incremental``): a relationship
that would close a cycle is a contradiction, reported with the cycle (each
step named by its register row, or as already recorded) and left out so
that every further contradiction is found too.  Contexts already in the
record with the same attributes, and relationships already recorded, are
unchanged — so importing the same file again changes nothing.

The commit runs the dry run again inside the transaction and, if nothing
was refused, writes every new context and relationship through the record's
one write path (``projects.record.bulk``, the same rules as one at a time)
in ONE change set, so the whole register is one record revision or nothing.
"""

from __future__ import annotations

from django.db import transaction

from chronology.engine.incremental import IncrementalOrder
from chronology.engine.record_data import EQUALITY_TYPES, ORDERED_TYPES, RelationshipData, canonical_relationship
from projects.models import Context, Project, Relationship
from projects.record import bulk, writes
from projects.record.changes import record_change
from projects.record.errors import RecordConflict, RecordError
from projects.record.representation import relationship_text

from .layout import Planned, Problem, plan
from .reading import read_register

MAX_LISTED = 500


class RegisterRefused(RecordConflict):
    """The register has refused rows or contradictions; ``details`` lists them all."""

    code = "register-refused"


def _report(planned: Planned, new_contexts, unchanged_contexts, new_rels, unchanged_rels, contradictions) -> dict:
    problems = [p.as_dict() for p in planned.problems]
    return {
        "layout": planned.layout,
        "ok": not problems and not contradictions,
        "contexts": {"new": len(new_contexts), "unchanged": unchanged_contexts},
        "relationships": {"new": len(new_rels), "unchanged": unchanged_rels},
        "refused": problems[:MAX_LISTED],
        "refused_count": len(problems),
        "contradictions": contradictions[:MAX_LISTED],
        "contradiction_count": len(contradictions),
    }


def check(project: Project, planned: Planned) -> tuple[dict, list, list]:
    """The dry run: (report, contexts to add, relationships to add)."""
    active = {c.label: c for c in Context.objects.filter(project=project, retracted_revision__isnull=True)}
    labels = {c.id: c.label for c in active.values()}
    new_contexts, seen, unchanged_contexts = [], {}, 0
    for row, fields in planned.contexts:
        label = writes.normalise_label(fields["label"])
        fields = {**fields, "label": label}
        if label in seen:
            if seen[label] != fields:
                planned.problems.append(Problem(row, "label", "duplicate-label",
                                                f"context {label} is also on another row, with other attributes"))
            continue
        seen[label] = fields
        existing = active.get(label)
        if existing is None:
            new_contexts.append((row, fields))
            continue
        differs = [k for k in ("kind", "description", "area") if (getattr(existing, k) or "") != fields[k]]
        if differs:
            planned.problems.append(Problem(row, differs[0], "differs-from-record", f"context {label} is recorded "
                                            f"with another {', '.join(differs)}; edit it in the record instead"))
        else:
            unchanged_contexts += 1

    # Ids for the new contexts: negative, so they never meet a row id.
    ids = {label: c.id for label, c in active.items()}
    for n, (_row, fields) in enumerate(new_contexts, start=1):
        ids[fields["label"]] = -n
        labels[-n] = fields["label"]
    order = IncrementalOrder.build(
        list(labels), [RelationshipData(id=r.id, type=r.type, later=r.later_id, earlier=r.earlier_id,
                                        certain=r.certainty == "certain")
                       for r in Relationship.objects.filter(project=project, retracted_revision__isnull=True)])
    recorded = {(r.type, r.later_id, r.earlier_id): r.certainty
                for r in Relationship.objects.filter(project=project, retracted_revision__isnull=True)}
    rows_of: dict[int, int] = {}  # planned relationship id -> register row
    new_rels, unchanged_rels, contradictions = [], 0, []
    for n, (row, data) in enumerate(planned.relationships, start=1):
        unknown = [f for f in ("subject", "object") if writes.normalise_label(data[f]) not in ids]
        if unknown:
            planned.problems.append(Problem(row, unknown[0], "unknown-context", f"context {data[unknown[0]]} is "
                                            "neither in the register nor in the record"))
            continue
        a, b = ids[writes.normalise_label(data["subject"])], ids[writes.normalise_label(data["object"])]
        if a == b:
            planned.problems.append(Problem(row, "object", "self-relationship", f"{data['subject']} is related to "
                                            "itself"))
            continue
        type_, later, earlier = canonical_relationship(a, data["type"], b)
        key = (type_, later, earlier)
        twin = (type_, earlier, later) if type_ in EQUALITY_TYPES else None
        if key in recorded or (twin and twin in recorded):
            if recorded.get(key, recorded.get(twin)) != data["certainty"]:
                text = relationship_text(type_, labels[later], labels[earlier])
                planned.problems.append(Problem(row, "certainty", "duplicate-differs",
                                                f"{text} is recorded with another certainty"))
            else:
                unchanged_rels += 1
            continue
        if type_ in ORDERED_TYPES and (type_, earlier, later) in recorded:
            contradictions.append(_contradiction(row, type_, later, earlier, labels, rows_of,
                                                 [{"from": labels[earlier], "type": type_, "to": labels[later],
                                                   "row": None}]))
            continue
        proposal = RelationshipData(id=-n, type=type_, later=later, earlier=earlier,
                                    certain=data["certainty"] == "certain")
        rows_of[-n] = row
        cycle = order.find_cycle(proposal)
        if cycle is not None:
            contradictions.append(_contradiction(row, type_, later, earlier, labels, rows_of, [
                {"from": labels[s.from_context], "type": s.type, "to": labels[s.to_context],
                 "row": rows_of.get(s.relationship_id)}
                for s in cycle]))
            continue
        order.add(proposal)
        recorded[key] = data["certainty"]
        new_rels.append((row, data))
    return _report(planned, new_contexts, unchanged_contexts, new_rels, unchanged_rels, contradictions), \
        new_contexts, new_rels


def _contradiction(row, type_, later, earlier, labels, rows_of, cycle) -> dict:
    text = relationship_text(type_, labels[later], labels[earlier])
    return {"row": row, "relationship": text, "code": "cycle",
            "reason": f"{text} would make the temporal order cyclic", "cycle": cycle}


def dry_run(project: Project, data: bytes, name: str, mapping: dict | None = None) -> dict:
    """Everything the import would do, and everything it refuses; nothing is written."""
    report, _contexts, _rels = check(project, plan(read_register(data, name), mapping))
    return report


def commit(project: Project, actor, data: bytes, name: str, mapping: dict | None = None) -> dict:
    """Write the register as ONE record revision, or nothing (``RegisterRefused`` listing every problem)."""
    planned = plan(read_register(data, name), mapping)
    with transaction.atomic():
        Project.objects.select_for_update().filter(pk=project.pk).first()  # no write slips in between
        report, contexts, rels = check(project, planned)
        if not report["ok"]:
            raise RegisterRefused(
                f"the register was refused: {report['refused_count']} refused row(s), "
                f"{report['contradiction_count']} contradiction(s); nothing was written",
                field="file", refused=report["refused"], contradictions=report["contradictions"])
        if not contexts and not rels:
            return {**report, "revision": None}
        with record_change(project, actor, summary=f"register {name[:200]} imported") as changes:
            if contexts:
                bulk.add_contexts(changes, [(fields, None) for _row, fields in contexts])
            try:
                if rels:
                    bulk.add_relationships(changes, [rel for _row, rel in rels])
            except RecordError as exc:  # the write path's own check; name the register row too
                if "index" in exc.details:
                    exc.details["row"] = rels[exc.details["index"]][0]
                raise
    project.refresh_from_db()
    return {**report, "revision": project.revision}
