"""Celery tasks of the exchange app, and starting them.  Tasks take ids, never objects."""

from __future__ import annotations

from celery import shared_task

from chronology import jobs
from chronology.models import Job

from .package.schemas import TABLES
from .package_jobs import JOB_KIND, file_name, package_dir, write_to


def start_export(project, user) -> Job:
    """Queue the writing of ``project``'s package (the job row first, the task on commit)."""
    return jobs.submit(project, user, JOB_KIND, {"revision": project.revision}, export_package)


def export_work(job: Job, reporter: jobs.Reporter) -> dict:
    names = [t.name for t in TABLES]

    def on_table(name: str) -> None:
        reporter.check_cancel()
        reporter.progress(names.index(name) / len(names), step=f"writing {name}")

    project = job.project
    project.refresh_from_db()
    name = file_name(project, project.revision)
    path = package_dir() / str(job.pk) / name
    descriptor = write_to(project, path, on_table)
    return {"file_name": name, "bytes": path.stat().st_size, "revision": descriptor["tellstack:revision"],
            "head_digest": descriptor["tellstack:head_digest"],
            "record_digest": descriptor["tellstack:record_digest"]}


@shared_task(bind=True, acks_late=True, max_retries=3, autoretry_for=(ConnectionError,), retry_backoff=True)
def export_package(self, job_id: str) -> None:
    """Write a project's package for an export job; the job's result names the file."""
    jobs.execute(job_id, export_work)
