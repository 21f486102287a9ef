"""The field record: contexts and physical relationships, append-only.

Rows here hold the *current* state and carry the revision in which they were
created and, if so, retracted.  ``RecordState`` is the exact temporal table
behind every read at a past revision: one row per version of each record
object, valid over ``[valid_from, valid_to)``.  Only
``projects.record.writes`` writes these tables.
"""

from __future__ import annotations

import uuid

from django.db import models
from django.db.models import Q

from .append_only import AppendOnlyModel, AppendOnlyQuerySet
from .tenancy import Project


class ContextKind(models.TextChoices):
    DEPOSIT = "deposit", "Deposit / layer"
    CUT = "cut", "Cut"
    FILL = "fill", "Fill"
    MASONRY = "masonry", "Masonry / structure"
    TIMBER = "timber", "Timber"
    SKELETON = "skeleton", "Skeleton / burial"
    OTHER = "other", "Other"


class RelationshipType(models.TextChoices):
    """Canonical types, stored as ``later <type> earlier`` (see engine.record_data)."""

    ABOVE = "above", "above"
    CUTS = "cuts", "cuts"
    FILLS = "fills", "fills"
    ABUTS = "abuts", "abuts"
    SAME_AS = "same_as", "same as"
    BONDED_WITH = "bonded_with", "bonded with"
    CONTEMPORARY_WITH = "contemporary_with", "contemporary with"


class Certainty(models.TextChoices):
    CERTAIN = "certain", "certain"
    UNCERTAIN = "uncertain", "uncertain"


class RecordedObject(models.Model):
    """Fields shared by every record object: identity, client id and lifetime."""

    project = models.ForeignKey(Project, on_delete=models.PROTECT)
    uid = models.UUIDField(default=uuid.uuid4, help_text="Client-generated id; makes retries idempotent.")
    created_revision = models.PositiveIntegerField()
    retracted_revision = models.PositiveIntegerField(null=True, blank=True)
    retraction_reason = models.TextField(blank=True)

    class Meta:
        abstract = True

    @property
    def is_active(self) -> bool:
        return self.retracted_revision is None


class Context(RecordedObject):
    label = models.CharField(max_length=64, help_text="Context number or label, unique in the project.")
    kind = models.CharField(max_length=16, choices=ContextKind.choices)
    description = models.TextField(blank=True)
    area = models.CharField(max_length=64, blank=True)
    top_level = models.FloatField(null=True, blank=True, help_text="Metres above datum.")
    base_level = models.FloatField(null=True, blank=True, help_text="Metres above datum.")

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [
            models.UniqueConstraint(
                fields=["project", "label"],
                condition=Q(retracted_revision__isnull=True),
                name="active_context_label_unique",
            ),
            models.UniqueConstraint(fields=["project", "uid"], name="context_uid_unique"),
        ]
        indexes = [models.Index(fields=["project", "retracted_revision"])]

    def __str__(self) -> str:
        return self.label


class Relationship(RecordedObject):
    type = models.CharField(max_length=20, choices=RelationshipType.choices)
    later = models.ForeignKey(Context, on_delete=models.PROTECT, related_name="+")
    earlier = models.ForeignKey(Context, on_delete=models.PROTECT, related_name="+")
    certainty = models.CharField(max_length=10, choices=Certainty.choices, default=Certainty.CERTAIN)
    recorded_as = models.CharField(max_length=20, help_text="The wording the recorder used, e.g. 'below'.")
    note = models.TextField(blank=True)

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [models.UniqueConstraint(fields=["project", "uid"], name="relationship_uid_unique")]
        indexes = [
            models.Index(fields=["project", "retracted_revision"]),
            models.Index(fields=["later", "earlier"]),
        ]

    def __str__(self) -> str:
        return f"{self.later_id} {self.type} {self.earlier_id}"


class RecordStateQuerySet(AppendOnlyQuerySet):
    updatable_fields = frozenset({"valid_to"})

    def at(self, revision: int) -> "RecordStateQuerySet":
        """The versions in force at ``revision``."""
        return self.filter(valid_from__lte=revision).filter(Q(valid_to__isnull=True) | Q(valid_to__gt=revision))


class RecordState(AppendOnlyModel):
    """One version of one record object, valid over revisions ``[valid_from, valid_to)``.

    ``data`` is exactly the representation the API serves, so a read at a past
    revision returns what a read at that revision returned then.
    """

    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="+")
    kind = models.CharField(max_length=32)
    object_id = models.BigIntegerField()
    valid_from = models.PositiveIntegerField()
    valid_to = models.PositiveIntegerField(null=True, blank=True)
    data = models.JSONField()

    objects = RecordStateQuerySet.as_manager()
    updatable_fields = frozenset({"valid_to"})

    class Meta:
        base_manager_name = "objects"
        ordering = ["project_id", "kind", "object_id", "valid_from"]
        indexes = [
            models.Index(fields=["project", "kind", "valid_from"]),
            models.Index(fields=["project", "kind", "valid_to"]),
            models.Index(fields=["project", "kind", "object_id"]),
        ]
