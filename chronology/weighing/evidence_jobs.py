"""Weighing candidates by the evidence, as background jobs.

A weighing is one job row (kind ``evidence-weighing``) that users poll, and
one job per candidate (kind ``marginal-likelihood``) that the workers run,
each a Celery task (:mod:`chronology.weighing.tasks`) estimating that
candidate's marginal likelihood by stepping-stone sampling
(:func:`chronology.engine.marginal_likelihood.stepping_stone`) with
independent repeats for its Monte Carlo error.  The candidate job that
finishes last combines the estimates into Bayes factors and posterior
probabilities under equal prior weights
(:func:`chronology.engine.bayes_factors.compare`) and finishes the weighing.
Jobs follow :mod:`chronology.jobs`: row first, enqueued on commit, start →
run → finish, state in the database.
"""

from __future__ import annotations

import secrets

from django.db import transaction

from chronology import jobs
from chronology.engine.bayes_factors import PRIOR_CAUTION
from chronology.engine.marginal_likelihood import MARGINAL_LIKELIHOOD_METHOD, SteppingStoneSettings
from chronology.engine.posterior import CAUTION
from chronology.models import Job, JobState
from chronology.runs.compile import ModelRefused
from projects.models import Role

from .candidates import prepare
from .evidence_work import ESTIMATE_KIND, WEIGHING_KIND, children_of, finish_if_complete
from .joint import JOINT_DEFAULTS, JOINT_LIMITS
from .joint_work import JOINT_KIND
from .settings_input import whole_number_settings

__all__ = ["WEIGHING_KIND", "ESTIMATE_KIND", "SETTING_LIMITS", "settings_from", "start_weighing", "weighing_view",
           "cancel_weighing", "recent_weighings", "top_readings", "SHOWN_READINGS"]

#: Accepted settings of a weighing: name -> (least, greatest).
SETTING_LIMITS = {"stones": (8, 64), "draws": (50, 5000), "thin": (1, 20), "warmup": (0, 5000), "repeats": (2, 16)}


def settings_from(data) -> tuple[SteppingStoneSettings, dict]:
    """Stepping-stone settings and the joint runs' settings from a request's ``settings`` object.

    Raises ``ModelRefused`` (400) naming the field.
    """
    given = whole_number_settings(data, {**SETTING_LIMITS, **JOINT_LIMITS})
    joint = {k.removeprefix("joint_"): given.pop(k, JOINT_DEFAULTS[k]) for k in JOINT_LIMITS}
    return SteppingStoneSettings(**given), joint


def _seed(value) -> int:
    if value is None:
        return secrets.randbits(32)
    if not isinstance(value, int) or isinstance(value, bool) or not 0 <= value < 2 ** 63:
        raise ModelRefused("invalid-input", "seed is a whole number from 0 to 2^63 - 1", status=400, field="seed")
    return value


def start_weighing(project, actor, *, versions=None, alternatives_of=None, settings=None, seed=None,
                   method: str = "auto") -> Job:
    """Compile the candidates now (refusing what cannot be weighed) and submit one job per candidate.

    ``method`` says how a version's alternatives are weighed
    (:data:`chronology.weighing.candidates.METHODS`); in the joint mode a
    candidate is a family of readings and its job a ``joint-readings`` one.

    Returns the weighing's job; its candidates start when the transaction commits.
    """
    from chronology.interpretations.services import log_action, require_role

    from .tasks import estimate_joint_readings, estimate_marginal_likelihood

    require_role(project, actor, Role.ANALYST)
    s, joint = settings_from(settings)
    entropy = _seed(seed)
    prepared = prepare(project, versions=versions, alternatives_of=alternatives_of, method=method)
    forced = bool(prepared.notes)
    is_joint = prepared.mode == "joint"
    params = {"mode": prepared.mode,
              "candidates": prepared.candidates, "refused": prepared.refused, "range": list(prepared.range),
              "range_forced": forced, "notes": prepared.notes, "settings": s.as_dict(), "seed": entropy,
              "curves": [dict(c) for c in prepared.models[0].curves], **({"joint": joint} if is_joint else {})}
    with transaction.atomic():
        parent = Job.objects.create(project=project, kind=WEIGHING_KIND, params=params, created_by=actor.user)
        children = []
        for i, cand in enumerate(prepared.candidates):
            child_params = {"weighing": str(parent.pk), "index": i, "candidate": cand,
                            "range": list(prepared.range) if forced else None, "settings": s.as_dict(),
                            "seed": entropy + 7919 * (i + 1)}
            if is_joint:
                child = jobs.submit(project, actor.user, JOINT_KIND, {**child_params, "joint": joint},
                                    estimate_joint_readings)
            else:
                child = jobs.submit(project, actor.user, ESTIMATE_KIND, child_params, estimate_marginal_likelihood)
            children.append(str(child.pk))
        parent.params = {**params, "children": children}
        parent.save(update_fields=["params"])
        first = prepared.candidates[0]
        log_action(project, actor, "interpretation.weighing.requested", kind="interpretation_version",
                   object_id=first["version"], repr_=f"weighing of {len(children)} candidates",
                   after={"job": str(parent.pk), "mode": params["mode"],
                          "candidates": [c["name"] for c in prepared.candidates],
                          "settings": params["settings"], "seed": entropy})
    return parent


def weighing_view(job: Job) -> dict:
    """What the API shows of a weighing: its state, each candidate's state and, when done, the comparison."""
    children = children_of(job)
    state = job.state
    if state == JobState.QUEUED and any(c.state != JobState.QUEUED for c in children):
        state = JobState.RUNNING
    progress = 1.0 if job.state == JobState.DONE else (
        sum(c.progress for c in children) / len(children) if children else 0.0)
    return {
        "id": str(job.pk), "state": state, "progress": progress, "mode": job.params.get("mode"),
        "created_at": job.created_at, "finished_at": job.finished_at,
        "settings": job.params.get("settings"), "seed": job.params.get("seed"), "range": job.params.get("range"),
        "candidates": [{"name": c.params["candidate"]["name"], "version": c.params["candidate"]["version"],
                        "accepted": c.params["candidate"].get("accepted"),
                        "rejected": c.params["candidate"].get("rejected"),
                        "job": str(c.pk), "state": c.state, "progress": c.progress,
                        "log_marginal_likelihood": (c.result or {}).get("log_marginal_likelihood"),
                        "mcse": (c.result or {}).get("mcse")} for c in children],
        "refused": job.params.get("refused") or [], "notes": job.params.get("notes") or [],
        "result": job.result, "error": job.error,
        "method": MARGINAL_LIKELIHOOD_METHOD, "caution": PRIOR_CAUTION, "review": CAUTION,
    }


def cancel_weighing(job: Job) -> Job:
    """Ask every candidate still queued or running to stop; the weighing then ends with what finished."""
    for child in children_of(job):
        if not child.is_terminal:
            jobs.cancel(child)
    if not Job.objects.filter(pk__in=job.params.get("children") or []).exclude(
            state__in=[JobState.DONE, JobState.FAILED, JobState.CANCELLED]).exists():
        if all(c.state != JobState.DONE for c in children_of(job)):
            jobs.cancel(job)
        else:
            finish_if_complete(job.pk)
    job.refresh_from_db()
    return job


#: Most readings a page or report lists of one weighing, best first; the API has them all.
SHOWN_READINGS = 12


def top_readings(result: dict) -> tuple[list[dict], int]:
    """The best :data:`SHOWN_READINGS` candidates of a weighing's result, and how many more it has."""
    ranked = sorted(result.get("candidates") or [], key=lambda c: -c["posterior_probability"])
    return ranked[:SHOWN_READINGS], max(len(ranked) - SHOWN_READINGS, 0)


def recent_weighings(project, limit: int = 5) -> list[dict]:
    """The project's latest finished weighings, for a results block on a page: best first in each."""
    rows = []
    for job in Job.objects.filter(project=project, kind=WEIGHING_KIND, state=JobState.DONE).order_by("-finished_at",
                                                                                                    "id")[:limit]:
        result = job.result or {}
        shown, more = top_readings(result)
        rows.append({"id": str(job.pk), "finished_at": job.finished_at, "mode": job.params.get("mode"),
                     "candidates": shown, "more": more, "relationships": result.get("relationships") or []})
    return rows
