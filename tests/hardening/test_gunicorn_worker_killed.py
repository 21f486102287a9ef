"""A gunicorn worker killed (SIGKILL) in the middle of a sync batch: the retry succeeds and nothing is doubled.

gunicorn runs as a subprocess with two workers against the test database, so
this test commits. To kill the worker while the batch is surely in progress,
the test holds the project's row lock (the lock every record write takes)
until the batch's database session waits on it; it then kills the worker that
holds the client's connection and lets the lock go. The killed request never
answered and left its ``Idempotency-Key`` running; once the key's lease has run
out, the same key and body are applied exactly once. Skipped unless the
database is PostgreSQL.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import threading
import time
import uuid
from pathlib import Path

import pytest
import requests
from django.conf import settings
from django.db import connection

from projects.models import ApiToken, Context, Relationship, Revision, Role

pytestmark = pytest.mark.django_db(transaction=True)

ROOT = Path(__file__).resolve().parents[2]
PORTS = range(8250, 8300)
LEASE_SECONDS = 3
#: Big enough to be a day's work on a tablet; the test does not depend on the batch being slow.
CONTEXTS, RELATIONSHIPS = 600, 400


def _free_port() -> int:
    for port in PORTS:
        with socket.socket() as s:
            try:
                s.bind(("127.0.0.1", port))
            except OSError:
                continue
            return port
    pytest.skip("no free port for gunicorn")


def _env() -> dict:
    db = connection.settings_dict
    auth = db["USER"] + (f":{db['PASSWORD']}" if db.get("PASSWORD") else "")
    env = {k: v for k, v in os.environ.items() if k not in ("TELLSTACK_TEST_DB_NAME", "CELERY_BROKER_URL")}
    env.update(
        DATABASE_URL=f"postgres://{auth}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}",
        TELLSTACK_IDEMPOTENCY_LEASE_SECONDS=str(LEASE_SECONDS),
        TELLSTACK_MEDIA_DIR=str(settings.MEDIA_ROOT),
        TELLSTACK_WARM_KERNELS="0",
        DJANGO_SETTINGS_MODULE="config.settings",
        PYTHONPATH=str(ROOT),
    )
    return env


@pytest.fixture
def gunicorn(tmp_path):
    if connection.vendor != "postgresql":
        pytest.skip("gunicorn needs a database it can share with the test (PostgreSQL)")
    port = _free_port()
    log = (tmp_path / "gunicorn.log").open("ab")
    proc = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "config.wsgi", "--bind", f"127.0.0.1:{port}", "--workers", "2",
         "--timeout", "120", "--graceful-timeout", "1"],
        cwd=ROOT, env=_env(), stdout=log, stderr=subprocess.STDOUT, start_new_session=True,
    )
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            if requests.get(f"{base}/api/v1/health/", timeout=10).status_code < 500:
                break
        except requests.RequestException:
            time.sleep(0.3)
    else:
        os.killpg(proc.pid, signal.SIGKILL)
        pytest.fail("gunicorn did not start: " + (tmp_path / "gunicorn.log").read_text()[-2000:])
    yield base, proc
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=10)


def _workers(master: int) -> list[int]:
    out = subprocess.run(["ps", "-o", "pid=", "--ppid", str(master)], capture_output=True, text=True).stdout
    return [int(p) for p in out.split()]


def _socket_inodes(pid: int) -> set[str]:
    inodes = set()
    for fd in Path(f"/proc/{pid}/fd").iterdir():
        try:
            target = os.readlink(fd)
        except OSError:
            continue
        if target.startswith("socket:["):
            inodes.add(target[8:-1])
    return inodes


def _worker_holding_client(master: int, port: int) -> int:
    """The worker with an established connection on the server's port (from /proc/net/tcp)."""
    established = set()
    for line in Path("/proc/net/tcp").read_text().splitlines()[1:]:
        fields = line.split()
        local_port = int(fields[1].split(":")[1], 16)
        if local_port == port and fields[3] == "01":
            established.add(fields[9])
    for pid in _workers(master):
        if _socket_inodes(pid) & established:
            return pid
    raise AssertionError("no worker holds the client's connection")


def _wait_for_lock_waiter(timeout: float = 60) -> None:
    from django.db import connections

    deadline = time.monotonic() + timeout
    name = connection.settings_dict["NAME"]
    with connections["default"].cursor() as cursor:
        while time.monotonic() < deadline:
            cursor.execute("SELECT count(*) FROM pg_stat_activity WHERE datname = %s AND wait_event_type = 'Lock'",
                           [name])
            if cursor.fetchone()[0]:
                return
            time.sleep(0.1)
    raise AssertionError("the batch never reached the project's lock")


def _batch() -> dict:
    contexts = [{"uid": str(uuid.uuid4()), "label": f"C{i}", "kind": "deposit", "area": "Trench 2"}
                for i in range(CONTEXTS)]
    relationships = [{"uid": str(uuid.uuid4()), "subject": f"C{i}", "type": "above", "object": f"C{i + 1}"}
                     for i in range(RELATIONSHIPS)]
    return {"batch_id": str(uuid.uuid4()), "contexts": contexts, "relationships": relationships}


def _lock_project(project, release: threading.Event, locked: threading.Event) -> None:
    import psycopg

    db = connection.settings_dict
    with psycopg.connect(host=db["HOST"] or "127.0.0.1", port=db["PORT"] or 5432, user=db["USER"],
                         password=db.get("PASSWORD") or None, dbname=db["NAME"]) as conn:
        with conn.transaction():
            conn.execute("SELECT id FROM projects_project WHERE id = %s FOR UPDATE", [project.pk])
            locked.set()
            release.wait(120)


def test_a_worker_killed_mid_batch_leaves_nothing_and_the_same_key_and_body_succeed_once(gunicorn, project, users):
    base, master = gunicorn
    port = int(base.rsplit(":", 1)[1])
    _token, key = ApiToken.issue(users[Role.RECORDER], "tablet")
    headers = {"Authorization": f"Token {key}", "Idempotency-Key": "tablet-9-batch-1"}
    body, path = _batch(), f"{base}/api/v1/projects/{project.code}/sync/"

    release, locked = threading.Event(), threading.Event()
    holder = threading.Thread(target=_lock_project, args=(project, release, locked), daemon=True)
    holder.start()
    assert locked.wait(30)
    first: dict = {}

    def post():
        try:
            first["status"] = requests.post(path, json=body, headers=headers, timeout=120).status_code
        except requests.RequestException as exc:
            first["error"] = exc

    sender = threading.Thread(target=post, daemon=True)
    sender.start()
    try:
        _wait_for_lock_waiter()
        os.kill(_worker_holding_client(master.pid, port), signal.SIGKILL)
    finally:
        release.set()
        holder.join(30)
    sender.join(30)
    assert "error" in first, f"the killed request answered {first}"
    assert (Context.objects.filter(project=project).count(), Revision.objects.filter(project=project).count()) == (0, 0)

    retry = requests.post(path, json=body, headers=headers, timeout=120)
    deadline = time.monotonic() + 10 * LEASE_SECONDS
    while retry.status_code == 409 and retry.json()["code"] == "idempotency-in-progress":
        assert time.monotonic() < deadline, "the key stayed in progress after its lease ran out"
        time.sleep(min(float(retry.headers.get("Retry-After", 1)), LEASE_SECONDS))
        retry = requests.post(path, json=body, headers=headers, timeout=120)
    assert retry.status_code == 200, retry.text
    again = requests.post(path, json=body, headers=headers, timeout=120)
    assert (again.status_code, again.headers.get("Idempotent-Replayed"), again.content) == (200, "true", retry.content)
    assert Context.objects.filter(project=project).count() == CONTEXTS
    assert Relationship.objects.filter(project=project).count() == RELATIONSHIPS
    assert Revision.objects.filter(project=project).count() == 1
