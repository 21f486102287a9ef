"""Sending run tasks by their registered names.

The round and sweeper logic decides *that* a chain or a combine must run; the
task module runs them and calls back into that logic.  Sending by name (the
Celery app finds the task among those it discovered) keeps the deciding
modules from importing the task module that imports them.
"""

from __future__ import annotations

from django.db import transaction

from config.celery import app

__all__ = ["CHAIN_TASK", "COMBINE_TASK", "send_on_commit", "in_process"]

CHAIN_TASK = "runs.run_chain"
COMBINE_TASK = "runs.combine"


def send_on_commit(name: str, *args) -> None:
    """Send task ``name`` with ``args`` once the current transaction commits (eagerly, with no broker)."""
    transaction.on_commit(lambda: app.tasks[name].delay(*args))


def in_process() -> bool:
    """Whether tasks run in this process (no broker): the sweep then runs when runs are read."""
    return bool(app.conf.task_always_eager)
