"""Stored reports of the full order check of a project's record at a revision."""

from django.db import models

from projects.models import Project


class CheckReport(models.Model):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="check_reports")
    revision = models.PositiveIntegerField()
    created_at = models.DateTimeField(auto_now_add=True)
    job = models.ForeignKey("chronology.Job", on_delete=models.SET_NULL, null=True, blank=True, related_name="+")
    ok = models.BooleanField(help_text="No errors (warnings allowed).")
    summary = models.JSONField(default=dict)
    report = models.JSONField()

    class Meta:
        ordering = ["project_id", "-revision", "-id"]
        constraints = [models.UniqueConstraint(fields=["project", "revision"], name="one_check_per_revision")]
