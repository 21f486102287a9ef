"""Packages written in the background: the export job and where its file is kept.

A small project's package is written while the caller waits; a large one
(more change-log entries than ``TELLSTACK_PACKAGE_INLINE_CHANGES``) is
written by a job (``chronology.jobs``: the row first, the task on commit),
whose result names the file.  Files live under ``MEDIA_ROOT/packages/``,
one per job, and are written under a temporary name first so that a file
that exists is complete.
"""

from __future__ import annotations

from pathlib import Path

from django.conf import settings

from chronology.models import Job, JobState
from projects.models import ChangeLogEntry

from .package.writer import write_package

JOB_KIND = "package-export"


def inline_limit() -> int:
    return int(getattr(settings, "TELLSTACK_PACKAGE_INLINE_CHANGES", 5000))


def is_small(project) -> bool:
    """Whether the package is written while the caller waits (few change-log entries)."""
    return ChangeLogEntry.objects.filter(project=project).count() <= inline_limit()


def package_dir() -> Path:
    return Path(settings.MEDIA_ROOT) / "packages"


def file_name(project, revision: int) -> str:
    return f"{project.organisation.slug}-{project.code}-r{revision}.zip"


def job_file(job: Job) -> Path | None:
    """The finished package of an export job, or None."""
    if job.kind != JOB_KIND or job.state != JobState.DONE or not job.result:
        return None
    path = package_dir() / str(job.pk) / job.result["file_name"]
    return path if path.exists() else None


def write_to(project, path: Path, on_table=None) -> dict:
    """Write the package to ``path`` (through ``path.partial``); returns the descriptor."""
    path.parent.mkdir(parents=True, exist_ok=True)
    partial = path.with_name(path.name + ".partial")
    try:
        descriptor = write_package(project, partial, on_table=on_table)
        partial.replace(path)
    finally:
        partial.unlink(missing_ok=True)
    return descriptor
