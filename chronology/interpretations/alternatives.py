"""The alternatives of a version: which choices of its undecided items are consistent.

The base order is the version's own order at its revision with everything it
decides and nothing it leaves undecided; the undecided equalities (and, if
asked, the undecided uncertain orderings) become the items of an
``AlternativesProblem`` over the base's merged nodes.  The analysis runs as a
background job (``tasks.analyse_version_alternatives``); its stored result is
paged through lazily and any listed choice can become a new draft.
"""

from __future__ import annotations

from chronology import jobs
from chronology.engine.alternatives import choice_at, iter_choices
from chronology.models import Job
from projects.models import Role
from projects.record.errors import RecordInvalid

from .alternatives_analysis import (
    DEFAULT_MAX_K_EXACT,
    DEFAULT_TIME_BUDGET,
    JOB_KIND,
    build_problem,
    result_of,
    run,
)
from .models import Version
from .services import new_draft

__all__ = ["JOB_KIND", "build_problem", "start", "run", "choices", "draft_from_choice", "result_of"]


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
