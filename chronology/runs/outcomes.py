"""How a run ends badly: failed with a user-facing reason, or cancelled.

Errors users see are a stable ``code`` and a plain ``message``; they never
carry a traceback, an exception's text or a server path.  What went wrong
inside is logged on the server with a short ``reference`` that the message
quotes, so an operator can find it.
"""

from __future__ import annotations

import logging
import uuid

from django.db import transaction
from django.utils import timezone

from .models import TERMINAL_STATES, ChainState, Run, RunChain, RunState

__all__ = ["fail_run", "crash_error", "cancel_locked", "USER_ERROR_KEYS"]

log = logging.getLogger("chronology.runs")

#: The only keys of a run's ``error`` shown to users.
USER_ERROR_KEYS = ("code", "message", "chain", "reference", "attempts", "field")


def crash_error(code: str, what: str, *, chain: int | None = None) -> dict:
    """Log the exception being handled and return the user-facing error that points to the log entry."""
    reference = uuid.uuid4().hex[:12]
    log.exception("%s (reference %s)", what, reference)
    error = {"code": code, "reference": reference,
             "message": f"{what}: an internal error stopped it. The details are in the server log under "
                        f"reference {reference}. Continue the run to try again."}
    if chain is not None:
        error["chain"] = chain
    return error


def fail_run(run_id, error: dict, *, chain: int | None = None) -> bool:
    """Mark the run failed with ``error`` (and chain ``chain`` failed); False if it had already ended."""
    with transaction.atomic():
        run = Run.objects.select_for_update().filter(pk=run_id).first()
        if run is None:
            return False
        now = timezone.now()
        if chain is not None:
            RunChain.objects.filter(run=run, index=chain).exclude(state=ChainState.DONE).update(
                state=ChainState.FAILED, finished_at=now, lease_expires_at=None)
        if run.state in TERMINAL_STATES:
            return False
        RunChain.objects.filter(run=run, state__in=[ChainState.QUEUED, ChainState.RUNNING]).update(
            state=ChainState.CANCELLED, lease_expires_at=None)
        run.state = RunState.FAILED
        run.error = {k: v for k, v in error.items() if k in USER_ERROR_KEYS}
        run.finished_at = now
        run.combining = False
        run.save(update_fields=["state", "error", "finished_at", "combining"])
        return True


def cancel_locked(run: Run) -> None:
    """End a run (locked by the caller) as cancelled; chains not stored are cancelled with it."""
    if run.state not in TERMINAL_STATES:
        run.state = RunState.CANCELLED
        run.finished_at = timezone.now()
        run.combining = False
        run.save(update_fields=["state", "finished_at", "combining"])
    RunChain.objects.filter(run=run, state__in=[ChainState.QUEUED, ChainState.RUNNING]).update(
        state=ChainState.CANCELLED, lease_expires_at=None)
