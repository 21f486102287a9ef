"""Revisions and the change log.

Each write-path transaction makes one ``Revision`` of a project's record and
one ``ChangeLogEntry`` per object it changes.  Workflow entries (actions on
interpretation versions) are logged between revisions without making one;
each is its own link of the chain and carries its ``digest``.  The chain is
described in ``projects.record.history``: every field of every entry, the
state rows each revision writes and closes, and every workflow entry are
covered, so the record's history is tamper-evident.  Neither table is ever
edited or deleted from (the ORM refuses, and on PostgreSQL so do triggers).
"""

from __future__ import annotations

from django.conf import settings
from django.db import models

from .append_only import AppendOnlyModel, AppendOnlyQuerySet
from .tenancy import Project
from .tokens import ApiToken


class Revision(AppendOnlyModel):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="revisions")
    number = models.PositiveIntegerField()
    parent_digest = models.CharField(max_length=64, blank=True)
    digest = models.CharField(max_length=64)
    created_at = models.DateTimeField()
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+")
    user_name = models.CharField(max_length=150, blank=True)
    token = models.ForeignKey(ApiToken, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    device = models.CharField(max_length=100, blank=True)
    request_id = models.CharField(max_length=64, blank=True, help_text="The server's id of the request.")
    client_request_id = models.CharField(max_length=64, blank=True, help_text="The id the client sent, if any.")
    summary = models.CharField(max_length=300, blank=True)

    objects = AppendOnlyQuerySet.as_manager()

    class Meta:
        base_manager_name = "objects"
        ordering = ["project_id", "number"]
        constraints = [models.UniqueConstraint(fields=["project", "number"], name="revision_number_unique")]

    def __str__(self) -> str:
        return f"{self.project.code}@{self.number}"


class ChangeLogEntry(AppendOnlyModel):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="changes")
    revision = models.PositiveIntegerField()
    created_at = models.DateTimeField()
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+")
    user_name = models.CharField(max_length=150, blank=True)
    token = models.ForeignKey(ApiToken, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    device = models.CharField(max_length=100, blank=True)
    request_id = models.CharField(max_length=64, blank=True, help_text="The server's id of the request.")
    client_request_id = models.CharField(max_length=64, blank=True, help_text="The id the client sent, if any.")
    action = models.CharField(max_length=64, help_text="Dotted code, e.g. record.relationship.retracted.")
    object_kind = models.CharField(max_length=32)
    object_id = models.BigIntegerField(null=True)
    object_repr = models.CharField(max_length=200)
    before = models.JSONField(null=True)
    after = models.JSONField(null=True)
    message = models.TextField(blank=True)
    digest = models.CharField(
        max_length=64, blank=True, help_text="Chain link of a workflow entry; empty for an entry of a revision."
    )

    objects = AppendOnlyQuerySet.as_manager()

    class Meta:
        base_manager_name = "objects"
        ordering = ["project_id", "revision", "id"]
        indexes = [
            models.Index(fields=["project", "revision"]),
            models.Index(fields=["project", "object_kind", "object_id"]),
        ]

    def __str__(self) -> str:
        return f"r{self.revision} {self.action} {self.object_repr}"

    def changed_keys(self) -> dict:
        """Only the keys whose value differs between before and after."""
        before, after = self.before or {}, self.after or {}
        keys = sorted(set(before) | set(after))
        return {k: {"before": before.get(k), "after": after.get(k)} for k in keys if before.get(k) != after.get(k)}
