"""Runs in-process (eager Celery): end to end, reproducibility, cancel, continue, idempotency."""

from __future__ import annotations

import json

import arviz as az
import numpy as np
import pytest

from chronology.engine.posterior import CAUTION
from chronology.runs import tasks
from chronology.runs.models import ChainState, Run, RunChain, RunState
from chronology.runs.results import read_chain_file
from chronology.runs.service import cancel_run, continue_run, submit_run

from projects.models import Role

from .conftest import SMALL


def _submit(site, user, **extra):
    from django.db import connection

    # tests run inside one transaction: send the chain tasks as the commit would
    with pytest.MonkeyPatch.context() as mp:
        sent = []
        mp.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: sent.append(fn))
        run = submit_run(site["version"].project, site["version"], user, **{**SMALL, "seed": 7, **extra})
    assert connection.in_atomic_block
    for fn in sent:
        fn()
    run.refresh_from_db()
    return run


@pytest.mark.django_db
def test_a_run_goes_from_queued_to_done_with_every_artefact(site, users):
    run = _submit(site, users[Role.ANALYST])
    assert run.state == RunState.DONE, run.error
    for name in ("model.json", "chain-0.npz", "chain-1.npz", "samples.nc", "results.json", "plot.svg", "plot.png"):
        assert run.path(name).exists(), name
    assert all(c.state == ChainState.DONE and c.sweeps_done == 500 for c in run.chain_rows.all())
    assert set(run.library_versions) >= {"numpy", "scipy", "arviz", "numba"}
    assert run.curves[0]["checksum"] == site["curve"].checksum


@pytest.mark.django_db
def test_results_give_hpd_ranges_medians_questions_and_outliers_with_the_caution(site, users):
    run = _submit(site, users[Role.ANALYST])
    results = json.loads(run.path("results.json").read_text())
    assert results["caution"] == CAUTION and results["run"] == str(run.pk)
    assert results["curve_names"][0].startswith("TELLSTACK-SYNTHETIC-1")
    assert "Nicholls & Jones" in results["prior_text"]
    event = next(e for e in results["events"] if e["key"] == f"ctx:{site['contexts']['1003'].id}")
    assert set(event["hpd"]) == {"68.3", "95.4"}
    assert "BC" in event["median_text"] or "AD" in event["median_text"]
    assert event["median_cal_bp"] == pytest.approx(1950 - event["median"])
    assert sum(event["density"]) == pytest.approx(1.0)
    undated = next(e for e in results["events"] if e["key"] == f"ctx:{site['contexts']['1004'].id}")
    assert undated["estimated_from_order_only"] is True
    kinds = {q["kind"]: q for q in results["questions"]}
    assert set(kinds) == {"duration", "precedence", "gap"}
    # the stratigraphy puts 1003 below 1006, so the order probability is one
    assert kinds["precedence"]["probability"] == 1.0
    assert kinds["duration"]["mcse"] is not None and kinds["duration"]["mean"] > 0
    assert {o["chance_assumed"] for o in results["outliers"]} == {0.05}
    assert all(0.0 <= o["chance_estimated"] <= 1.0 for o in results["outliers"])
    assert run.summary["convergence"]["converged"] == run.converged


@pytest.mark.django_db
def test_samples_are_stored_as_inference_data(site, users):
    run = _submit(site, users[Role.ANALYST])
    idata = az.from_netcdf(str(run.path("samples.nc")), engine="h5netcdf")
    assert idata.posterior["date"].shape == (2, 400, len(json.loads(run.path("model.json").read_text())["events"]))
    assert idata.posterior.attrs["model_hash"] == run.model_hash
    assert "specialist" in idata.posterior.attrs["caution"]


@pytest.mark.django_db
def test_the_same_seed_gives_identical_stored_results(site, users):
    a = _submit(site, users[Role.ANALYST])
    b = _submit(site, users[Role.ANALYST])
    assert a.model_hash == b.model_hash
    for k in range(2):
        assert np.array_equal(read_chain_file(a.chain_path(k))["draws"], read_chain_file(b.chain_path(k))["draws"])
    ra = json.loads(a.path("results.json").read_text())
    rb = json.loads(b.path("results.json").read_text())
    assert ra["events"] == rb["events"] and ra["questions"] == rb["questions"]


@pytest.mark.django_db
def test_a_different_seed_gives_different_draws(site, users):
    a = _submit(site, users[Role.ANALYST])
    b = _submit(site, users[Role.ANALYST], seed=8)
    assert not np.array_equal(read_chain_file(a.chain_path(0))["draws"], read_chain_file(b.chain_path(0))["draws"])


@pytest.mark.django_db
def test_cancel_stops_a_running_chain(site, users, monkeypatch):
    with monkeypatch.context() as mp:
        mp.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: None)
        run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=20000,
                         warmup=100, seed=3)
    seen = []

    def on_progress(k, done, total):
        if not seen:
            cancel_run(Run.objects.get(pk=run.pk))
        seen.append(done)

    monkeypatch.setattr(tasks, "_PROGRESS_INTERVAL", 0.0)
    assert tasks.execute_chain(str(run.pk), 0, on_progress=on_progress) == "cancelled"
    assert tasks.execute_chain(str(run.pk), 1) == "skip"
    run.refresh_from_db()
    assert run.state == RunState.CANCELLED
    assert max(seen) < 20100
    assert not run.chain_path(0).exists()


@pytest.mark.django_db
def test_cancelling_a_queued_run_cancels_it_at_once(site, users, monkeypatch):
    monkeypatch.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: None)
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], **SMALL)
    run = cancel_run(run)
    assert run.state == RunState.CANCELLED
    assert tasks.execute_chain(str(run.pk), 0) == "skip"


@pytest.mark.django_db
def test_a_redelivered_chain_is_not_sampled_again(site, users, monkeypatch):
    run = _submit(site, users[Role.ANALYST])
    before = run.chain_path(0).stat().st_mtime_ns
    called = []
    monkeypatch.setattr(tasks, "run_chain", lambda *a, **k: called.append(1))
    assert tasks.execute_chain(str(run.pk), 0) == "skip"  # the run is done
    RunChain.objects.filter(run=run, index=0).update(state=ChainState.RUNNING)
    Run.objects.filter(pk=run.pk).update(state=RunState.RUNNING)
    assert tasks.execute_chain(str(run.pk), 0) == "stored"
    assert not called and run.chain_path(0).stat().st_mtime_ns == before


@pytest.mark.django_db
def test_a_chain_left_by_a_dead_worker_is_taken_over(site, users, monkeypatch):
    from django.utils import timezone

    monkeypatch.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: None)
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], **{**SMALL, "seed": 7})
    stale = timezone.now() - timezone.timedelta(hours=1)
    RunChain.objects.filter(run=run).update(state=ChainState.RUNNING, worker="gone:1", heartbeat_at=stale)
    assert tasks.execute_chain(str(run.pk), 0) == "sampled"
    fresh = timezone.now()
    RunChain.objects.filter(run=run, index=1).update(heartbeat_at=fresh)
    assert tasks.execute_chain(str(run.pk), 1) == "busy"


@pytest.mark.django_db
def test_a_run_that_has_not_converged_says_so_and_can_be_continued(site, users, monkeypatch):
    run = _submit(site, users[Role.ANALYST], iterations=100, warmup=0)
    assert run.converged is False
    results = json.loads(run.path("results.json").read_text())
    assert results["convergence"]["warning"].startswith("NOT CONVERGED")
    assert results["convergence"]["failing"]
    sent = []
    monkeypatch.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: sent.append(fn))
    more = continue_run(run, users[Role.ANALYST], iterations=150)
    for fn in sent:
        fn()
    more.refresh_from_db()
    assert more.state == RunState.DONE and more.parent_id == run.pk
    idata = az.from_netcdf(str(more.path("samples.nc")), engine="h5netcdf")
    # the parent's 100 draws per chain come first, then the 150 new ones
    assert idata.posterior.sizes["draw"] == 250
    parent = az.from_netcdf(str(run.path("samples.nc")), engine="h5netcdf")
    assert np.array_equal(idata.posterior["date"].values[:, :100], parent.posterior["date"].values)
