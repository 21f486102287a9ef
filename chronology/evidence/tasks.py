"""Background tasks of the evidence app (Celery discovers this module): large calibrations as jobs."""

from __future__ import annotations

from celery import shared_task

from chronology import jobs
from chronology.models import Job

from . import calibrate_request


def submit_calibration(project, user, revision: int, params: dict) -> Job:
    """Run a large calibration as a job (after commit); its result is ``calibrate_request.answer``'s."""
    return jobs.submit(project, user, calibrate_request.JOB_KIND, {**params, "at": revision}, calibrate_in_background)


def run_calibration(job: Job, reporter) -> dict:
    """The work of a calibration job (``chronology.jobs.execute`` wraps it)."""
    reporter.progress(0.05, force=True, step="reading")
    revision, found = calibrate_request.measurements(job.project, job.params)
    reporter.progress(0.2, force=True, step="calibrating", determinations=len(found))
    return calibrate_request.answer(revision, found, job.params)


@shared_task(name="evidence.calibrate", acks_late=True, ignore_result=True)
def calibrate_in_background(job_id: str) -> None:
    """Calibrate the determinations named in the job's params; the answer becomes the job's result."""
    jobs.execute(job_id, run_calibration)
