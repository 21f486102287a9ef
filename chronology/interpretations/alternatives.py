"""The alternatives of a version: which choices of its undecided items are consistent.

The base order is the version's own order at its revision with everything it
decides and nothing it leaves undecided; the undecided equalities (and, if
asked, the undecided uncertain orderings) become the items of an
``AlternativesProblem`` over the base's merged nodes.  The analysis runs as a
background job (``tasks.analyse_version_alternatives``); its stored result is
paged through lazily and any listed choice can become a new draft.
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
    choice_at,
    iter_choices,
)
from chronology.engine.checks import check_order, merge_implied_equalities
from chronology.engine.errors import SearchCancelled
from chronology.engine.record_data import EQUALITY_TYPES, STRICT_TYPES
from chronology.models import Job, JobState
from projects.models import Role
from projects.record.errors import RecordConflict, RecordInvalid

from . import content as doc
from .models import Version
from .services import new_draft, record_at, relationship_texts
from .validity import RecordAt, compile_version_order

__all__ = ["JOB_KIND", "build_problem", "start", "run", "choices", "draft_from_choice", "result_of"]

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


def start(version: Version, actor, *, include_uncertain: bool = True, time_budget: float = DEFAULT_TIME_BUDGET,
          max_k_exact: int = DEFAULT_MAX_K_EXACT) -> Job:
    """Submit the analysis of ``version``'s alternatives as a job (runs after commit)."""
    from .services import log_action, require_role
    from .tasks import analyse_version_alternatives

    require_role(version.project, actor, Role.ANALYST)
    if not 0 < float(time_budget) <= 600:
        raise RecordInvalid("time_budget is between 0 and 600 seconds", field="time_budget", code="out-of-range")
    if not 1 <= int(max_k_exact) <= 60:
        raise RecordInvalid("max_k_exact is between 1 and 60", field="max_k_exact", code="out-of-range")
    params = {"version": version.pk, "include_uncertain": bool(include_uncertain), "time_budget": float(time_budget),
              "max_k_exact": int(max_k_exact)}
    log_action(version.project, actor, "interpretation.alternatives.requested", kind="interpretation_version",
               object_id=version.pk, repr_=str(version), after=params)
    return jobs.submit(version.project, actor.user, JOB_KIND, params, analyse_version_alternatives)


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


def _describe(index: int, accepted: frozenset, job: Job) -> dict:
    refs = [i["relationship"] for i in job.result["items"]]
    return {"index": index, "accepted": sorted(r for r in refs if r in accepted),
            "not_accepted": sorted(r for r in refs if r not in accepted)}


def choices(job: Job, *, offset: int = 0, limit: int = 50) -> dict:
    """One page of the consistent choices, computed lazily from the stored analysis."""
    if offset < 0 or not 1 <= limit <= 1000:
        raise RecordInvalid("offset is 0 or more and limit between 1 and 1000", field="limit", code="out-of-range")
    result = result_of(job)
    page = [_describe(offset + i, choice, job) for i, choice in enumerate(iter_choices(result, offset, limit))]
    return {"count": result.consistent_count, "offset": offset, "limit": limit, "exact": result.exact,
            "results": page}


def draft_from_choice(version: Version, actor, job: Job, index: int, *, message: str = "") -> Version:
    """A new draft of ``version`` deciding every analysed item as choice ``index`` does."""
    result = result_of(job)
    if job.result.get("version") != version.pk:
        raise RecordInvalid("the job analysed another version", field="job", code="wrong-version")
    try:
        chosen = choice_at(result, int(index))
    except Exception as exc:  # out-of-range index
        raise RecordInvalid(f"no choice {index} (there are {result.consistent_count})", field="index",
                            code="out-of-range") from exc
    content = dict(version.content)
    by_kind = {i["relationship"]: i["kind"] for i in job.result["items"]}
    equalities = {e["relationship"]: e for e in content["equalities"]}
    uncertain = {e["relationship"]: e for e in content["uncertain"]}
    note = f"alternative {index} of job {job.pk}"
    for rid, kind in by_kind.items():
        if kind == "equality":
            decision = "accepted" if rid in chosen else "set_aside"
            equalities[rid] = {"relationship": rid, "decision": decision, "reason": note}
        else:
            uncertain[rid] = {"relationship": rid, "decision": "accepted" if rid in chosen else "rejected"}
    content["equalities"] = list(equalities.values())
    content["uncertain"] = list(uncertain.values())
    return new_draft(version, actor, message=message or f"from {note}", content=content,
                     extra_log={"alternative": index, "job": str(job.pk)})
