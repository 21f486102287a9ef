"""The Celery app a test worker (and beat) runs: the project's app with a short lease and heartbeat.

A chain's message is acknowledged late; a chain whose lease
(``TELLSTACK_RUN_LEASE_SECONDS``, renewed by heartbeats) ran out is requeued
by the sweeper, which beat sends every ``TELLSTACK_RUN_SWEEP_SECONDS``.  The
tests shorten the lease, heartbeat and sweep period through the environment
and may set the broker's visibility timeout
(``TELLSTACK_TEST_VISIBILITY_TIMEOUT``) so that redelivery by the broker does
or does not take part.
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
