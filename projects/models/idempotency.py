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
    #: Digests of the first body's parts (top-level fields, and each item of a list field), so a key
    #: reused with another body can be answered with the parts that differ.
    body_parts = models.JSONField(default=dict)
    created_at = models.DateTimeField(auto_now_add=True)
    #: While running: the holder's claim ends here. A request killed mid-way never clears its key;
    #: after this time a retry may claim the key and run the request again.
    lease_expires_at = models.DateTimeField(null=True)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["user", "key"], name="idempotency_key_unique_per_user")]
