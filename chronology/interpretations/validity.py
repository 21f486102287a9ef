"""Is a version valid against its own record revision?

The document is read against the record as it was at the version's revision:
references to contexts and relationships that do not exist there (or were
retracted by then) are reported at their path, then the order is compiled with
the version's policy and checked (cycles, contradictions), then the phasing is
checked against that order.  Every issue carries a stable ``code``, a
``severity`` (``error`` blocks proposing; ``warning`` does not) and the
``path`` of the document it is about (None for a finding about the record).

Nothing here touches the database: :func:`assess` takes the record snapshot
as engine data, so it can be tested on hand-built records.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Iterable

from chronology.engine.checks import check_order
from chronology.engine.phasing import check_phasing
from chronology.engine.record_data import EQUALITY_TYPES, ORDERED_TYPES, ContextData, RelationshipData
from chronology.engine.temporal_graph import TemporalGraph, compile_order

from .content import order_policy, referenced_contexts

__all__ = ["RecordAt", "assess", "compile_version_order", "phase_pairs"]


@dataclass
class RecordAt:
    """The record at one revision, and what the project had retracted by then."""

    revision: int
    contexts: list[ContextData]
    relationships: list[RelationshipData]
    retracted_contexts: set[int] = field(default_factory=set)
    retracted_relationships: set[int] = field(default_factory=set)

    def __post_init__(self):
        self.context_ids = {c.id for c in self.contexts}
        self.by_id = {r.id: r for r in self.relationships}
        self.labels = {c.id: c.label for c in self.contexts}


def _issue(code: str, message: str, path: str | None = None, severity: str = "error", **extra) -> dict:
    return {"code": code, "severity": severity, "path": path, "message": message, **extra}


def _context_issues(content: dict, record: RecordAt) -> list[dict]:
    issues = []
    for cid, paths in sorted(referenced_contexts(content).items()):
        if cid in record.context_ids:
            continue
        code, why = ("retracted-context", "was retracted") if cid in record.retracted_contexts else (
            "unknown-context", "does not exist")
        for path in paths:
            issues.append(_issue(code, f"context {cid} {why} at revision {record.revision}", path, contexts=[cid]))
    return issues


def _relationship_issues(content: dict, record: RecordAt) -> list[dict]:
    issues = []

    def missing(rid, path):
        code, why = ("retracted-relationship", "was retracted") if rid in record.retracted_relationships else (
            "unknown-relationship", "does not exist")
        issues.append(_issue(code, f"relationship {rid} {why} at revision {record.revision}", path, relationships=[rid]))

    for i, e in enumerate(content.get("equalities", [])):
        rel = record.by_id.get(e["relationship"])
        path = f"equalities[{i}].relationship"
        if rel is None:
            missing(e["relationship"], path)
        elif rel.type not in EQUALITY_TYPES:
            issues.append(_issue("not-an-equality", f"relationship {rel.id} is '{rel.type}', not an equality", path,
                                 relationships=[rel.id]))
    for i, e in enumerate(content.get("uncertain", [])):
        rel = record.by_id.get(e["relationship"])
        path = f"uncertain[{i}].relationship"
        if rel is None:
            missing(e["relationship"], path)
        elif rel.type not in ORDERED_TYPES:
            issues.append(_issue("not-an-ordering", f"relationship {rel.id} is '{rel.type}'; decide equalities under "
                                 "equalities", path, relationships=[rel.id]))
        elif rel.certain:
            issues.append(_issue("not-uncertain", f"relationship {rel.id} is recorded as certain; set it aside "
                                 "instead of rejecting it", path, relationships=[rel.id]))
    for i, e in enumerate(content.get("set_aside", [])):
        if e["relationship"] not in record.by_id:
            missing(e["relationship"], f"set_aside[{i}].relationship")
    return issues


def _evidence_issues(content: dict, evidence_exists: Callable[[str, int], bool | None] | None) -> list[dict]:
    if evidence_exists is None:
        return []
    issues = []
    for i, slot in enumerate(content.get("evidence", [])):
        kind, _, ident = slot["evidence"].partition(":")
        found = evidence_exists(kind, int(ident))
        if found is False:
            issues.append(_issue("unknown-evidence", f"no {kind} {ident} in this project", f"evidence[{i}].evidence"))
    return issues


def phase_pairs(content: dict) -> list[tuple[str, str]]:
    """``(earlier, later)`` phase pairs the arrangement asserts.

    Phase ``i`` ends before phase ``j > i`` starts exactly when its own
    arrangement with the next phase is sequential or contiguous: starts are
    in order along the list whatever the arrangement, so that end bounds every
    later start; an overlapping phase's end bounds nothing (domain primer §4.4).
    """
    keys = [p["key"] for p in content.get("phases", [])]
    pairs = []
    for i, p in enumerate(content.get("phases", [])[:-1]):
        if (p.get("to_next") or {}).get("arrangement") in ("sequential", "contiguous"):
            pairs.extend((p["key"], q) for q in keys[i + 1:])
    return pairs


def compile_version_order(content: dict, record: RecordAt, *, leave_out: Iterable[int] = ()) -> TemporalGraph:
    """The version's order at its revision (everything decided; undecided items left out)."""
    policy = order_policy(content, record.by_id, contexts=record.context_ids, leave_out=set(leave_out))
    return compile_order(record.contexts, record.relationships, policy)


def _order_issues(graph: TemporalGraph, content: dict) -> tuple[list[dict], bool]:
    report = check_order(graph)
    issues = []
    for issue in report.issues:
        extras = sorted({s.id for s in issue.path if not s.recorded}, key=str)
        path = extras[0] if extras else None
        issues.append(_issue(issue.code, issue.message, path, issue.severity, contexts=list(issue.contexts),
                             relationships=list(issue.relationships),
                             explanation=[s.as_dict() for s in issue.path]))
    return issues, report.acyclic


def _phasing_issues(graph: TemporalGraph, content: dict, record: RecordAt) -> list[dict]:
    pairs = phase_pairs(content)
    in_pairs = {p for pair in pairs for p in pair}
    position = {a["context"]: i for i, a in enumerate(content.get("assignments", []))}
    assignment = {a["context"]: a["phase"] for a in content.get("assignments", [])
                  if a["context"] in record.context_ids and a["phase"] in in_pairs}
    issues = []
    if pairs and assignment:
        report = check_phasing(graph, pairs, assignment)
        for issue in report.issues:
            if issue.code == "unphased-context":
                continue  # reported below for every phase, overlapping ones included
            lower = issue.contexts[0] if issue.contexts else None
            path = f"assignments[{position[lower]}]" if issue.code == "phase-contradiction" and lower in position else "phases"
            issues.append(_issue(issue.code, issue.message, path, issue.severity, contexts=list(issue.contexts),
                                 relationships=list(issue.relationships),
                                 explanation=[s.as_dict() for s in issue.path]))
    if content.get("phases"):
        phased = {a["context"] for a in content.get("assignments", [])}
        for c in record.contexts:
            if c.id not in phased:
                issues.append(_issue("unphased-context", f"{c.label} has no phase", None, "warning", contexts=[c.id]))
    return issues


def assess(content: dict, record: RecordAt, *,
           evidence_exists: Callable[[str, int], bool | None] | None = None) -> dict:
    """The validity report of ``content`` at ``record``'s revision.

    Returns
    -------
    dict
        ``{"ok", "revision", "errors", "warnings", "issues": [...], "order": {...}}``;
        ``ok`` is True when no issue is an error.  ``order`` summarises the
        compiled order (contexts, nodes, edges, merged equalities, undecided
        items) when it could be built.
    """
    issues = _context_issues(content, record) + _relationship_issues(content, record)
    issues += _evidence_issues(content, evidence_exists)
    graph = compile_version_order(content, record)
    order_issues, acyclic = _order_issues(graph, content)
    issues += order_issues
    if acyclic:
        issues += _phasing_issues(graph, content, record)
    errors = sum(1 for i in issues if i["severity"] == "error")
    return {
        "ok": errors == 0,
        "revision": record.revision,
        "errors": errors,
        "warnings": len(issues) - errors,
        "issues": issues,
        "order": {
            "acyclic": acyclic,
            "contexts": graph.n_contexts,
            "nodes": graph.n_nodes,
            "edges": graph.n_edges,
            "merged": sorted(graph.merged),
            "set_aside": sorted(graph.set_aside),
            "pending": sorted(r.id for r in graph.pending),
        },
    }
