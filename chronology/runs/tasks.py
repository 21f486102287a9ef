"""Celery tasks of model runs: one task per chain segment, the round's end, and the sweeper.

Every chain task is acknowledged late and rejected back to the queue when
its worker process dies (``acks_late``, ``reject_on_worker_lost``), and is
idempotent, so any number of deliveries of one message do the work once:

* a chain whose draws are stored (for this run's model hash and seed, as many
  as the run now asks for) is not sampled again: the task only checks whether
  the round is over;
* a chain leased to another live worker is left to it (``busy``); a chain
  whose lease ran out, or whose holder is a dead process on this host, is
  taken over (:mod:`chronology.runs.leases`);
* a run that has ended is left alone.

A chain that has draws from earlier rounds samples only the missing ones, as
a new segment from its own seed (``SeedSequence(entropy, spawn_key=(chain,
draws stored))``; the first segment uses ``chain_seeds``), and appends them
to its file, so the same model, seed and settings give identical draws
whatever was interrupted on the way.

The kernels are compiled (or loaded from the disk cache) before a chain
claims its lease, and the seconds it took are stored as the chain's compile
time, apart from its sampling time.

Cancellation and lost leases: the sampler calls a check every few hundred
sweeps; it stops on the run's ``cancel_requested`` flag, when the run has
ended, and when a heartbeat finds that this process no longer holds the
chain's lease (the sweeper gave it to another worker).
"""

from __future__ import annotations

import time
from types import SimpleNamespace
from typing import Callable

import numpy as np
from celery import shared_task
from django.db import transaction
from django.utils import timezone

from chronology.engine.errors import EngineError, SamplingCancelled
from chronology.engine.sampler import chain_seeds, flatten, run_chain

from . import kernels, leases
from .models import TERMINAL_STATES, ChainState, Run, RunChain
from .outcomes import cancel_locked, crash_error, fail_run
from .results import load_chain, load_model, write_chain_file
from .rounds import after_chain, combine

__all__ = ["run_chain_task", "combine_run_task", "sweep_runs_task", "execute_chain", "combine", "CHECK_EVERY",
           "segment_seed"]

#: Sweeps between progress reports and cancel checks.
CHECK_EVERY = 250
#: Seconds between heartbeats when the settings ask for less (tests shorten it).
_PROGRESS_INTERVAL = None


def _interval() -> float:
    return leases.heartbeat_seconds() if _PROGRESS_INTERVAL is None else _PROGRESS_INTERVAL


def segment_seed(entropy: int, n_chains: int, k: int, have: int) -> np.random.SeedSequence:
    """The seed of chain ``k``'s next segment, given the ``have`` draws it already stores."""
    if have == 0:
        return chain_seeds(entropy, max(n_chains, k + 1))[k]
    return np.random.SeedSequence(entropy, spawn_key=(k, have))


def _append(run: Run, k: int, result) -> SimpleNamespace:
    """The chain file's draws followed by ``result``'s (the first segment's start state is kept)."""
    old = load_chain(run, k) if result is not None else None
    if old is None:
        return result
    return SimpleNamespace(
        chain=k, event_keys=result.event_keys, evidence_keys=result.evidence_keys,
        draws=np.concatenate([old["draws"], result.draws]), outliers=np.concatenate([old["outliers"], result.outliers]),
        initial=old["initial"], seconds=float(old["seconds"]) + result.seconds,
    )


def execute_chain(run_id: str, k: int, on_progress: Callable[[int, int, int], None] | None = None, *,
                  dispatch: bool = True) -> str:
    """Sample what chain ``k`` of run ``run_id`` still needs (idempotent); returns what was done.

    ``on_progress(k, sweeps_done, total)`` is called on every report, for a
    terminal progress bar.  ``dispatch=False`` (in-process runs) leaves the
    chains of a further round to the caller instead of sending them to the
    workers.
    """
    waited = kernels.ensure_compiled()
    c = leases.claim(run_id, k, compile_seconds=waited)
    if c.decision == "stored":
        after_chain(run_id, dispatch=dispatch)
        return "stored"
    if c.decision == "lost":
        fail_run(run_id, leases.lost_chain_error(k, c.chain.attempts), chain=k)
        return "failed"
    if c.decision != "sample":
        return c.decision
    run, chain = c.run, c.chain
    iterations = c.need * run.thin
    total = run.warmup + iterations
    last = {"beat": 0.0, "stop": False}

    def progress(done: int) -> None:
        if on_progress is not None:
            on_progress(k, done, total)
        now = time.monotonic()
        if done < total and now - last["beat"] < _interval():
            return
        last["beat"] = now
        if not leases.renew(chain.pk, done):
            last["stop"] = True  # the sweeper gave the chain to someone else
        else:
            row = Run.objects.filter(pk=run_id).values("cancel_requested", "state").first()
            last["stop"] = row is None or row["cancel_requested"] or row["state"] in TERMINAL_STATES

    try:
        model = load_model(run)
        seed = segment_seed(int(run.seed_entropy), run.chains, k, c.have)
        result = run_chain(flatten(model), seed, chain=k, iterations=iterations, warmup=run.warmup, thin=run.thin,
                           progress=progress, cancel=lambda: last["stop"], check_every=CHECK_EVERY)
        merged = _append(run, k, result)
        write_chain_file(run.chain_path(k), merged, model_hash=run.model_hash, seed_entropy=run.seed_entropy)
    except SamplingCancelled:
        return _stopped(run_id, chain.pk)
    except EngineError as exc:
        fail_run(run_id, {"code": exc.code, "message": exc.message, "chain": k}, chain=k)
        return "failed"
    except Exception:  # a crash: the user gets a reason and a log reference, the log the traceback
        fail_run(run_id, crash_error("crashed", f"chain {k} of the run", chain=k), chain=k)
        return "failed"
    RunChain.objects.filter(pk=chain.pk).update(
        state=ChainState.DONE, sweeps_done=total, finished_at=timezone.now(), heartbeat_at=timezone.now(),
        lease_expires_at=None, seconds=float(merged.seconds), draws=int(merged.draws.shape[0]),
        iterations_done=int(merged.draws.shape[0]) * run.thin, segments=chain.segments + 1, attempts=0,
    )
    after_chain(run_id, dispatch=dispatch)
    return "sampled"


def _stopped(run_id: str, chain_pk: int) -> str:
    """The sampler stopped on a check: cancelled, the run ended, or the lease was lost."""
    with transaction.atomic():
        run = Run.objects.select_for_update().get(pk=run_id)
        mine = RunChain.objects.filter(pk=chain_pk, worker=leases.worker_name(), state=ChainState.RUNNING)
        if run.cancel_requested:
            mine.update(state=ChainState.CANCELLED, finished_at=timezone.now(), lease_expires_at=None)
            cancel_locked(run)
            return "cancelled"
        if run.state in TERMINAL_STATES:
            mine.update(state=ChainState.CANCELLED, finished_at=timezone.now(), lease_expires_at=None)
            return "cancelled"
    return "lease-lost"


@shared_task(name="runs.run_chain", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def run_chain_task(run_id: str, k: int) -> str:
    """Sample one chain of a run; see the module docstring."""
    return execute_chain(run_id, int(k))


@shared_task(name="runs.combine", acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def combine_run_task(run_id: str) -> str:
    """End a run whose chains are all stored (recovery path; normally the last chain does it)."""
    return after_chain(run_id)


@shared_task(name="runs.sweep", ignore_result=True)
def sweep_runs_task() -> dict:
    """Requeue chains whose lease ran out, fail those out of attempts, finish stuck cancels (Celery beat)."""
    from .sweeper import sweep

    return sweep()
