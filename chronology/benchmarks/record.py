"""Benchmark of the record's write path: posting relationships one at a time.

Builds a project of N contexts with about 2N relationships through the write
path (sync batches) on the configured database, then times single
relationship posts through the whole API layer (authentication, DRF,
validation, the write-time cycle check, the write and the log).  The posts
are of the usual kind: a new context recorded on top of the sequence, or a
relationship between neighbouring contexts of one area.
"""

from __future__ import annotations

import random
import statistics
import time
import uuid

from django.contrib.auth import get_user_model
from django.test.utils import override_settings
from rest_framework.test import APIClient

from projects.models import ApiToken, Membership, Organisation, Project, Role
from projects.record.changes import Actor
from projects.record.sync import sync_batch

QUICK = {"contexts": 1000, "posts": 200}
AREAS = 8


def _site(n: int, rng: random.Random):
    """Site-like layers: per area a deep sequence, each layer above 1–2 of the few below it."""
    contexts, rels = [], []
    per_area = [[] for _ in range(AREAS)]
    for i in range(n):
        area = i % AREAS
        label = f"{area + 1}{i // AREAS:06d}"
        contexts.append({"uid": str(uuid.uuid4()), "label": label, "kind": "deposit", "area": f"A{area + 1}"})
        below = per_area[area]
        if below:
            picks = {below[-1]}
            picks.add(below[max(0, len(below) - 1 - rng.randint(1, 6))])  # often redundant
            for other in picks:
                rels.append({"subject": label, "type": "above", "object": other})
        below.append(label)
    return contexts, rels, per_area


def run(contexts: int = 20000, posts: int = 1000, seed: int = 1) -> dict:
    rng = random.Random(seed)
    suffix = uuid.uuid4().hex[:8]
    org = Organisation.objects.create(slug=f"bench-{suffix}", name="Benchmark unit (invented)")
    user = get_user_model().objects.create_user(username=f"bench-{suffix}")
    Membership.objects.create(user=user, organisation=org, role=Role.RECORDER)
    project = Project.objects.create(organisation=org, code="BENCH", name="Benchmark site (invented)")
    actor = Actor(user=user, device="bench")

    site_contexts, site_rels, per_area = _site(contexts, rng)
    started = time.perf_counter()
    chunk = 2000
    for i in range(0, len(site_contexts), chunk):
        sync_batch(project, actor, batch_id=uuid.uuid4(), contexts=site_contexts[i:i + chunk])
    for i in range(0, len(site_rels), chunk):
        sync_batch(project, actor, batch_id=uuid.uuid4(), relationships=site_rels[i:i + chunk])
    build_seconds = time.perf_counter() - started
    _analyze()

    _token, key = ApiToken.issue(user, "bench tablet")
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    url_rel = f"/api/v1/projects/{org.slug}:BENCH/relationships/"
    url_ctx = f"/api/v1/projects/{org.slug}:BENCH/contexts/"
    timings = []
    with override_settings(REST_FRAMEWORK={**_rest_settings(), "DEFAULT_THROTTLE_CLASSES": []}):
        # Warm the per-process order (a real server keeps it between requests).
        area = per_area[0]
        client.post(url_rel, {"subject": area[-1], "type": "above", "object": area[-3]}, format="json")
        for k in range(posts):
            area = per_area[k % AREAS]
            if k % 2 == 0:
                label = f"N{k:07d}"
                client.post(url_ctx, {"label": label, "kind": "deposit", "area": "new"}, format="json")
                body = {"subject": label, "type": "above", "object": area[-1]}
                area.append(label)
            else:
                j = rng.randrange(3, min(len(area), 40))
                body = {"subject": area[-1 - rng.randrange(0, 2)], "type": "above", "object": area[-1 - j]}
            t0 = time.perf_counter()
            response = client.post(url_rel, body, format="json")
            timings.append((time.perf_counter() - t0) * 1000)
            if response.status_code >= 300 and response.status_code != 409:
                raise RuntimeError(f"unexpected {response.status_code}: {response.content[:300]}")
    timings.sort()
    total = sum(timings) / 1000
    return {
        "suite": "record",
        "contexts": contexts,
        "relationships": len(site_rels),
        "posts": posts,
        "p50_ms": round(statistics.median(timings), 3),
        "p95_ms": round(timings[int(0.95 * (len(timings) - 1))], 3),
        "posts_per_s": round(posts / total, 1),
        "build_seconds": round(build_seconds, 2),
        "database": _vendor(),
    }


def _analyze() -> None:
    """Refresh planner statistics after the bulk load, as autovacuum would on a live server."""
    from django.db import connection

    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute("ANALYZE")


def _rest_settings():
    from django.conf import settings

    return settings.REST_FRAMEWORK


def _vendor() -> str:
    from django.db import connection

    return connection.vendor
