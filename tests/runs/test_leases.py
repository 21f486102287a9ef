"""Leases on chains: who may sample a chain, and when a claim is taken over."""

from __future__ import annotations

import os
import socket
import subprocess
import sys

import pytest

from chronology.runs import leases, rounds, tasks
from chronology.runs.models import ChainState, Run, RunChain, RunState
from chronology.runs.service import submit_run
from projects.models import Role

from .conftest import SMALL

pytestmark = pytest.mark.django_db


def dead_pid() -> int:
    """The id of a process of this host that has ended."""
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


@pytest.fixture
def queued(site, users, monkeypatch):
    monkeypatch.setattr(rounds, "send_on_commit", lambda name, *args: None)
    return submit_run(site["version"].project, site["version"], users[Role.ANALYST], **{**SMALL, "seed": 31})


def claim_as(monkeypatch, run, k, worker):
    with monkeypatch.context() as mp:
        mp.setattr(leases, "worker_name", lambda: worker)
        return leases.claim(str(run.pk), k).decision


def test_a_process_of_this_host_that_has_ended_holds_nothing():
    assert leases.holder_alive(f"{leases.this_host()}:{dead_pid()}") is False


def test_a_running_process_of_this_host_is_alive():
    assert leases.holder_alive(f"{leases.this_host()}:{os.getppid()}") is True


def test_a_process_of_another_host_is_taken_as_alive_until_its_lease_runs_out():
    assert leases.holder_alive(f"another-host.invalid:{dead_pid()}") is True


def test_a_process_of_another_pid_namespace_with_the_same_host_name_is_taken_as_alive():
    # containers sharing the host's name each number their own processes
    assert leases.holder_alive(f"{socket.gethostname()}/pid-ns-1:{dead_pid()}") is True


def test_a_claim_sets_a_lease_renewed_by_heartbeats(queued, settings):
    settings.TELLSTACK_RUN_LEASE_SECONDS = 60
    assert leases.claim(str(queued.pk), 0).decision == "sample"
    chain = RunChain.objects.get(run=queued, index=0)
    assert chain.state == ChainState.RUNNING and chain.attempts == 1 and chain.worker == leases.worker_name()
    assert 59 <= (chain.lease_expires_at - chain.heartbeat_at).total_seconds() <= 61
    assert leases.renew(chain.pk, 123) is True
    renewed = RunChain.objects.get(pk=chain.pk)
    assert renewed.sweeps_done == 123 and renewed.lease_expires_at > chain.lease_expires_at
    assert Run.objects.get(pk=queued.pk).state == RunState.RUNNING


def test_a_chain_leased_to_a_live_worker_elsewhere_is_busy(queued, monkeypatch):
    assert claim_as(monkeypatch, queued, 0, "another-host.invalid:1") == "sample"
    assert leases.claim(str(queued.pk), 0).decision == "busy"


def test_a_redelivered_chain_of_a_killed_pool_process_is_taken_over_at_once(queued, monkeypatch):
    # the pool process was killed: its lease still runs, but its process is gone
    assert claim_as(monkeypatch, queued, 0, f"{leases.this_host()}:{dead_pid()}") == "sample"
    assert tasks.execute_chain(str(queued.pk), 0) == "sampled"
    chain = RunChain.objects.get(run=queued, index=0)
    assert chain.state == ChainState.DONE and chain.worker == leases.worker_name()


def test_a_heartbeat_fails_once_another_worker_has_taken_the_chain(queued, monkeypatch):
    assert leases.claim(str(queued.pk), 0).decision == "sample"
    pk = RunChain.objects.get(run=queued, index=0).pk
    RunChain.objects.filter(pk=pk).update(worker="another-host.invalid:7")
    assert leases.renew(pk, 10) is False


def test_a_chain_stops_sampling_when_its_lease_is_taken_over(site, users, monkeypatch):
    monkeypatch.setattr(rounds, "send_on_commit", lambda name, *args: None)
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=1, iterations=50_000,
                     warmup=100, converge=False, seed=3)
    monkeypatch.setattr(tasks, "_PROGRESS_INTERVAL", 0.0)
    seen = []

    def on_progress(k, done, total):
        if not seen:  # the sweeper handed the chain to another worker
            RunChain.objects.filter(run=run, index=k).update(worker="another-host.invalid:8")
        seen.append(done)

    assert tasks.execute_chain(str(run.pk), 0, on_progress=on_progress) == "lease-lost"
    assert max(seen) < 50_100 and not run.chain_path(0).exists()
    assert RunChain.objects.get(run=run, index=0).worker == "another-host.invalid:8"
