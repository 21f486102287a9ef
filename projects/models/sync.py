"""Batches posted by field apps, kept so that a replayed batch returns the same answer."""

from django.conf import settings
from django.db import models

from .append_only import AppendOnlyModel, AppendOnlyQuerySet
from .tenancy import Project


class SyncBatch(AppendOnlyModel):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="+")
    batch_id = models.UUIDField()
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    revision = models.PositiveIntegerField()
    response = models.JSONField()
    #: The batch's items as canonical JSON text and its SHA-256: a replay must match them.
    body = models.TextField(blank=True, default="")
    body_digest = models.CharField(max_length=64, blank=True, default="")
    created_at = models.DateTimeField(auto_now_add=True)

    objects = AppendOnlyQuerySet.as_manager()

    class Meta:
        constraints = [models.UniqueConstraint(fields=["project", "batch_id"], name="sync_batch_unique")]
