"""Celery tasks of weighing and sensitivity runs.  Tasks take job ids, never objects."""

from __future__ import annotations

from celery import shared_task

from chronology import jobs


@shared_task(bind=True, acks_late=True, max_retries=3, autoretry_for=(ConnectionError,), retry_backoff=True)
def estimate_marginal_likelihood(self, job_id: str) -> None:
    """One candidate's marginal likelihood; the last candidate to finish combines the weighing."""
    from chronology.models import Job

    from .evidence_work import estimate, finish_if_complete

    try:
        jobs.execute(job_id, estimate)
    finally:  # a crash ends the job failed; the weighing still finishes with the others
        job = Job.objects.filter(pk=job_id).first()
        if job is not None and job.is_terminal:
            finish_if_complete(job.params["weighing"])


@shared_task(bind=True, acks_late=True, max_retries=3, autoretry_for=(ConnectionError,), retry_backoff=True)
def estimate_joint_readings(self, job_id: str) -> None:
    """One family of readings weighed jointly; the last job of the weighing to finish combines it."""
    from chronology.models import Job

    from .evidence_work import finish_if_complete
    from .joint_work import estimate_family

    try:
        jobs.execute(job_id, estimate_family)
    finally:
        job = Job.objects.filter(pk=job_id).first()
        if job is not None and job.is_terminal:
            finish_if_complete(job.params["weighing"])


@shared_task(bind=True, acks_late=True, max_retries=3, autoretry_for=(ConnectionError,), retry_backoff=True)
def run_sensitivity(self, job_id: str) -> None:
    """A version under a set of variations: how each boundary's median and ranges move."""
    from .sensitivity_work import run

    jobs.execute(job_id, run)
