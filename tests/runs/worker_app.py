"""The Celery app a test worker runs: the project's app with short redelivery times.

A chain's message is acknowledged late; after a worker dies, Redis hands it
out again once its visibility timeout has passed, and a chain whose
lease (``TELLSTACK_RUN_LEASE_SECONDS``, renewed by heartbeats) ran out is taken over.  Both
are shortened here so the worker tests finish in seconds.
"""

import os

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings")

import django  # noqa: E402

django.setup()

from django.conf import settings  # noqa: E402

from config.celery import app  # noqa: E402

settings.TELLSTACK_RUN_LEASE_SECONDS = float(os.environ.get("TELLSTACK_RUN_LEASE_SECONDS", "3"))
settings.TELLSTACK_RUN_HEARTBEAT_SECONDS = float(os.environ.get("TELLSTACK_RUN_HEARTBEAT_SECONDS", "0.5"))
app.conf.broker_transport_options = {
    "visibility_timeout": float(os.environ.get("TELLSTACK_TEST_VISIBILITY_TIMEOUT", "6")),
    "unacked_restore_interval": 1,
    "unacked_restore_throttle": 1,
}

__all__ = ["app"]
