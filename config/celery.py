"""The Celery application.

Without a broker URL in the environment tasks run eagerly, in-process, so the
embedded single-user set-up needs no Redis.  Job state users see lives in the
database (see ``chronology.jobs``), never only in the broker.
"""

import os

from celery import Celery

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings")

app = Celery("tellstack")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()
