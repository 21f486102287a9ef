"""The sweeper: a chain a worker left behind is requeued, or fails the run with a reason; cancels always end.

A "dead worker" here is a claim made through :func:`chronology.runs.leases.claim`
under another worker's name whose lease is then left to run out, which is
what a worker killed in the middle of a chain leaves in the database.
"""

from __future__ import annotations

import time
from datetime import timedelta

import pytest
from django.utils import timezone

from chronology.runs import leases, rounds, sweeper, tasks
from chronology.runs.models import ChainState, Run, RunChain, RunState
from chronology.runs.service import cancel_run, continue_run, submit_run
from projects.models import Role

from .conftest import SMALL

pytestmark = pytest.mark.django_db

#: A worker name on another host: the lease is all this host knows of it.
ELSEWHERE = "another-host.invalid:4242"


@pytest.fixture
def sent(monkeypatch):
    """Chain and combine tasks the code asks to send (none is run)."""
    out = []
    monkeypatch.setattr(rounds, "send_on_commit", lambda name, *args: out.append((name, *args)))
    monkeypatch.setattr(sweeper, "send_on_commit", lambda name, *args: out.append((name, *args)))
    return out


@pytest.fixture
def queued(site, users, monkeypatch, sent):
    """A submitted run whose chain messages went nowhere."""
    return submit_run(site["version"].project, site["version"], users[Role.ANALYST], **{**SMALL, "seed": 21})


def claim_as(monkeypatch, run, k, worker=ELSEWHERE):
    with monkeypatch.context() as mp:
        mp.setattr(leases, "worker_name", lambda: worker)
        decision = leases.claim(str(run.pk), k).decision
    assert decision == "sample"
    return RunChain.objects.get(run=run, index=k)


def expire(run, k):
    """The lease of chain ``k`` ran out (no heartbeat came)."""
    past = RunChain.objects.get(run=run, index=k).heartbeat_at - timedelta(hours=1)
    RunChain.objects.filter(run=run, index=k).update(lease_expires_at=past, heartbeat_at=past)


def test_a_chain_whose_lease_ran_out_goes_back_to_the_queue(queued, monkeypatch, sent):
    claim_as(monkeypatch, queued, 0)
    expire(queued, 0)
    sent.clear()
    counts = sweeper.sweep(requeue=True)
    assert counts["requeued"] == 1
    chain = RunChain.objects.get(run=queued, index=0)
    assert chain.state == ChainState.QUEUED and chain.lease_expires_at is None
    assert sent == [("runs.run_chain", str(queued.pk), 0)]
    assert Run.objects.get(pk=queued.pk).state == RunState.RUNNING


def test_the_queued_chains_a_dead_worker_may_have_prefetched_are_sent_again_with_the_lost_one(queued, monkeypatch,
                                                                                           sent):
    claim_as(monkeypatch, queued, 0)
    expire(queued, 0)
    RunChain.objects.filter(run=queued, index=1).update(enqueued_at=timezone.now() - timedelta(hours=1))
    sent.clear()
    counts = sweeper.sweep(requeue=True)
    assert (counts["requeued"], counts["resent"]) == (1, 1)
    assert sorted(sent) == [("runs.run_chain", str(queued.pk), 0), ("runs.run_chain", str(queued.pk), 1)]


def test_a_chain_whose_worker_still_renews_its_lease_is_left_alone(queued, monkeypatch, sent):
    claim_as(monkeypatch, queued, 0)
    sent.clear()
    assert sweeper.sweep(requeue=True)["requeued"] == 0
    assert RunChain.objects.get(run=queued, index=0).state == ChainState.RUNNING
    assert sent == []


def test_the_requeued_chain_is_sampled_by_the_next_delivery(queued, monkeypatch):
    claim_as(monkeypatch, queued, 0)
    expire(queued, 0)
    sweeper.sweep(requeue=True)
    assert tasks.execute_chain(str(queued.pk), 0) == "sampled"
    assert tasks.execute_chain(str(queued.pk), 1) == "sampled"
    run = Run.objects.get(pk=queued.pk)
    assert run.state == RunState.DONE, run.error


def test_a_chain_lost_as_often_as_the_attempts_allow_fails_the_run_with_a_clear_reason(queued, monkeypatch,
                                                                                       settings):
    settings.TELLSTACK_RUN_MAX_ATTEMPTS = 2
    for _attempt in range(2):
        claim_as(monkeypatch, queued, 1)
        expire(queued, 1)
        sweeper.sweep(requeue=True)
    run = Run.objects.get(pk=queued.pk)
    assert run.state == RunState.FAILED
    assert run.error["code"] == "chain-lost" and run.error["chain"] == 1 and run.error["attempts"] == 2
    assert "chain 1 was started 2 times" in run.error["message"] and "Continue" in run.error["message"]
    assert RunChain.objects.get(run=run, index=1).state == ChainState.FAILED


def test_a_message_delivered_again_after_the_last_attempt_fails_the_run_instead_of_sampling(queued, monkeypatch,
                                                                                           settings):
    settings.TELLSTACK_RUN_MAX_ATTEMPTS = 1
    claim_as(monkeypatch, queued, 0)
    expire(queued, 0)
    monkeypatch.setattr(tasks, "run_chain", lambda *a, **k: pytest.fail("a lost chain must not be sampled again"))
    assert tasks.execute_chain(str(queued.pk), 0) == "failed"
    assert Run.objects.get(pk=queued.pk).error["code"] == "chain-lost"


def test_cancel_of_a_run_whose_chain_a_dead_worker_holds_ends_at_the_next_sweep(queued, monkeypatch):
    claim_as(monkeypatch, queued, 0)
    run = cancel_run(queued)
    # the lease still holds: its worker may yet see the request at its next heartbeat
    assert run.state == RunState.RUNNING and run.cancel_requested
    expire(queued, 0)
    assert sweeper.sweep(requeue=True)["cancelled"] == 1
    run.refresh_from_db()
    assert run.state == RunState.CANCELLED and run.finished_at is not None
    assert set(RunChain.objects.filter(run=run).values_list("state", flat=True)) == {ChainState.CANCELLED}


def test_cancel_ends_at_the_next_sweep_without_a_broker_too(queued, monkeypatch):
    claim_as(monkeypatch, queued, 0)
    cancel_run(queued)
    expire(queued, 0)
    sweeper.sweep(requeue=False)
    assert Run.objects.get(pk=queued.pk).state == RunState.CANCELLED


def test_cancel_ends_at_once_when_the_chain_holder_is_a_dead_process_on_this_host(queued, monkeypatch):
    claim_as(monkeypatch, queued, 0, worker=f"{leases.this_host()}:{dead_pid()}")
    assert cancel_run(queued).state == RunState.CANCELLED


def test_cancel_of_a_run_stuck_in_a_dead_combine_ends_once_the_combine_lease_runs_out(queued, monkeypatch,
                                                                                      settings):
    with monkeypatch.context() as mp:
        mp.setattr(tasks, "after_chain", lambda *a, **k: "waiting")  # the combining worker dies before it starts
        for k in range(2):
            assert tasks.execute_chain(str(queued.pk), k) == "sampled"
    claimed = timezone.now().isoformat()
    Run.objects.filter(pk=queued.pk).update(combining=True, timings={"combine_claimed_at": claimed})
    assert cancel_run(Run.objects.get(pk=queued.pk)).state == RunState.RUNNING
    settings.TELLSTACK_RUN_COMBINE_LEASE_SECONDS = 0.05
    time.sleep(0.1)
    assert sweeper.sweep(requeue=True)["cancelled"] == 1
    assert Run.objects.get(pk=queued.pk).state == RunState.CANCELLED


def test_a_round_nobody_combined_is_combined_by_the_sweeper(queued, monkeypatch, sent, settings):
    with monkeypatch.context() as mp:
        mp.setattr(tasks, "after_chain", lambda *a, **k: "waiting")
        for k in range(2):
            tasks.execute_chain(str(queued.pk), k)
    settings.TELLSTACK_RUN_LEASE_SECONDS = 0.05
    time.sleep(0.1)
    sent.clear()
    assert sweeper.sweep(requeue=True)["combined"] == 1
    assert sent == [("runs.combine", str(queued.pk))]


def test_a_failed_run_can_be_continued_and_keeps_the_chains_it_had_stored(queued, monkeypatch, settings):
    settings.TELLSTACK_RUN_MAX_ATTEMPTS = 1
    assert tasks.execute_chain(str(queued.pk), 0) == "sampled"
    stored = queued.chain_path(0).stat().st_mtime_ns
    claim_as(monkeypatch, queued, 1)
    expire(queued, 1)
    sweeper.sweep(requeue=True)
    assert Run.objects.get(pk=queued.pk).state == RunState.FAILED
    resumed = continue_run(Run.objects.get(pk=queued.pk), None)
    assert resumed.pk == queued.pk and resumed.state == RunState.QUEUED and resumed.error is None
    assert resumed.rounds[-1]["error"]["code"] == "chain-lost"
    assert tasks.execute_chain(str(queued.pk), 0) == "stored"
    assert tasks.execute_chain(str(queued.pk), 1) == "sampled"
    run = Run.objects.get(pk=queued.pk)
    assert run.state == RunState.DONE, run.error
    assert queued.chain_path(0).stat().st_mtime_ns == stored


def test_a_cancelled_run_can_be_continued_to_done(queued):
    assert cancel_run(queued).state == RunState.CANCELLED
    continue_run(Run.objects.get(pk=queued.pk), None)
    for k in range(2):
        tasks.execute_chain(str(queued.pk), k)
    assert Run.objects.get(pk=queued.pk).state == RunState.DONE


def dead_pid() -> int:
    """The id of a process of this host that has ended."""
    import subprocess
    import sys

    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def _combine_claimed_by(run, worker, monkeypatch):
    with monkeypatch.context() as mp:
        mp.setattr(tasks, "after_chain", lambda *a, **k: "waiting")
        for k in range(2):
            tasks.execute_chain(str(run.pk), k)
    Run.objects.filter(pk=run.pk).update(combining=True, timings={
        "combine_claimed_at": timezone.now().isoformat(), "combine_worker": worker})


def test_a_combine_whose_pool_process_was_killed_is_taken_over_by_the_redelivered_message(queued, monkeypatch):
    _combine_claimed_by(queued, f"{leases.this_host()}:{dead_pid()}", monkeypatch)
    assert tasks.execute_chain(str(queued.pk), 1) == "stored"
    run = Run.objects.get(pk=queued.pk)
    assert run.state == RunState.DONE, run.error


def test_a_combine_held_by_a_live_process_is_not_taken_over(queued, monkeypatch, sent):
    _combine_claimed_by(queued, "another-host.invalid:9", monkeypatch)
    tasks.execute_chain(str(queued.pk), 1)
    sent.clear()
    assert sweeper.sweep(requeue=True)["combined"] == 0
    assert Run.objects.get(pk=queued.pk).state == RunState.RUNNING and sent == []
