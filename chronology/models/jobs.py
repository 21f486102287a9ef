"""A background job as users see it: the row in the database is the truth.

The broker only carries the job's id.  State, progress, result, error and
log lines are stored here, so nothing a user sees is lost when a worker or
the broker restarts.
"""

from __future__ import annotations

import uuid

from django.conf import settings
from django.db import models
from django.utils import timezone

from projects.models import Project


class JobState(models.TextChoices):
    QUEUED = "queued"
    RUNNING = "running"
    DONE = "done"
    FAILED = "failed"
    CANCELLED = "cancelled"


TERMINAL_STATES = frozenset({JobState.DONE, JobState.FAILED, JobState.CANCELLED})


class Job(models.Model):
    id = models.UUIDField(primary_key=True, default=uuid.uuid4, editable=False)
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="jobs")
    kind = models.CharField(max_length=40, help_text="e.g. order-check, alternatives.")
    state = models.CharField(max_length=10, choices=JobState.choices, default=JobState.QUEUED)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+")
    created_at = models.DateTimeField(default=timezone.now)
    started_at = models.DateTimeField(null=True, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    params = models.JSONField(default=dict)
    progress = models.FloatField(default=0.0, help_text="0 to 1.")
    progress_detail = models.JSONField(default=dict, blank=True)
    cancel_requested = models.BooleanField(default=False)
    attempts = models.PositiveSmallIntegerField(default=0)
    result = models.JSONField(null=True, blank=True)
    error = models.JSONField(null=True, blank=True)
    log = models.JSONField(default=list, blank=True)

    class Meta:
        ordering = ["-created_at"]
        indexes = [models.Index(fields=["project", "kind", "created_at"])]

    def __str__(self) -> str:
        return f"{self.kind} {self.id} ({self.state})"

    @property
    def is_terminal(self) -> bool:
        return self.state in TERMINAL_STATES
