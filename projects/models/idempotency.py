"""Stored responses for POSTs carrying an ``Idempotency-Key``, replayed on retry."""

from django.conf import settings
from django.db import models


class IdempotencyRecord(models.Model):
    class State(models.TextChoices):
        RUNNING = "running"
        DONE = "done"

    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE)
    key = models.CharField(max_length=200)
    method = models.CharField(max_length=8)
    path = models.CharField(max_length=500)
    body_digest = models.CharField(max_length=64)
    state = models.CharField(max_length=8, choices=State.choices, default=State.RUNNING)
    status_code = models.PositiveSmallIntegerField(null=True)
    response_body = models.JSONField(null=True)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["user", "key"], name="idempotency_key_unique_per_user")]
