"""Background tasks of interpretations (Celery discovers this module)."""

from __future__ import annotations

from celery import shared_task

from chronology.jobs import execute


@shared_task(name="interpretations.analyse_version_alternatives", acks_late=True, ignore_result=True)
def analyse_version_alternatives(job_id: str) -> None:
    """Analyse the alternatives of the version named in the job's params."""
    from .alternatives_analysis import run

    execute(job_id, run)
