"""Runs on a REAL Celery worker against Redis and PostgreSQL.

The worker is started as a subprocess (``celery -A tests.runs.worker_app
worker``, the project's app with short redelivery times) and reads the same
test database, so these tests use committed transactions.  Skipped unless
the database is PostgreSQL and the broker is a reachable Redis.
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
    )
    return env


class Worker:
    """A celery worker in its own process group, so killing it kills its pool too."""

    def __init__(self, env, log: Path):
        self.env, self.log, self.proc = env, log, None

    def start(self):
        args = [sys.executable, "-m", "celery", "-A", "tests.runs.worker_app", "worker", "-l", "warning", "-c", "2",
                "-P", "prefork", "--without-gossip", "--without-mingle", "--without-heartbeat",
                "-n", f"runs-test-{uuid.uuid4().hex[:8]}@%h"]
        self.proc = subprocess.Popen(args, cwd=ROOT, env=self.env, stdout=self.log.open("ab"),
                                     stderr=subprocess.STDOUT, start_new_session=True)

    def kill(self):
        if self.proc is not None and self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait(timeout=10)

    def stop(self):
        if self.proc is None or self.proc.poll() is not None:
            return
        os.killpg(self.proc.pid, signal.SIGTERM)
        try:
            self.proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            self.kill()


@pytest.fixture
def worker(worker_env, tmp_path):
    from config.celery import app

    app.control.purge()  # messages left by an earlier session would only be skipped, but cost time
    w = Worker(worker_env, tmp_path / "worker.log")
    w.start()
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


def test_a_real_worker_runs_two_chains_to_done(site, users, worker):
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=2000,
                     warmup=500, seed=5)
    run = _wait(run.pk, lambda r: r.is_terminal, 90, worker)
    assert run.state == RunState.DONE, run.error
    assert {c.state for c in run.chain_rows.all()} == {ChainState.DONE}
    assert run.path("samples.nc").exists() and run.path("plot.svg").exists()
    assert run.summary["events"]


def test_a_run_survives_a_killed_worker(site, users, worker):
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=60000, converge=False,
                     warmup=500, seed=6)
    _wait(run.pk, lambda r: RunChain.objects.filter(run=r, sweeps_done__gt=0).exists(), 60, worker)
    worker.kill()
    assert Run.objects.get(pk=run.pk).state == RunState.RUNNING
    assert not RunChain.objects.filter(run=run, state=ChainState.DONE).exists()
    worker.start()
    run = _wait(run.pk, lambda r: r.is_terminal, 120, worker)
    assert run.state == RunState.DONE, run.error
    # every chain was finished by the new worker (a finished segment clears its claim count)
    assert all(c.state == ChainState.DONE and c.segments >= 1 for c in run.chain_rows.all())
