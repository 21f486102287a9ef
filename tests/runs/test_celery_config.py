"""The broker settings runs rely on to survive a killed worker."""

from __future__ import annotations

from pathlib import Path

from django.conf import settings

from chronology.runs import tasks
from config.celery import app

ROOT = Path(__file__).resolve().parents[2]


def test_chain_and_combine_tasks_are_acknowledged_late_and_rejected_back_when_their_worker_dies():
    for task in (tasks.run_chain_task, tasks.combine_run_task):
        assert task.acks_late is True and task.reject_on_worker_lost is True


def test_the_visibility_timeout_outlasts_the_longest_run_budget():
    # a message handed out again while its chain is still sampled only costs a slot, but it should not happen
    timeout = app.conf.broker_transport_options["visibility_timeout"]
    assert timeout > settings.TELLSTACK_RUN_MAX_BUDGET_SECONDS


def test_beat_sweeps_more_often_than_a_lease_lasts_and_drops_sweeps_that_waited_a_period():
    entry = app.conf.beat_schedule["sweep-model-runs"]
    assert entry["task"] == "runs.sweep" and entry["task"] in app.tasks
    assert entry["schedule"] <= settings.TELLSTACK_RUN_LEASE_SECONDS
    assert entry["options"]["expires"] == entry["schedule"]


def test_a_heartbeat_comes_several_times_within_a_lease():
    from chronology.runs.leases import heartbeat_seconds, lease_seconds

    assert heartbeat_seconds() * 3 <= lease_seconds()


def test_the_compose_file_runs_one_beat_beside_the_workers():
    text = (ROOT / "docker-compose.yml").read_text()
    assert "\n  beat:\n" in text and '["celery", "-A", "config", "beat"' in text
    assert '["celery", "-A", "config", "worker"' in text
