"""Benchmark of a large offline batch landing while another client keeps posting.

A project of N contexts is built (``site_builder``); then one 5,000-item
batch (2,500 new contexts and 2,500 relationships) is sent through the API
while a second process, another field client with its own token, posts
single relationships to the same project as fast as it gets answers.  It
reports the batch's total seconds, how long the batch held the project's
write lock (from taking the row lock to the commit), and the single posts'
p95 during the batch.  PostgreSQL only in earnest: SQLite has one writer.
"""

from __future__ import annotations

import multiprocessing
import os
import statistics
import time
import uuid
from contextlib import contextmanager

from django.db import connection, connections
from django.test.utils import override_settings
from rest_framework.test import APIClient

from projects.models import ApiToken
from projects.record import sync as sync_module

from . import sync_poster
from chronology.benchmarks.site_builder import build_site

QUICK = {"contexts": 2000, "batch": 1000}


def run(contexts: int = 20000, batch: int = 5000, seed: int = 1) -> dict:
    site = build_site(contexts, seed=seed)
    base = f"/api/v1/projects/{site.project.organisation.slug}:{site.project.code}"
    _token, key = ApiToken.issue(site.user, "bench batch tablet")
    _token2, other_key = ApiToken.issue(site.user, "bench other tablet")
    tops = [a[-1] for a in site.areas]  # before the batch's own layers go on top
    body = _batch_body(site.areas, batch)
    for alias in connections:
        connections[alias].close()  # the poster is a fresh process with its own connection

    ctx = multiprocessing.get_context("spawn")
    stop, ready, results = ctx.Event(), ctx.Event(), ctx.Queue()
    poster = ctx.Process(target=sync_poster.post_until_stopped, args=(base, other_key, tops, stop, ready, results))
    poster.start()
    while not ready.wait(1.0):
        if poster.is_alive():
            continue
        poster.kill()
        raise RuntimeError("the second client did not start")

    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    with override_settings(DEBUG=False, REST_FRAMEWORK=_without_throttles()), _lock_timer() as held:
        window_start = time.time()
        started = time.perf_counter()
        response = client.post(f"{base}/sync/", body, format="json")
        batch_seconds = time.perf_counter() - started
        window_end = time.time()
    time.sleep(0.5)
    stop.set()
    spans = results.get(timeout=120)
    # A single post counts as during the batch if the two were in flight at the same time.
    during = [(end - start) * 1000 for start, end in spans if start < window_end and end > window_start]
    outside = [(end - start) * 1000 for start, end in spans if not (start < window_end and end > window_start)]
    poster.join(60)
    if response.status_code != 200:
        raise RuntimeError(f"batch refused: {response.status_code} {response.content[:400]}")
    during_sorted = sorted(during) or [float("nan")]
    return {
        "suite": "sync",
        "contexts": contexts,
        "batch_items": batch,
        "batch_s": round(batch_seconds, 3),
        "lock_s": round(max(held) if held else float("nan"), 3),
        "single_post_p95_ms": round(during_sorted[int(0.95 * (len(during_sorted) - 1))], 1),
        "single_post_median_ms": round(statistics.median(during_sorted), 1),
        "single_post_max_ms": round(during_sorted[-1], 1),
        "single_posts_during_batch": len(during),
        "single_post_median_ms_without_batch": round(statistics.median(outside), 1) if outside else None,
        "build_s": round(site.seconds, 2),
        "database": connection.vendor,
    }


def _batch_body(areas: list[list[str]], n: int) -> dict:
    """``n / 2`` new contexts on top of the areas, each above the area's top or another new one."""
    contexts, rels = [], []
    for i in range(n // 2):
        area = areas[i % len(areas)]
        label = f"B{i:06d}"
        contexts.append({"uid": str(uuid.uuid4()), "label": label, "kind": "deposit", "area": "batch"})
        rels.append({"uid": str(uuid.uuid4()), "subject": label, "type": "above", "object": area[-1]})
        area.append(label)
    return {"batch_id": str(uuid.uuid4()), "contexts": contexts, "relationships": rels}


@contextmanager
def _lock_timer():
    """Seconds from taking the project's row lock to committing, for each record change in the block."""
    held: list[float] = []
    original = sync_module.record_change

    @contextmanager
    def timed(project, actor, **kwargs):
        with original(project, actor, **kwargs) as change_set:
            locked_at = time.perf_counter()  # record_change has the row lock when it yields
            yield change_set
        held.append(time.perf_counter() - locked_at)

    sync_module.record_change = timed
    try:
        yield held
    finally:
        sync_module.record_change = original


def _without_throttles() -> dict:
    from django.conf import settings

    return {**settings.REST_FRAMEWORK, "DEFAULT_THROTTLE_CLASSES": []}
