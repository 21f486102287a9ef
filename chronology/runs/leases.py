"""Leases on chains: who is sampling a chain, and until when that claim holds.

A worker claims a chain (:func:`claim`) under row locks of the run and the
chain, and holds it for ``TELLSTACK_RUN_LEASE_SECONDS``; its heartbeats
(:func:`renew`, every ``TELLSTACK_RUN_HEARTBEAT_SECONDS`` while sampling)
push the end of the lease on.  A claim that finds the chain leased to
someone else answers ``busy``, unless the lease has run out or its holder is
a process on this host that no longer exists (a killed pool process whose
task the broker handed straight back): then it takes the chain over.  The
sweeper (:mod:`chronology.runs.sweeper`) requeues chains whose lease ran out
when no message comes back for them.  A chain claimed
``TELLSTACK_RUN_MAX_ATTEMPTS`` times without finishing fails the run with a
clear reason instead of looping for ever.
"""

from __future__ import annotations

import os
import socket
from dataclasses import dataclass
from datetime import timedelta

from django.conf import settings
from django.db import transaction
from django.utils import timezone

from .models import TERMINAL_STATES, ChainState, Run, RunChain, RunState
from .outcomes import cancel_locked
from .results import load_chain

__all__ = ["lease_seconds", "heartbeat_seconds", "max_attempts", "this_host", "worker_name", "holder_alive",
           "lease_live", "held", "Claim", "claim", "renew", "stored_draws", "lost_chain_error"]


def lease_seconds() -> float:
    return float(settings.TELLSTACK_RUN_LEASE_SECONDS)


def heartbeat_seconds() -> float:
    # a heartbeat well inside the lease, so one slow report never loses it
    return min(float(settings.TELLSTACK_RUN_HEARTBEAT_SECONDS), lease_seconds() / 3)


def max_attempts() -> int:
    return max(1, int(settings.TELLSTACK_RUN_MAX_ATTEMPTS))


def this_host() -> str:
    """This host's name, and its process-id namespace where it has one.

    Containers sharing the host's name (host networking) each have their own
    process ids: only a holder of the same namespace can be looked up.
    """
    try:
        namespace = os.stat("/proc/self/ns/pid").st_ino
    except OSError:
        return socket.gethostname()
    return f"{socket.gethostname()}/pid-ns-{namespace}"


def worker_name() -> str:
    return f"{this_host()}:{os.getpid()}"


def holder_alive(worker: str) -> bool:
    """False only when ``worker`` names a process of THIS host (and namespace) that no longer exists."""
    host, _, pid = (worker or "").rpartition(":")
    if host != this_host() or not pid.isdigit():
        return True
    if int(pid) == os.getpid():
        return True
    try:
        os.kill(int(pid), 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, belongs to someone else
        return True
    return True


def lease_end(chain: RunChain):
    if chain.lease_expires_at is not None:
        return chain.lease_expires_at
    if chain.heartbeat_at is not None:
        return chain.heartbeat_at + timedelta(seconds=lease_seconds())
    return None


def lease_live(chain: RunChain, now=None) -> bool:
    """The chain is being sampled by a worker whose lease still holds."""
    end = lease_end(chain)
    return chain.state == ChainState.RUNNING and end is not None and end > (now or timezone.now())


def held(chain: RunChain, now=None) -> bool:
    """Someone may still be sampling the chain: its lease holds and its holder is not known to be dead."""
    return lease_live(chain, now) and holder_alive(chain.worker)


def stored_draws(run: Run, k: int) -> int:
    data = load_chain(run, k)
    return 0 if data is None else int(data["draws"].shape[0])


def lost_chain_error(k: int, attempts: int) -> dict:
    return {"code": "chain-lost", "chain": k, "attempts": attempts,
            "message": f"chain {k} was started {attempts} times and each time its worker stopped before it "
                       "finished (the worker died, was stopped or ran out of memory). Continue the run to try "
                       "again."}


@dataclass
class Claim:
    """What a chain task should do: ``sample``, ``stored``, ``busy``, ``skip`` or ``lost``."""

    decision: str
    run: Run | None = None
    chain: RunChain | None = None
    #: kept draws the chain has stored, and how many more it needs
    have: int = 0
    need: int = 0


def claim(run_id, k: int, *, compile_seconds: float | None = None) -> Claim:
    """Lock the run and chain ``k`` and decide what this process does with the chain."""
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return Claim("skip", run)
        chain = RunChain.objects.select_for_update().filter(run=run, index=k).first()
        if chain is None:
            return Claim("skip", run)
        have = stored_draws(run, k)
        target = run.iterations // run.thin
        if have >= target:
            if chain.state != ChainState.DONE:
                chain.state, chain.iterations_done = ChainState.DONE, run.iterations
                chain.lease_expires_at = None
                chain.save(update_fields=["state", "iterations_done", "lease_expires_at"])
            return Claim("stored", run, chain, have, 0)
        if run.cancel_requested:
            cancel_locked(run)
            return Claim("skip", run, chain)
        now = timezone.now()
        me = worker_name()
        if chain.worker != me and held(chain, now):
            return Claim("busy", run, chain, have, target - have)
        if chain.state == ChainState.RUNNING and chain.attempts >= max_attempts():
            return Claim("lost", run, chain, have, target - have)
        chain.state = ChainState.RUNNING
        chain.attempts += 1
        chain.worker = me
        chain.heartbeat_at = now
        chain.lease_expires_at = now + timedelta(seconds=lease_seconds())
        chain.started_at = chain.started_at or now
        chain.sweeps_done = 0
        chain.iterations_done = have * run.thin
        if compile_seconds is not None:
            chain.compile_seconds = (chain.compile_seconds or 0.0) + compile_seconds
        chain.save(update_fields=["state", "attempts", "worker", "heartbeat_at", "lease_expires_at", "started_at",
                                  "sweeps_done", "iterations_done", "compile_seconds"])
        if run.state == RunState.QUEUED:
            run.state = RunState.RUNNING
            run.started_at = run.started_at or now
            run.timings = {**(run.timings or {}), "budget_from": (run.timings or {}).get("budget_from")
                           or now.isoformat()}
            run.save(update_fields=["state", "started_at", "timings"])
        return Claim("sample", run, chain, have, target - have)


def renew(chain_pk: int, sweeps_done: int) -> bool:
    """Heartbeat: record progress and extend the lease; False when this process no longer holds it."""
    now = timezone.now()
    return bool(RunChain.objects.filter(pk=chain_pk, worker=worker_name(), state=ChainState.RUNNING).update(
        sweeps_done=sweeps_done, heartbeat_at=now, lease_expires_at=now + timedelta(seconds=lease_seconds())))
