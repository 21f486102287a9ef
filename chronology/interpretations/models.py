"""Interpretations of a project's record, as numbered, immutable versions.

An ``Interpretation`` is a named line of thought; each ``Version`` of it names
the record revision it was built on, its parent version, its author and a
message, and holds the content document (see ``content``).  A draft may be
edited; committing freezes it for ever and stores the SHA-256 of its canonical
content.  After that only its status moves on (committed → proposed →
approved → superseded, or rejected), and the guards below refuse any other
change, through ``save()`` and through ``QuerySet.update()`` alike.
``Reading`` marks the one approved version a project takes as current.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models

from projects.models import Project
from projects.models.append_only import AppendOnlyViolation


class Status(models.TextChoices):
    DRAFT = "draft"
    COMMITTED = "committed"
    PROPOSED = "proposed"
    APPROVED = "approved"
    REJECTED = "rejected"
    SUPERSEDED = "superseded"


#: Status changes the workflow allows; nothing ever goes back to draft.
TRANSITIONS = {
    Status.DRAFT: {Status.COMMITTED},
    Status.COMMITTED: {Status.PROPOSED},
    Status.PROPOSED: {Status.APPROVED, Status.REJECTED},
    Status.APPROVED: {Status.SUPERSEDED},
    Status.REJECTED: set(),
    Status.SUPERSEDED: set(),
}

#: What may still change on a committed version: its place in the workflow.
STATUS_FIELDS = frozenset({"status", "status_changed_at", "status_changed_by", "status_reason", "updated_at"})


class ImmutableVersion(AppendOnlyViolation):
    """An attempt to change or delete a committed version."""


class Interpretation(models.Model):
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="interpretations")
    name = models.CharField(max_length=120)
    description = models.TextField(blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [models.UniqueConstraint(fields=["project", "name"], name="interpretation_name_unique")]

    def __str__(self) -> str:
        return self.name


def _frozen_fields() -> list[str]:
    return [f.attname for f in Version._meta.concrete_fields if f.name not in STATUS_FIELDS and not f.primary_key]


class VersionQuerySet(models.QuerySet):
    def committed(self):
        return self.exclude(status=Status.DRAFT)

    def update(self, **kwargs):
        frozen = set(kwargs) - STATUS_FIELDS
        if frozen and self.committed().exists():
            raise ImmutableVersion(f"committed versions are immutable (fields {sorted(frozen)})")
        if kwargs.get("status") == Status.DRAFT and self.committed().exists():
            raise ImmutableVersion("a committed version never returns to draft")
        return super().update(**kwargs)

    def delete(self):
        if self.committed().exists():
            raise ImmutableVersion("committed versions are never deleted")
        return super().delete()


class Version(models.Model):
    interpretation = models.ForeignKey(Interpretation, on_delete=models.PROTECT, related_name="versions")
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="+")
    number = models.PositiveIntegerField()
    record_revision = models.PositiveIntegerField(help_text="The record revision the version is read against.")
    parent = models.ForeignKey("self", on_delete=models.PROTECT, null=True, blank=True, related_name="children")
    author = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    message = models.TextField(blank=True)
    content = models.JSONField()
    validity = models.JSONField(default=dict, help_text="The check of the content at its own revision.")
    is_valid = models.BooleanField(default=False)
    edits = models.PositiveIntegerField(default=0, help_text="Bumped by every edit of a draft; the ETag.")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)
    content_hash = models.CharField(max_length=64, blank=True)
    committed_at = models.DateTimeField(null=True, blank=True)
    status = models.CharField(max_length=12, choices=Status.choices, default=Status.DRAFT)
    status_changed_at = models.DateTimeField(null=True, blank=True)
    status_changed_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
                                          related_name="+")
    status_reason = models.TextField(blank=True)

    objects = VersionQuerySet.as_manager()

    class Meta:
        ordering = ["interpretation_id", "number"]
        constraints = [
            models.UniqueConstraint(fields=["interpretation", "number"], name="version_number_unique"),
            models.UniqueConstraint(fields=["interpretation"], condition=models.Q(status="approved"),
                                    name="one_approved_version_per_interpretation"),
        ]
        indexes = [models.Index(fields=["project", "status"])]

    def __str__(self) -> str:
        return f"{self.interpretation.name} v{self.number}"

    @property
    def is_draft(self) -> bool:
        return self.status == Status.DRAFT

    @property
    def etag(self) -> str:
        return f'"{self.pk}.{self.edits}"'

    def save(self, *args, **kwargs):
        if self.pk is not None and not self._state.adding:
            self._guard_saved_row(kwargs.get("update_fields"))
        super().save(*args, **kwargs)

    def _guard_saved_row(self, update_fields) -> None:
        stored = type(self).objects.filter(pk=self.pk).values(*_frozen_fields(), "status").first()
        if stored is None or stored["status"] == Status.DRAFT:
            return
        if self.status == Status.DRAFT:
            raise ImmutableVersion(f"{self} is committed and never returns to draft")
        names = _frozen_fields() if update_fields is None else [
            Version._meta.get_field(n).attname for n in update_fields if n not in STATUS_FIELDS
        ]
        changed = sorted(n for n in names if getattr(self, n) != stored[n])
        if changed:
            raise ImmutableVersion(f"{self} is committed; {', '.join(changed)} cannot change")

    def delete(self, *args, **kwargs):
        if type(self).objects.filter(pk=self.pk).committed().exists():
            raise ImmutableVersion(f"{self} is committed and is never deleted")
        return super().delete(*args, **kwargs)


class Reading(models.Model):
    """The project's current reading: one approved version."""

    project = models.OneToOneField(Project, on_delete=models.PROTECT, related_name="reading")
    version = models.ForeignKey(Version, on_delete=models.PROTECT, related_name="+")
    set_at = models.DateTimeField(auto_now=True)
    set_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
