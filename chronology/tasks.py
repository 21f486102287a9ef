"""Celery tasks of the chronology app.  Tasks take ids, never objects."""

from __future__ import annotations

from celery import shared_task

from chronology import jobs


@shared_task(bind=True, acks_late=True, max_retries=3, autoretry_for=(ConnectionError,), retry_backoff=True)
def run_order_check(self, job_id: str) -> None:
    """Full check of a project's record at the job's revision; stores a CheckReport."""

    def work(job, reporter):
        from chronology.order_service import store_check

        reporter.progress(0.1, force=True, step="compiling")
        stored = store_check(job.project, int(job.params["revision"]), job=job)
        return {"revision": stored.revision, "summary": stored.summary, "check_report_id": stored.pk}

    jobs.execute(job_id, work)
