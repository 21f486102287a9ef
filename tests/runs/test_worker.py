"""Runs on a REAL Celery worker against Redis and PostgreSQL, killed with SIGKILL in the middle.

The worker and a beat are started as subprocesses (``celery -A
tests.runs.worker_app worker`` and ``beat``: the project's app with a short
lease, heartbeat and sweep period) and read the same test database, so these
tests use committed transactions.  The broker's visibility timeout is left
long, so recovery comes from the leases and the sweeper alone, as in
production.  Skipped unless the database is PostgreSQL and the broker is a
reachable Redis.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest
from django.conf import settings
from django.db import connection

from chronology.runs.models import ChainState, Run, RunChain, RunState
from chronology.runs.service import submit_run
from projects.models import Role

pytestmark = [pytest.mark.real_worker, pytest.mark.django_db(transaction=True)]

ROOT = Path(__file__).resolve().parents[2]


def _redis_ok(url: str) -> bool:
    try:
        import redis

        return bool(redis.Redis.from_url(url, socket_connect_timeout=1, socket_timeout=1).ping())
    except Exception:  # any failure means: no usable broker here
        return False


@pytest.fixture
def worker_env(tmp_path):
    if connection.vendor != "postgresql":
        pytest.skip("the worker tests need PostgreSQL (a worker process cannot share an SQLite test database)")
    url = os.environ.get("CELERY_BROKER_URL") or ""
    if not url.startswith("redis://") or not _redis_ok(url):
        pytest.skip("the worker tests need a reachable Redis broker in CELERY_BROKER_URL")
    db = connection.settings_dict
    auth = db["USER"] + (f":{db['PASSWORD']}" if db.get("PASSWORD") else "")
    env = dict(os.environ)
    env.pop("TELLSTACK_TEST_DB_NAME", None)
    env.update(
        DATABASE_URL=f"postgres://{auth}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}",
        TELLSTACK_MEDIA_DIR=str(settings.MEDIA_ROOT),
        DJANGO_SETTINGS_MODULE="config.settings",
        PYTHONPATH=str(ROOT),
        # recovery must come from the leases and the sweeper, not from the broker handing messages back
        TELLSTACK_TEST_VISIBILITY_TIMEOUT="3600",
        TELLSTACK_RUN_SWEEP_SECONDS="1",
        TELLSTACK_RUN_LEASE_SECONDS="3",
        TELLSTACK_RUN_HEARTBEAT_SECONDS="0.5",
    )
    return env


def _celery(*args) -> list[str]:
    return [sys.executable, "-m", "celery", "-A", "tests.runs.worker_app", *args]


class Worker:
    """A celery worker (and, like the compose file, a beat of its own) each in its own process group."""

    def __init__(self, env, log: Path, schedule: Path):
        self.env, self.log, self.schedule = env, log, schedule
        self.proc = self.beat = None

    def _spawn(self, args):
        return subprocess.Popen(args, cwd=ROOT, env=self.env, stdout=self.log.open("ab"), stderr=subprocess.STDOUT,
                                start_new_session=True)

    def start(self):
        self.proc = self._spawn(_celery("worker", "-l", "warning", "-c", "2", "-P", "prefork", "--without-gossip",
                                        "--without-mingle", "--without-heartbeat",
                                        "-n", f"runs-test-{uuid.uuid4().hex[:8]}@%h"))

    def start_beat(self):
        self.beat = self._spawn(_celery("beat", "-l", "warning", "--schedule", str(self.schedule)))

    def kill(self):
        """SIGKILL the whole worker: the main process and its pool."""
        if self.proc is not None and self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait(timeout=10)

    def pool_pids(self) -> set[int]:
        out = subprocess.run(["ps", "-o", "pid=", "--ppid", str(self.proc.pid)], capture_output=True, text=True)
        return {int(p) for p in out.stdout.split()}

    def stop(self):
        """End the worker and beat at once: each test has seen its run end, nothing is left to finish."""
        for proc in (self.proc, self.beat):
            if proc is not None and proc.poll() is None:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait(timeout=10)


@pytest.fixture
def worker(worker_env, tmp_path):
    from config.celery import app

    app.control.purge()  # messages left by an earlier session would only be skipped, but cost time
    w = Worker(worker_env, tmp_path / "worker.log", tmp_path / "beat-schedule")
    w.start()  # the worker starts while the test builds its site (requested first)
    yield w
    w.stop()
    connection.close()


def _wait(run_id, predicate, timeout: float, worker: Worker):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        run = Run.objects.get(pk=run_id)
        if predicate(run):
            return run
        time.sleep(0.2)
    log = worker.log.read_text(errors="replace")[-3000:] if worker.log.exists() else ""
    pytest.fail(f"timed out; run is {Run.objects.get(pk=run_id).state}; worker log:\n{log}")


def _long_run(site, users, seed):
    # long enough to be killed in the middle (a few seconds per chain), small enough to end soon after
    return submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=20000,
                      warmup=500, converge=False, seed=seed)


def _sampling(run_id, worker):
    """Wait until both chains are being sampled; returns their rows."""
    _wait(run_id, lambda r: RunChain.objects.filter(run=r, state=ChainState.RUNNING, sweeps_done__gt=0).count() == 2,
          60, worker)
    return list(RunChain.objects.filter(run_id=run_id).order_by("index"))


def test_a_run_ends_done_after_the_pool_process_sampling_a_chain_is_killed(worker, site, users):
    # no beat here: the broker hands the message straight back (reject_on_worker_lost) and the new pool
    # process takes the chain over at once, since the process holding its lease is gone
    run = _long_run(site, users, 6)
    chains = _sampling(run.pk, worker)
    pid = int(chains[0].worker.rpartition(":")[2])
    assert pid in worker.pool_pids()  # the pool child, not the worker's main process
    os.kill(pid, signal.SIGKILL)
    started = time.monotonic()
    run = _wait(run.pk, lambda r: r.is_terminal, 120, worker)
    assert run.state == RunState.DONE, run.error
    assert time.monotonic() - started < 120
    rows = {c.index: c for c in run.chain_rows.all()}
    assert all(c.state == ChainState.DONE for c in rows.values())
    assert rows[0].worker != chains[0].worker  # another pool process took the chain over
    assert run.path("samples.nc").exists() and run.path("plot.svg").exists() and run.summary["events"]
    # each chain's wait for the kernels (warmed when its pool process started) is kept apart from its sampling
    assert all(c.compile_seconds is not None and c.seconds > 0 for c in rows.values())
    assert len(run.timings["compile_seconds"]) == len(run.timings["chain_seconds"]) == 2


def test_a_run_ends_done_after_the_whole_worker_is_killed_and_a_new_one_starts(worker, site, users):
    worker.start_beat()
    run = _long_run(site, users, 7)
    before = _sampling(run.pk, worker)
    worker.kill()
    assert Run.objects.get(pk=run.pk).state == RunState.RUNNING
    assert not RunChain.objects.filter(run=run, state=ChainState.DONE).exists()
    worker.start()
    started = time.monotonic()
    run = _wait(run.pk, lambda r: r.is_terminal, 120, worker)
    assert run.state == RunState.DONE, run.error
    assert time.monotonic() - started < 120
    after = {c.index: c for c in run.chain_rows.all()}
    # both chains were finished by the new worker's pool, after the sweeper requeued them
    assert all(after[c.index].worker != c.worker and after[c.index].state == ChainState.DONE for c in before)
