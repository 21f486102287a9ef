"""The work of a weighing's jobs, as the Celery tasks run it (see :mod:`chronology.weighing.evidence_jobs`).

:func:`estimate` is one candidate's job: its marginal likelihood by
stepping-stone sampling with independent repeats.  :func:`finish_if_complete`
is called after each candidate's job ends; the call that finds none still
queued or running runs :func:`combine`, which turns the estimates into Bayes
factors and posterior probabilities under equal prior weights.
"""

from __future__ import annotations

from types import SimpleNamespace

from django.db import transaction

from chronology import jobs
from chronology.engine.bayes_factors import compare
from chronology.engine.errors import EngineError, SamplingCancelled
from chronology.engine.marginal_likelihood import MARGINAL_LIKELIHOOD_METHOD, SteppingStoneSettings, stepping_stone
from chronology.engine.posterior import CAUTION
from chronology.models import Job, JobState
from chronology.runs.compile import ModelRefused

from .candidates import compile_candidate
from .job_errors import refused_in_job

__all__ = ["WEIGHING_KIND", "ESTIMATE_KIND", "estimate", "finish_if_complete", "children_of",
           "combine"]

WEIGHING_KIND = "evidence-weighing"
ESTIMATE_KIND = "marginal-likelihood"


def estimate(job: Job, reporter: jobs.Reporter) -> dict:
    """The work of one candidate's job: its marginal likelihood with the Monte Carlo error."""
    reporter.progress(0.02, force=True, step="compiling")
    rng = job.params.get("range")
    try:
        compiled = compile_candidate(job.project, job.params["candidate"], tuple(rng) if rng else None)
    except ModelRefused as exc:
        raise refused_in_job(exc) from exc
    settings = SteppingStoneSettings(**job.params["settings"])
    reporter.log(f"{len(compiled.model.events)} events; {settings.stones} stones x {settings.repeats} repeats")

    def cancelled():
        return reporter.cancelled()

    try:
        result = stepping_stone(compiled.model, entropy=int(job.params["seed"]), settings=settings, workers=1,
                                progress=lambda f: reporter.progress(0.05 + 0.95 * f, step="sampling"),
                                cancel=cancelled)
    except SamplingCancelled as exc:
        raise jobs.JobCancelled() from exc
    return {"candidate": job.params["candidate"], "model_hash": compiled.model_hash, **result.as_dict()}


def finish_if_complete(weighing_id) -> Job | None:
    """Combine the candidates once none is still queued or running; the first caller to find that does it."""
    with transaction.atomic():
        parent = Job.objects.select_for_update().filter(pk=weighing_id, kind=WEIGHING_KIND).first()
        if parent is None or parent.is_terminal:
            return parent
        children = Job.objects.filter(pk__in=parent.params.get("children") or [])
        if any(not c.is_terminal for c in children):
            return parent
        # still holding the lock: a second candidate finishing now waits, then finds the weighing finished
        return jobs.execute(parent.pk, combine)


def children_of(parent: Job) -> list[Job]:
    found = {str(j.pk): j for j in Job.objects.filter(pk__in=parent.params.get("children") or [])}
    return [found[c] for c in parent.params.get("children") or [] if c in found]


def combine(job: Job, reporter: jobs.Reporter) -> dict:
    """Bayes factors and posterior probabilities of the candidates whose estimates finished."""
    if job.params.get("mode") == "joint":
        from .joint_combine import combine_joint

        return combine_joint(job, children_of(job))
    estimates, rows, failed = {}, [], []
    for child in children_of(job):
        cand = child.params["candidate"]
        if child.state == JobState.DONE:
            r = child.result
            estimates[cand["name"]] = SimpleNamespace(log_ml=r["log_marginal_likelihood"], mcse=r["mcse"])
            rows.append({"name": cand["name"], "job": str(child.pk), "model_hash": r["model_hash"],
                         "repeats": r["repeats"], "seconds": r["seconds"]})
        else:
            failed.append({"name": cand["name"], "job": str(child.pk), "state": child.state, "error": child.error})
    if not estimates:
        raise EngineError("no candidate's marginal likelihood finished", code="no-estimates",
                          details={"failed": failed})
    comparison = compare(estimates, entropy=int(job.params["seed"])).as_dict()
    by_name = {r["name"]: r for r in rows}
    for c in comparison["candidates"]:
        c.update({k: v for k, v in by_name[c["name"]].items() if k != "name"})
    return {**comparison, "failed": failed, "refused": job.params.get("refused") or [],
            "range": job.params["range"], "notes": job.params.get("notes") or [],
            "curves": job.params.get("curves") or [], "method": MARGINAL_LIKELIHOOD_METHOD,
            "settings": job.params["settings"], "seed": job.params["seed"], "review": CAUTION}


