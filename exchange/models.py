"""What the exchange app keeps of its own: the imports made into each project.

The record itself is written by the record's write path; this table only
says that a project's history was replayed from a package, by whom, when,
from which package (its SHA-256) and which source revisions and runs the
replayed ones stand for.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models

from projects.models import Project


class PackageImport(models.Model):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="package_imports")
    imported_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    imported_at = models.DateTimeField(auto_now_add=True)
    package_sha256 = models.CharField(max_length=64)
    source_project = models.CharField(max_length=100, help_text="Organisation and code of the source project.")
    source_head_digest = models.CharField(max_length=64, blank=True)
    revisions = models.PositiveIntegerField(default=0)
    source_digests = models.JSONField(default=dict, help_text="Revision number -> digest in the source project.")
    run_keys = models.JSONField(default=dict, help_text="Run id here -> the run's key in the package.")
    unknown_actors = models.JSONField(default=list, help_text="Actor names with no account in this organisation.")

    class Meta:
        ordering = ["project_id", "id"]

    def __str__(self) -> str:
        return f"import of {self.source_project} into {self.project.code}"
