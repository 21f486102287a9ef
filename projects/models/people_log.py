"""The organisation's log of who changed people and devices.

Adding a member, changing or removing a role, and issuing or revoking a
device token are not changes of any project's record, so they are logged
here, per organisation, with the actor, the request id and before/after —
the same shape as the record's change log, and as append-only.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models

from .append_only import AppendOnlyModel, AppendOnlyQuerySet
from .tenancy import Organisation


class PeopleLogEntry(AppendOnlyModel):
    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="people_log")
    created_at = models.DateTimeField()
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+")
    user_name = models.CharField(max_length=150, blank=True, help_text="The actor, copied.")
    request_id = models.CharField(max_length=64, blank=True)
    action = models.CharField(max_length=64, help_text="Dotted code, e.g. people.token.revoked.")
    subject = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+",
                                help_text="The person the action was about.")
    subject_name = models.CharField(max_length=150, blank=True)
    object_repr = models.CharField(max_length=200)
    before = models.JSONField(null=True)
    after = models.JSONField(null=True)

    objects = AppendOnlyQuerySet.as_manager()

    class Meta:
        ordering = ["organisation_id", "id"]
        indexes = [models.Index(fields=["organisation", "created_at"])]

    def __str__(self) -> str:
        return f"{self.action} {self.object_repr}"
