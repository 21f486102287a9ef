"""Celery tasks of model runs: one task per chain, then the combine step.

Each chain task is acknowledged late (``acks_late``, and rejected back to the
queue if its worker dies), so a run survives a worker restart: the broker
hands the chain to the next worker.  The tasks are idempotent:

* a chain whose draws are already stored (for this run's model hash and
  seed) is not sampled again; the task only checks whether the run can be
  combined;
* a chain another live worker is sampling (heartbeat younger than
  ``TELLSTACK_RUN_STALE_SECONDS``, default 60) is left to it;
* a run already finished, failed or cancelled is left alone.

The last chain to finish (counted under a row lock on the run) runs the
combine step in the same task, so the same code path works with a real
worker and in eager mode.  Two chains finishing at the same moment may both
combine: the combine is deterministic and writes its files atomically, and
only the first to finish stores the outcome.  ``combine_run_task`` does the
same on its own, for recovery.

Cancellation: the sampler calls a cancel check every few hundred sweeps; it
reads the run's ``cancel_requested`` flag (and stops too when another chain
has failed the run).
"""

from __future__ import annotations

import logging
import os
import socket
import time
import traceback
from datetime import datetime, timedelta
from typing import Callable

from celery import shared_task
from django.conf import settings
from django.db import transaction
from django.utils import timezone

from chronology.engine.errors import EngineError, SamplingCancelled
from chronology.engine.sampler import chain_seeds, flatten, run_chain

from .models import TERMINAL_STATES, ChainState, Run, RunChain, RunState
from .results import compute_results, load_chain, load_model, write_chain_file

__all__ = ["run_chain_task", "combine_run_task", "execute_chain", "combine", "CHECK_EVERY"]

log = logging.getLogger(__name__)

#: Sweeps between progress reports and cancel checks.
CHECK_EVERY = 250
_PROGRESS_INTERVAL = 0.5


def _stale_after() -> float:
    return float(getattr(settings, "TELLSTACK_RUN_STALE_SECONDS", None)
                 or os.environ.get("TELLSTACK_RUN_STALE_SECONDS") or 60)


def _worker_name() -> str:
    return f"{socket.gethostname()}:{os.getpid()}"


def _claim(run_id: str, k: int) -> tuple[Run | None, RunChain | None, str]:
    """Lock the chain row and decide: ``sample``, ``stored``, ``busy`` or ``skip``."""
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return run, None, "skip"
        chain = RunChain.objects.select_for_update().filter(run=run, index=k).first()
        if chain is None:
            return run, None, "skip"
        if load_chain(run, k) is not None:
            if chain.state != ChainState.DONE:
                chain.state = ChainState.DONE
                chain.save(update_fields=["state"])
            return run, chain, "stored"
        if run.cancel_requested:
            chain.state = ChainState.CANCELLED
            chain.save(update_fields=["state"])
            _cancel_locked(run)
            return run, chain, "skip"
        now = timezone.now()
        fresh = chain.heartbeat_at is not None and now - chain.heartbeat_at < timedelta(seconds=_stale_after())
        if chain.state == ChainState.RUNNING and fresh and chain.worker != _worker_name():
            return run, chain, "busy"
        chain.state = ChainState.RUNNING
        chain.attempts += 1
        chain.worker = _worker_name()
        chain.heartbeat_at = now
        chain.started_at = chain.started_at or now
        chain.sweeps_done = 0
        chain.save(update_fields=["state", "attempts", "worker", "heartbeat_at", "started_at", "sweeps_done"])
        if run.state == RunState.QUEUED:
            run.state = RunState.RUNNING
            run.started_at = run.started_at or now
            run.save(update_fields=["state", "started_at"])
        return run, chain, "sample"


def _cancel_locked(run: Run) -> None:
    if run.state not in TERMINAL_STATES:
        run.state = RunState.CANCELLED
        run.finished_at = timezone.now()
        run.save(update_fields=["state", "finished_at"])
    RunChain.objects.filter(run=run, state=ChainState.QUEUED).update(state=ChainState.CANCELLED)


def _fail(run_id: str, k: int | None, error: dict) -> None:
    with transaction.atomic():
        run = Run.objects.select_for_update().get(pk=run_id)
        if k is not None:
            RunChain.objects.filter(run=run, index=k).update(state=ChainState.FAILED, finished_at=timezone.now())
        if run.state not in TERMINAL_STATES:
            run.state = RunState.FAILED
            run.error = error
            run.finished_at = timezone.now()
            run.save(update_fields=["state", "error", "finished_at"])


def execute_chain(run_id: str, k: int, on_progress: Callable[[int, int, int], None] | None = None) -> str:
    """Sample chain ``k`` of run ``run_id`` (idempotent); returns what was done.

    ``on_progress(k, sweeps_done, total)`` is called on every report, for a
    terminal progress bar.
    """
    run, chain, decision = _claim(run_id, k)
    if decision == "stored":
        _after_chain(run_id)
        return decision
    if decision != "sample":
        return decision
    total = run.total_sweeps
    last = {"progress": 0.0, "cancel": 0.0, "cancelled": False}

    def progress(done: int) -> None:
        if on_progress is not None:
            on_progress(k, done, total)
        now = time.monotonic()
        if done < total and now - last["progress"] < _PROGRESS_INTERVAL:
            return
        last["progress"] = now
        RunChain.objects.filter(pk=chain.pk).update(sweeps_done=done, heartbeat_at=timezone.now())

    def cancel() -> bool:
        now = time.monotonic()
        if now - last["cancel"] < _PROGRESS_INTERVAL:
            return last["cancelled"]
        last["cancel"] = now
        row = Run.objects.filter(pk=run_id).values("cancel_requested", "state").first()
        last["cancelled"] = row is None or row["cancel_requested"] or row["state"] in TERMINAL_STATES
        return last["cancelled"]

    try:
        model = load_model(run)
        seeds = chain_seeds(int(run.seed_entropy), run.chains)
        result = run_chain(flatten(model), seeds[k], chain=k, iterations=run.iterations, warmup=run.warmup,
                           thin=run.thin, progress=progress, cancel=cancel, check_every=CHECK_EVERY)
        write_chain_file(run.chain_path(k), result, model_hash=run.model_hash, seed_entropy=run.seed_entropy)
    except SamplingCancelled:
        with transaction.atomic():
            locked = Run.objects.select_for_update().get(pk=run_id)
            RunChain.objects.filter(pk=chain.pk).update(state=ChainState.CANCELLED, finished_at=timezone.now())
            if locked.cancel_requested:
                _cancel_locked(locked)
        return "cancelled"
    except EngineError as exc:
        _fail(run_id, k, {"code": exc.code, "message": exc.message, "chain": k, **exc.details})
        return "failed"
    except Exception as exc:  # a crash: keep the reason on the run for the user
        log.exception("chain %s of run %s crashed", k, run_id)
        _fail(run_id, k, {"code": "crashed", "message": str(exc) or type(exc).__name__, "chain": k,
                          "traceback": traceback.format_exc(limit=8)})
        return "failed"
    RunChain.objects.filter(pk=chain.pk).update(
        state=ChainState.DONE, sweeps_done=total, finished_at=timezone.now(), heartbeat_at=timezone.now(),
        seconds=result.seconds, draws=int(result.draws.shape[0]),
    )
    _after_chain(run_id)
    return "sampled"


def _after_chain(run_id: str) -> None:
    """Combine when every chain is stored (checked under the run's row lock)."""
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return
        done = RunChain.objects.filter(run=run, state=ChainState.DONE).count()
        if done < run.chains:
            return
        # Two chains finishing together both get here: only one combines.  A
        # combine claimed longer ago than the stale limit is taken over (its
        # worker died), so a redelivered task still finishes the run.
        now = timezone.now()
        started = (run.timings or {}).get("combine_claimed_at")
        stale = getattr(settings, "TELLSTACK_RUN_STALE_SECONDS", 60)
        if run.combining and started and (now - datetime.fromisoformat(started)).total_seconds() < stale:
            return
        run.combining = True
        run.timings = {**(run.timings or {}), "combine_claimed_at": now.isoformat()}
        run.save(update_fields=["combining", "timings"])
    combine(run_id)


def combine(run_id: str) -> str:
    """Diagnostics, summaries, plots and NetCDF of a run whose chains are all stored (idempotent)."""
    run = Run.objects.select_related("project", "parent").filter(pk=run_id).first()
    if run is None or run.state in TERMINAL_STATES:
        return "skip"
    started = time.perf_counter()
    try:
        summary = compute_results(run)
    except FileNotFoundError:
        return "waiting"
    except Exception as exc:
        log.exception("combining run %s failed", run_id)
        _fail(run_id, None, {"code": "combine-failed", "message": str(exc) or type(exc).__name__,
                             "traceback": traceback.format_exc(limit=8)})
        return "failed"
    seconds = time.perf_counter() - started
    with transaction.atomic():
        locked = Run.objects.select_for_update().get(pk=run_id)
        if locked.state in TERMINAL_STATES:
            return "skip"
        chains = list(RunChain.objects.filter(run=locked).order_by("index"))
        locked.state = RunState.DONE
        locked.finished_at = timezone.now()
        locked.combining = False
        locked.summary = summary
        locked.converged = bool(summary["converged"])
        locked.timings = {
            "chain_seconds": [c.seconds for c in chains],
            "combine_seconds": seconds,
            "wall_seconds": (locked.finished_at - locked.started_at).total_seconds() if locked.started_at else None,
        }
        locked.save(update_fields=["state", "finished_at", "combining", "summary", "converged", "timings"])
    return "done"


@shared_task(name="runs.run_chain", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def run_chain_task(run_id: str, k: int) -> str:
    """Sample one chain of a run; see the module docstring."""
    return execute_chain(run_id, int(k))


@shared_task(name="runs.combine", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def combine_run_task(run_id: str) -> str:
    """Combine a run whose chains are all stored (recovery path; normally the last chain does it)."""
    return combine(run_id)
