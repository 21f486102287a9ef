"""Running background work as database-backed jobs.

``submit`` creates the job row first and enqueues the Celery task only when
the transaction commits (so a worker never looks for a row that is not
there).  ``execute`` wraps the work in start → run → finish: it is idempotent
(a job already finished is left alone, so a redelivered task does nothing),
records progress and log lines through a ``Reporter``, honours cancellation,
and stores expected domain errors as a failed state with their reason
rather than treating them as crashes.
"""

from __future__ import annotations

import time
import traceback
from typing import Callable

from django.db import transaction
from django.utils import timezone

from chronology.engine.errors import EngineError
from chronology.models import Job, JobState
from projects.record.errors import RecordError


class JobCancelled(Exception):
    """Raised inside work when the user asked for the job to stop."""


class Reporter:
    """Progress, log lines and cancellation checks for running work.

    Progress writes are rate-limited so a tight loop does not flood the database.
    """

    def __init__(self, job: Job, min_interval: float = 0.5):
        self.job = job
        self.min_interval = min_interval
        self._last = 0.0

    def progress(self, fraction: float, force: bool = False, **detail) -> None:
        now = time.monotonic()
        if not force and now - self._last < self.min_interval:
            return
        self._last = now
        fraction = max(0.0, min(1.0, float(fraction)))
        Job.objects.filter(pk=self.job.pk).update(progress=fraction, progress_detail=detail)
        self.job.progress = fraction
        self.job.progress_detail = detail

    def log(self, message: str) -> None:
        self.job.log = [*(self.job.log or []), {"at": timezone.now().isoformat(), "message": message}]
        Job.objects.filter(pk=self.job.pk).update(log=self.job.log)

    def cancelled(self) -> bool:
        return Job.objects.filter(pk=self.job.pk, cancel_requested=True).exists()

    def check_cancel(self) -> None:
        if self.cancelled():
            raise JobCancelled()


def submit(project, user, kind: str, params: dict, task) -> Job:
    """Create a queued job and enqueue ``task(job_id)`` when the transaction commits."""
    job = Job.objects.create(project=project, kind=kind, params=params, created_by=user)
    transaction.on_commit(lambda: task.delay(str(job.pk)))
    return job


def cancel(job: Job) -> Job:
    """Ask a job to stop; a queued job is cancelled at once."""
    Job.objects.filter(pk=job.pk).update(cancel_requested=True)
    Job.objects.filter(pk=job.pk, state=JobState.QUEUED).update(state=JobState.CANCELLED, finished_at=timezone.now())
    job.refresh_from_db()
    return job


def execute(job_id, work: Callable[[Job, Reporter], dict]) -> Job | None:
    """Run ``work(job, reporter)`` for the job, storing its outcome on the row."""
    with transaction.atomic():
        job = Job.objects.select_for_update().filter(pk=job_id).first()
        if job is None or job.is_terminal:
            return job
        if job.cancel_requested:
            job.state, job.finished_at = JobState.CANCELLED, timezone.now()
            job.save(update_fields=["state", "finished_at"])
            return job
        job.state = JobState.RUNNING
        job.started_at = job.started_at or timezone.now()
        job.attempts += 1
        job.save(update_fields=["state", "started_at", "attempts"])
    reporter = Reporter(job)
    try:
        result = work(job, reporter)
    except JobCancelled:
        _finish(job, JobState.CANCELLED)
    except (EngineError, RecordError) as exc:
        error = exc.as_dict() if isinstance(exc, EngineError) else exc.as_error()
        _finish(job, JobState.FAILED, error=error)
    except Exception as exc:  # a crash: keep the reason for the user, then let Celery see it
        _finish(job, JobState.FAILED, error={"code": "crashed", "message": str(exc) or type(exc).__name__,
                                              "traceback": traceback.format_exc(limit=8)})
        raise
    else:
        _finish(job, JobState.DONE, result=result)
    job.refresh_from_db()
    return job


def _finish(job: Job, state: str, *, result=None, error=None) -> None:
    fields = {"state": state, "finished_at": timezone.now(), "result": result, "error": error}
    if state == JobState.DONE:
        fields["progress"] = 1.0
    Job.objects.filter(pk=job.pk).update(**fields)
