"""Named, revocable API tokens: one per tablet or app, recorded as the device of each change.

Only a SHA-256 digest of the key is stored; the key itself is shown once, when
the token is created.
"""

from __future__ import annotations

import hashlib
import secrets

from django.conf import settings
from django.db import models
from django.utils import timezone


def digest(key: str) -> str:
    return hashlib.sha256(key.encode()).hexdigest()


class ApiTokenQuerySet(models.QuerySet):
    def active(self):
        return self.filter(revoked_at__isnull=True)


class ApiToken(models.Model):
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="api_tokens")
    name = models.CharField(max_length=100, help_text="The device or app, e.g. 'trench tablet 2'.")
    prefix = models.CharField(max_length=8, db_index=True)
    key_digest = models.CharField(max_length=64, unique=True)
    created_at = models.DateTimeField(auto_now_add=True)
    last_used_at = models.DateTimeField(null=True, blank=True)
    revoked_at = models.DateTimeField(null=True, blank=True)

    objects = ApiTokenQuerySet.as_manager()

    class Meta:
        ordering = ["user_id", "id"]

    def __str__(self) -> str:
        return f"{self.name} ({self.prefix}…)"

    @classmethod
    def issue(cls, user, name: str) -> tuple["ApiToken", str]:
        """Create a token and return it with its key (the only time the key is known)."""
        key = secrets.token_urlsafe(32)
        token = cls.objects.create(user=user, name=name, prefix=key[:8], key_digest=digest(key))
        return token, key

    @classmethod
    def authenticate(cls, key: str) -> "ApiToken | None":
        # Unordered and sliced: this runs on every request, and .first()'s
        # ORDER BY only costs planning time for a unique lookup.
        found = list(cls.objects.active().select_related("user").filter(key_digest=digest(key)).order_by()[:1])
        return found[0] if found else None

    def revoke(self) -> None:
        if self.revoked_at is None:
            self.revoked_at = timezone.now()
            self.save(update_fields=["revoked_at"])

    @property
    def is_active(self) -> bool:
        return self.revoked_at is None
