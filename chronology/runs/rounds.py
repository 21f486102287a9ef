"""The end of a round of sampling: extend the run, or combine it and end it.

When every chain has stored the draws the run asks for (counted under the
run's row lock, so only one finishing chain gets here), the run is judged
(:mod:`chronology.runs.convergence`).  Not converged and within budget: it
grows (more iterations per chain, then more chains) and the chains needing
work are sent again.  Otherwise the combine step writes the results, and the
run ends ``done`` with its verdict: converged, or which budget ran out.

A combine claimed longer ago than ``TELLSTACK_RUN_COMBINE_LEASE_SECONDS``, or
by a process of this host that has ended, is taken over (its worker died), so
a redelivered task or the sweeper still finishes the run.  The combine is deterministic and writes its files
atomically; only the first to finish stores the outcome.
"""

from __future__ import annotations

import time
from datetime import datetime

from django.conf import settings
from django.db import transaction
from django.utils import timezone

from . import convergence, leases
from .dispatch import CHAIN_TASK, send_on_commit
from .models import TERMINAL_STATES, ChainState, Run, RunChain, RunState
from .outcomes import cancel_locked, crash_error, fail_run
from .results import compute_results

__all__ = ["after_chain", "finish_round", "combine", "combine_fresh", "send_chains"]


def combine_fresh(run: Run, now=None) -> bool:
    """A combine of ``run`` was claimed recently enough, by a process not known to be dead, that it may be at it."""
    timings = run.timings or {}
    started = timings.get("combine_claimed_at")
    if not run.combining or not started:
        return False
    if not leases.holder_alive(timings.get("combine_worker", "")):
        return False  # its process on this host has ended (a killed pool process): take it over now
    age = ((now or timezone.now()) - datetime.fromisoformat(started)).total_seconds()
    return age < float(settings.TELLSTACK_RUN_COMBINE_LEASE_SECONDS)


def send_chains(run_id: str, indices) -> None:
    """Send one chain task per index when the current transaction commits."""
    for k in list(indices):
        send_on_commit(CHAIN_TASK, run_id, k)


def after_chain(run_id, *, dispatch: bool = True) -> str:
    """Finish the round when every chain is stored (checked under the run's row lock)."""
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return "skip"
        done = RunChain.objects.filter(run=run, state=ChainState.DONE, iterations_done__gte=run.iterations).count()
        if done < run.chains:
            return "waiting"
        now = timezone.now()
        if combine_fresh(run, now):
            return "busy"
        run.combining = True
        run.timings = {**(run.timings or {}), "combine_claimed_at": now.isoformat(),
                       "combine_worker": leases.worker_name()}
        run.save(update_fields=["combining", "timings"])
    return finish_round(str(run_id), dispatch=dispatch)


def _elapsed(run: Run) -> float:
    start = (run.timings or {}).get("budget_from")
    began = datetime.fromisoformat(start) if start else run.started_at or run.created_at
    return max((timezone.now() - began).total_seconds(), 0.0)


def _sweeps_per_chain(run: Run) -> int:
    """Sweeps one chain has run so far: a warm-up per segment plus its kept sweeps."""
    segments = 1 + len([r for r in run.rounds or [] if r.get("add_iterations")])
    return segments * run.warmup + run.iterations


def finish_round(run_id: str, *, dispatch: bool = True) -> str:
    """Judge the run; extend it or combine it (the caller holds the combine claim)."""
    run = Run.objects.get(pk=run_id)
    if run.cancel_requested:
        with transaction.atomic():
            cancel_locked(Run.objects.select_for_update().get(pk=run_id))
        return "cancelled"
    try:
        assessment = convergence.assess(run)
    except Exception:
        fail_run(run_id, crash_error("combine-failed", "judging the run's convergence"))
        return "failed"
    plan = None
    if run.converge and not assessment.converged:
        elapsed = _elapsed(run)
        plan = convergence.plan_extension(
            assessment=assessment, iterations=run.iterations, chains=run.chains, warmup=run.warmup, thin=run.thin,
            max_iterations=run.max_iterations,
            elapsed=elapsed, budget=float(run.budget_seconds),
            seconds_per_sweep=elapsed / max(_sweeps_per_chain(run), 1),
            more_chains=run.parent_id is None)
        if plan.stop is None:
            return _extend(run_id, plan, assessment, dispatch=dispatch)
    return combine(run_id, verdict=convergence.verdict(assessment, plan, converge=run.converge))


def _extend(run_id: str, plan, assessment, *, dispatch: bool) -> str:
    with transaction.atomic():
        run = Run.objects.select_for_update().get(pk=run_id)
        if run.state in TERMINAL_STATES:
            return "skip"
        if run.cancel_requested:
            cancel_locked(run)
            return "cancelled"
        first_new = run.chains
        run.iterations += plan.add_iterations
        run.chains += plan.add_chains
        RunChain.objects.bulk_create([RunChain(run=run, index=k) for k in range(first_new, run.chains)])
        run.rounds = [*(run.rounds or []), {
            "round": len(run.rounds or []) + 1, "add_iterations": plan.add_iterations, "add_chains": plan.add_chains,
            "iterations": run.iterations, "chains": run.chains, "reason": plan.reason,
            "before": {"max_r_hat": assessment.max_r_hat, "min_ess_bulk": assessment.min_ess_bulk,
                       "min_ess_tail": assessment.min_ess_tail, "failing": list(assessment.failing[:20])},
            "at": timezone.now().isoformat(),
        }]
        run.combining = False
        run.save(update_fields=["iterations", "chains", "rounds", "combining"])
        now = timezone.now()
        RunChain.objects.filter(run=run).update(state=ChainState.QUEUED, attempts=0, sweeps_done=0, enqueued_at=now,
                                                lease_expires_at=None)
        if dispatch:
            send_chains(str(run.pk), range(run.chains))
    return "extended"


def _timings(run: Run, chains: list[RunChain], **extra) -> dict:
    return {
        "budget_from": (run.timings or {}).get("budget_from"),
        "compile_seconds": [c.compile_seconds for c in chains],
        "chain_seconds": [c.seconds for c in chains],
        "sampling_seconds": sum(c.seconds or 0.0 for c in chains),
        "rounds": 1 + len(run.rounds or []),
        **extra,
    }


def combine(run_id: str, *, verdict: dict | None = None) -> str:
    """Diagnostics, summaries, plots and NetCDF of a run whose chains are all stored; end it ``done``."""
    run = Run.objects.select_related("project", "parent").filter(pk=run_id).first()
    if run is None or run.state in TERMINAL_STATES:
        return "skip"
    started = time.perf_counter()
    chains = list(RunChain.objects.filter(run=run).order_by("index"))
    run.verdict = verdict
    run.timings = _timings(run, chains)
    try:
        summary = compute_results(run)
    except FileNotFoundError:
        # a chain file went missing: sample it again
        with transaction.atomic():
            locked = Run.objects.select_for_update().get(pk=run_id)
            locked.combining = False
            locked.save(update_fields=["combining"])
            RunChain.objects.filter(run=locked).update(state=ChainState.QUEUED, enqueued_at=timezone.now())
            send_chains(run_id, range(locked.chains))
        return "waiting"
    except Exception:
        fail_run(run_id, crash_error("combine-failed", "combining the run's chains"))
        return "failed"
    seconds = time.perf_counter() - started
    with transaction.atomic():
        locked = Run.objects.select_for_update().get(pk=run_id)
        if locked.state in TERMINAL_STATES:
            return "skip"
        locked.state = RunState.DONE
        locked.finished_at = timezone.now()
        locked.combining = False
        locked.summary = summary
        locked.converged = bool(summary["converged"])
        locked.verdict = verdict
        wall = (locked.finished_at - locked.started_at).total_seconds() if locked.started_at else None
        locked.timings = _timings(locked, chains, combine_seconds=seconds, wall_seconds=wall)
        locked.save(update_fields=["state", "finished_at", "combining", "summary", "converged", "verdict", "timings"])
    return "done"

