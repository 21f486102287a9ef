"""The sampler's compiled kernels: cached on disk, warmed when a worker process starts, timed apart."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest
from django.conf import settings

from chronology.runs import kernels
from chronology.runs.service import run_inline, start_inline
from projects.models import Role

from .conftest import SMALL

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def cold(monkeypatch):
    """This process as if it had not loaded the kernels yet."""
    kernels._forget_for_tests()
    yield
    kernels._forget_for_tests()
    kernels.ensure_compiled()


def test_the_kernels_are_cached_on_disk_in_the_configured_folder():
    from numba.core import config

    kernels.ensure_compiled()
    assert Path(config.CACHE_DIR) == Path(settings.TELLSTACK_NUMBA_CACHE_DIR)
    index = [p.name for p in Path(config.CACHE_DIR).rglob("*.nbi")]
    assert any(name.startswith("sampler_kernel.sweep_block") for name in index)


def test_a_new_process_loads_the_kernels_from_the_disk_cache_instead_of_compiling():
    kernels.ensure_compiled()  # the cache holds this build
    # the engine alone (no Django): numba finds the cache through NUMBA_CACHE_DIR, as a worker's pool does
    probe = (
        "import json\n"
        "from chronology.engine.sampler import warm_up\n"
        "warm_up()\n"
        "from chronology.engine.sampler_kernel import sweep_block as k\n"
        "s = k.stats\n"
        "print(json.dumps({'hits': sum(s.cache_hits.values()), 'misses': sum(s.cache_misses.values())}))\n"
    )
    env = {**os.environ, "DJANGO_SETTINGS_MODULE": "config.settings", "PYTHONPATH": str(ROOT),
           "NUMBA_CACHE_DIR": settings.TELLSTACK_NUMBA_CACHE_DIR}
    out = subprocess.run([sys.executable, "-c", probe], cwd=ROOT, env=env, capture_output=True, text=True,
                         timeout=300, check=True)
    stats = json.loads(out.stdout.strip().splitlines()[-1])
    assert stats == {"hits": 1, "misses": 0}


def test_a_new_worker_process_warms_the_kernels_when_it_starts(cold):
    from celery.signals import worker_process_init

    assert kernels.compile_seconds() is None
    worker_process_init.send(sender=None)
    deadline = time.monotonic() + 120
    while kernels.compile_seconds() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    assert kernels.compile_seconds() is not None
    assert kernels.ensure_compiled() < 0.5  # a chain arriving now does not wait


@pytest.mark.django_db
def test_compile_time_is_reported_apart_from_sampling_time(site, users, cold, monkeypatch):
    from chronology.engine import sampler

    real = sampler.warm_up

    def slow_compile():  # a cold worker: the first chain waits a second for the kernels
        time.sleep(1.0)
        return real() + 1.0

    monkeypatch.setattr(sampler, "warm_up", slow_compile)
    run = start_inline(site["version"].project, site["version"], users[Role.ANALYST], **{**SMALL, "seed": 2})
    run = run_inline(run)
    compiled, sampled = run.timings["compile_seconds"], run.timings["chain_seconds"]
    assert compiled[0] >= 1.0 and compiled[1] < 0.5
    assert sampled[0] < compiled[0]  # the chain's sampling time does not hold the wait
    assert run.timings["sampling_seconds"] == pytest.approx(sum(sampled))
