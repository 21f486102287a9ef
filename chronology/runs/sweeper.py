"""The sweeper: nothing a worker left behind stays running for ever.

With a broker it runs as a Celery beat task (``runs.sweep`` every
``TELLSTACK_RUN_SWEEP_SECONDS``; the ``beat`` service of the compose file,
or ``celery worker -B``).  Each sweep, for runs that have not ended:

* a chain whose lease ran out (its worker died or hangs) goes back to the
  queue, or fails the run with ``chain-lost`` once it has been claimed
  ``TELLSTACK_RUN_MAX_ATTEMPTS`` times;
* with it, the run's chains queued for longer than a lease are sent again
  (the dead worker may have held their messages too, prefetched);
* a chain still queued ``TELLSTACK_RUN_RESEND_QUEUED_SECONDS`` after its
  message was sent, in a run no worker is sampling, is sent again (a message
  held by a dead worker only comes back after the broker's visibility
  timeout; a second copy is harmless, the lease turns it away);
* a run whose chains are all stored but which nobody is combining (or whose
  combine's claim has run out) is combined;
* a cancel no worker is left to honour is finished.

Without a broker (the embedded set-up) tasks run in the process that asked
for them (the request that submitted the run, or the run command), so there
is no beat and no one to requeue to.  The sweep runs instead:

* on the first request a process serves and then at most every
  ``TELLSTACK_RUN_SWEEP_SECONDS`` (:func:`sweep_on_request`, connected to
  ``request_started``), so the API and the pages both see it;
* whenever the API lists or reads a project's runs;
* when the run command starts.

A run whose process stopped (the server was restarted or killed, the command
interrupted) ends ``failed`` with ``interrupted`` and a plain reason:
at once when its chain was held by a process of this host that no longer
exists, otherwise when its lease has run out.  ``continue`` resumes it from
the chains it had stored.  It is not resumed by itself: that would sample
inside whichever request happened to come next.
"""

from __future__ import annotations

import logging
import threading
import time
from datetime import timedelta

from celery import current_app
from django.conf import settings
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from . import leases
from .dispatch import COMBINE_TASK, in_process, send_on_commit
from .models import TERMINAL_STATES, ChainState, Run, RunChain, RunState
from .outcomes import cancel_locked, fail_run
from .rounds import combine_fresh, send_chains

__all__ = ["sweep", "interrupted_error", "sweep_if_in_process", "sweep_on_request"]

_ACTIVE = [RunState.QUEUED, RunState.RUNNING]

log = logging.getLogger("chronology.runs")


def interrupted_error() -> dict:
    return {"code": "interrupted", "message": "the process sampling this run stopped before the run finished. "
            "Continue the run to resume it from the chains it had stored."}


def _eager() -> bool:
    return bool(current_app.conf.task_always_eager)


def sweep(*, project=None, requeue: bool | None = None) -> dict:
    """One sweep over the runs (of ``project``, or all); returns how many of each thing it did."""
    requeue = not _eager() if requeue is None else requeue
    now = timezone.now()
    runs = Run.objects.filter(state__in=_ACTIVE)
    if project is not None:
        runs = runs.filter(project=project)
    lease = timedelta(seconds=leases.lease_seconds())
    expired = RunChain.objects.filter(run__in=runs, state=ChainState.RUNNING).filter(
        Q(lease_expires_at__lt=now) | Q(lease_expires_at__isnull=True, heartbeat_at__lt=now - lease)
        | Q(lease_expires_at__isnull=True, heartbeat_at__isnull=True))
    counts = {"requeued": 0, "failed": 0, "resent": 0, "combined": 0, "cancelled": 0}
    # a chain whose holder is a process of this host that has ended needs no wait for its lease
    orphaned = {c.run_id for c in RunChain.objects.filter(run__in=runs, state=ChainState.RUNNING).only(
        "run_id", "worker") if not leases.holder_alive(c.worker)}
    for run_id in set(expired.values_list("run_id", flat=True)) | orphaned:
        _sweep_expired(run_id, requeue, counts)
    resend_before = now - timedelta(seconds=float(settings.TELLSTACK_RUN_RESEND_QUEUED_SECONDS))
    waiting = RunChain.objects.filter(run__in=runs, state=ChainState.QUEUED).filter(
        Q(enqueued_at__lt=resend_before) | Q(enqueued_at__isnull=True, run__created_at__lt=resend_before))
    for run_id in set(waiting.values_list("run_id", flat=True)):
        _resend_waiting(run_id, requeue, resend_before, counts)
    for run in runs.filter(Q(cancel_requested=True) | Q(combining=True) | Q(state=RunState.RUNNING)):
        _finish_idle(run.pk, requeue, counts)
    return counts


def _live(run: Run, now) -> bool:
    return any(leases.held(c, now) for c in RunChain.objects.filter(run=run, state=ChainState.RUNNING))


def _sweep_expired(run_id, requeue: bool, counts: dict) -> None:
    resend = []
    error = None
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return
        now = timezone.now()
        lease = timedelta(seconds=leases.lease_seconds())
        for chain in RunChain.objects.select_for_update().filter(run=run, state=ChainState.RUNNING):
            if leases.held(chain, now):
                continue
            if run.cancel_requested:
                chain.state = ChainState.CANCELLED
                chain.save(update_fields=["state"])
            elif not requeue:
                error = interrupted_error()
            elif chain.attempts >= leases.max_attempts():
                error = leases.lost_chain_error(chain.index, chain.attempts)
            else:
                chain.state, chain.enqueued_at, chain.lease_expires_at = ChainState.QUEUED, now, None
                chain.save(update_fields=["state", "enqueued_at", "lease_expires_at"])
                resend.append(chain.index)
        if run.cancel_requested and not _live(run, now) and not combine_fresh(run, now):
            cancel_locked(run)
            counts["cancelled"] += 1
            return
        if error is None and resend:
            # the worker that died may also have held messages of this run's queued chains (prefetched,
            # never started): those would only come back after the visibility timeout, so send them again
            # too (a second copy is harmless: the lease turns it away)
            held = RunChain.objects.filter(run=run, state=ChainState.QUEUED, enqueued_at__lt=now - lease).exclude(
                index__in=resend)
            extra = list(held.values_list("index", flat=True))
            held.update(enqueued_at=now)
            send_chains(str(run.pk), resend + extra)
            counts["requeued"] += len(resend)
            counts["resent"] += len(extra)
    if error is not None and fail_run(run_id, error, chain=error.get("chain")):
        counts["failed"] += 1


def _resend_waiting(run_id, requeue: bool, resend_before, counts: dict) -> None:
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES or _live(run, timezone.now()):
            return
        if not requeue:
            failed = True
        else:
            failed = False
            chains = RunChain.objects.filter(run=run, state=ChainState.QUEUED).filter(
                Q(enqueued_at__lt=resend_before) | Q(enqueued_at__isnull=True))
            indices = list(chains.values_list("index", flat=True))
            chains.update(enqueued_at=timezone.now())
            send_chains(str(run.pk), indices)
            counts["resent"] += len(indices)
    if failed and fail_run(run_id, interrupted_error()):
        counts["failed"] += 1


def _finish_idle(run_id, requeue: bool, counts: dict) -> None:
    """A cancel nobody honours, or a round nobody closes (all chains stored, no live combine)."""

    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None or run.state in TERMINAL_STATES:
            return
        now = timezone.now()
        if _live(run, now) or combine_fresh(run, now):
            return
        if run.cancel_requested:
            cancel_locked(run)
            counts["cancelled"] += 1
            return
        chains = list(RunChain.objects.filter(run=run))
        if len(chains) < run.chains or any(c.state != ChainState.DONE for c in chains):
            return
        # the last chain finishing closes the round itself: only step in once it had time to
        last = max((c.finished_at for c in chains if c.finished_at), default=None)
        if not run.combining and last is not None and now - last < timedelta(seconds=leases.lease_seconds()):
            return
        if not requeue:
            failed = True
        else:
            failed = False
            send_on_commit(COMBINE_TASK, str(run_id))
            counts["combined"] += 1
    if failed and fail_run(run_id, interrupted_error()):
        counts["failed"] += 1


def sweep_if_in_process(project) -> None:
    """With no broker nobody runs the periodic sweep, so reading a project's runs does it."""
    if in_process():
        sweep(project=project)


_last_request_sweep = {"at": None}
_request_sweep_lock = threading.Lock()


def sweep_on_request(**_kwargs) -> None:
    """``request_started`` receiver: without a broker, sweep on a process's first request, then now and then."""
    if not in_process():
        return
    now = time.monotonic()
    with _request_sweep_lock:
        last = _last_request_sweep["at"]
        if last is not None and now - last < float(settings.TELLSTACK_RUN_SWEEP_SECONDS):
            return
        _last_request_sweep["at"] = now
    try:
        sweep()
    except Exception:  # the request goes on; the next sweep tries again
        log.exception("sweeping model runs at the start of a request failed")

