"""Without a broker (the embedded default): a run whose process stopped ends ``interrupted`` and can resume.

Tasks run in the process that asked for them, so nobody can requeue a chain
whose process died.  The sweep runs on a process's first request and then
now and then (any page or endpoint), and whenever runs are read.
"""

from __future__ import annotations

import os
import subprocess
import sys
from datetime import timedelta

import pytest
from django.utils import timezone

from chronology.runs import leases, sweeper
from chronology.runs.models import ChainState, Run, RunChain, RunState
from chronology.runs.service import start_inline
from projects.models import Role

from .conftest import SMALL

pytestmark = pytest.mark.django_db


def dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def _runs(project, *parts):
    return f"/api/v1/projects/{project.code}/runs/" + "".join(f"{p}/" for p in parts)


@pytest.fixture
def fresh_process(monkeypatch):
    """The throttle of the request-time sweep as a newly started server process has it."""
    monkeypatch.setitem(sweeper._last_request_sweep, "at", None)


@pytest.fixture
def inline_run(site, users):
    return start_inline(site["version"].project, site["version"], users[Role.ANALYST], **{**SMALL, "seed": 41})


def hold(monkeypatch, run, worker):
    with monkeypatch.context() as mp:
        mp.setattr(leases, "worker_name", lambda: worker)
        assert leases.claim(str(run.pk), 0).decision == "sample"


def test_a_run_whose_server_process_died_ends_interrupted_on_the_next_request_of_any_kind(
        inline_run, monkeypatch, client_for, fresh_process):
    hold(monkeypatch, inline_run, f"{leases.this_host()}:{dead_pid()}")  # its lease still runs
    assert client_for(Role.VIEWER).get("/api/v1/health/").status_code == 200
    run = Run.objects.get(pk=inline_run.pk)
    assert run.state == RunState.FAILED and run.error["code"] == "interrupted"
    assert "Continue the run" in run.error["message"]


def test_a_run_sampled_by_a_live_process_is_left_alone(inline_run, monkeypatch, client_for, fresh_process):
    hold(monkeypatch, inline_run, f"{leases.this_host()}:{os.getppid()}")
    client_for(Role.VIEWER).get(_runs(inline_run.project, inline_run.pk))
    assert Run.objects.get(pk=inline_run.pk).state == RunState.RUNNING


def test_a_run_whose_lease_ran_out_ends_interrupted_when_it_is_read(inline_run, monkeypatch, client_for):
    hold(monkeypatch, inline_run, "another-host.invalid:5")
    past = timezone.now() - timedelta(hours=1)
    RunChain.objects.filter(run=inline_run, index=0).update(lease_expires_at=past, heartbeat_at=past)
    body = client_for(Role.VIEWER).get(_runs(inline_run.project, inline_run.pk)).json()
    assert body["state"] == "failed" and body["error"]["code"] == "interrupted"


def test_requests_sweep_at_most_once_a_period(monkeypatch, fresh_process, settings, client_for, db):
    settings.TELLSTACK_RUN_SWEEP_SECONDS = 3600
    calls = []
    monkeypatch.setattr(sweeper, "sweep", lambda **kw: calls.append(kw))
    client = client_for(Role.VIEWER)
    for _ in range(3):
        client.get("/api/v1/health/")
    assert len(calls) == 1


def test_an_interrupted_run_continues_in_process_to_done(inline_run, monkeypatch, client_for, fresh_process,
                                                         django_capture_on_commit_callbacks):
    hold(monkeypatch, inline_run, f"{leases.this_host()}:{dead_pid()}")
    client = client_for(Role.ANALYST)
    client.get("/api/v1/health/")
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(_runs(inline_run.project, inline_run.pk, "continue"), {}, format="json")
    assert response.status_code == 202
    run = Run.objects.get(pk=inline_run.pk)
    assert run.state == RunState.DONE, run.error
    assert set(RunChain.objects.filter(run=run).values_list("state", flat=True)) == {ChainState.DONE}
    assert run.rounds[-1]["error"]["code"] == "interrupted"
