"""The analysis of a version's alternatives, as the background job runs it.

Builds the ``AlternativesProblem`` of a version (its own order at its revision,
with its undecided items), runs the exact analysis, and reads a stored result
back for paging.  The job's task (``tasks.analyse_version_alternatives``) calls
:func:`run`; submitting the job and paging its choices live in
:mod:`.alternatives`.
"""

from __future__ import annotations

import time

from chronology import jobs
from chronology.engine.alternatives import (
    AlternativesProblem,
    AlternativesResult,
    GroupReport,
    Item,
    ItemReport,
    analyse_alternatives,
)
from chronology.engine.checks import check_order, merge_implied_equalities
from chronology.engine.errors import SearchCancelled
from chronology.engine.record_data import EQUALITY_TYPES, STRICT_TYPES
from chronology.models import Job, JobState
from projects.record.errors import RecordConflict, RecordInvalid

from . import content as doc
from .models import Version
from .services import record_at, relationship_texts
from .validity import RecordAt, compile_version_order

__all__ = ["JOB_KIND", "DEFAULT_TIME_BUDGET", "DEFAULT_MAX_K_EXACT", "build_problem", "run", "result_of"]

JOB_KIND = "alternatives"
DEFAULT_TIME_BUDGET = 30.0
DEFAULT_MAX_K_EXACT = 40


def build_problem(content: dict, record: RecordAt, *, include_uncertain: bool = True):
    """The abstract problem of a document at ``record``: base DAG of merged nodes and undecided items.

    Returns ``(problem, graph, item_ids)``.  Raises ``RecordConflict``
    (``base-inconsistent``) when the decided part alone is not a consistent
    order: there is nothing to choose between until that is fixed.
    """
    item_ids = doc.undecided(content, record.by_id, uncertain=include_uncertain)
    graph = compile_version_order(content, record, leave_out=item_ids)
    report = check_order(graph)
    if not report.ok:
        raise RecordConflict("the decided part of this version is not a consistent order", code="base-inconsistent",
                             issues=[i.as_dict() for i in report.errors])
    graph = merge_implied_equalities(graph)
    strict = [(a, b) for a, b, s in zip(graph.edge_earlier, graph.edge_later, graph.edge_strict) if s]
    weak = [(a, b) for a, b, s in zip(graph.edge_earlier, graph.edge_later, graph.edge_strict) if not s]
    items = []
    for rid in item_ids:
        rel = record.by_id[rid]
        later, earlier = graph.node_for_id(rel.later), graph.node_for_id(rel.earlier)
        if rel.type in EQUALITY_TYPES:
            items.append(Item("equal", later, earlier, ref=rid))
        else:
            items.append(Item("before", earlier, later, ref=rid, strict=rel.type in STRICT_TYPES))
    return AlternativesProblem(n_nodes=graph.n_nodes, edges=strict, items=items, weak_edges=weak), graph, item_ids


def _limits(result: AlternativesResult, params: dict) -> dict:
    if result.exact:
        statement = (f"Exact: all {result.k} undecided items were analysed completely; "
                     f"{result.consistent_count} of {2 ** result.k} choices are consistent.")
    else:
        statement = ("Bounded: the search stopped at its limits (at most "
                     f"{params['max_k_exact']} interacting items searched exhaustively, {params['time_budget']} s). "
                     "Every conflict listed is real, but some may be missing, so the counts are upper bounds "
                     "and the listing may include inconsistent choices.")
    return {"exact": result.exact, "statement": statement, "notes": list(result.notes),
            "max_k_exact": params["max_k_exact"], "time_budget": params["time_budget"]}


def _every(seconds: float, check):
    """``check`` asked at most once per ``seconds`` (the search polls far more often than that)."""
    last = [time.monotonic(), False]

    def polled() -> bool:
        now = time.monotonic()
        if not last[1] and now - last[0] >= seconds:
            last[0], last[1] = now, bool(check())
        return last[1]

    return polled


def run(job: Job, reporter) -> dict:
    """The job's work: analyse the version's alternatives and describe them."""
    params = job.params
    version = Version.objects.select_related("project", "interpretation").get(pk=params["version"], project=job.project)
    record = record_at(version.project, version.record_revision)
    problem, graph, item_ids = build_problem(version.content, record, include_uncertain=params["include_uncertain"])
    reporter.log(f"{len(item_ids)} undecided items over {graph.n_nodes} merged nodes")
    try:
        result = analyse_alternatives(
            problem, max_k_exact=params["max_k_exact"], time_budget=params["time_budget"],
            progress=lambda f: reporter.progress(f, stage="analysis"), cancel=_every(0.5, reporter.cancelled),
        )
    except SearchCancelled:
        raise jobs.JobCancelled() from None
    texts = relationship_texts(version.project, version.record_revision, item_ids)
    items = []
    for rid in item_ids:
        rel = record.by_id[rid]
        items.append({"relationship": rid, "type": rel.type, "certain": rel.certain, "text": texts.get(rid, ""),
                      "kind": "equality" if rel.type in EQUALITY_TYPES else "ordering"})
    return {
        "version": version.pk,
        "record_revision": version.record_revision,
        "items": items,
        "analysis": result.as_dict(),
        "limits": _limits(result, params),
    }


def result_of(job: Job) -> AlternativesResult:
    """The stored analysis as an ``AlternativesResult`` again, for paging."""
    if job.kind != JOB_KIND:
        raise RecordInvalid("this job is not an analysis of alternatives", field="job", code="wrong-job-kind")
    if job.state != JobState.DONE or not job.result:
        raise RecordConflict(f"the job is {job.state}; its choices are listed once it is done", code="job-not-done",
                             state=job.state)
    a = job.result["analysis"]
    items = []
    for r in a["items"]:
        rep = ItemReport(r["index"], r["ref"], r["kind"], r["group"])
        rep.conflicts = [tuple(c) for c in r["conflicts"]]
        rep.forced_out, rep.implied_by_base, rep.accepted_in = r["forced_out"], r["implied_by_base"], r["accepted_in"]
        items.append(rep)
    groups = [GroupReport(g["index"], tuple(g["items"]), tuple(g["refs"]), g["consistent_count"], g["distinct_orders"],
                          tuple(tuple(c) for c in g["conflicts"])) for g in a["groups"]]
    return AlternativesResult(k=a["k"], consistent_count=a["consistent_count"], distinct_orders=a["distinct_orders"],
                              exact=a["exact"], groups=groups, minimal_conflicts=[tuple(c) for c in a["minimal_conflicts"]],
                              items=items, seconds=a["seconds"], notes=list(a["notes"]))
