"""Benchmark of the record's write path: posting relationships one at a time.

Builds projects of 1,000 and N contexts (about two relationships each) through
the public write path (``site_builder``: sync batches), then times single
relationship posts through the whole API layer (authentication, DRF,
validation, the write-time cycle check, the write and the log).  The posts
are of the usual kind: a new context recorded on top of a sequence, or a
relationship between neighbouring contexts of one area.

Besides the times it reports what one post costs: its SQL queries (count,
each statement's time), and the time per step of the write path, measured
by wrapping the functions that do each step.
"""

from __future__ import annotations

import random
import statistics
import time
from contextlib import ExitStack, contextmanager

from django.db import connection
from django.test.utils import CaptureQueriesContext, override_settings
from rest_framework.test import APIClient

from projects.models import ApiToken

from .site_builder import build_site

QUICK = {"contexts": 1000, "posts": 200, "reference": 300}


def run(contexts: int = 20000, posts: int = 1000, seed: int = 1, reference: int = 1000) -> dict:
    with override_settings(DEBUG=False):  # production settings: no query log kept per statement
        small = _case(reference, posts, seed, breakdown=False)
        big = _case(contexts, posts, seed, breakdown=True)
    return {
        "suite": "record",
        **{k: big[k] for k in ("contexts", "relationships", "posts", "p50_ms", "p95_ms", "posts_per_s", "build_s")},
        "build_seconds": big["build_s"],
        "queries_per_post": big["queries_per_post"],
        "queries": big["queries"],
        "steps_ms": big["steps_ms"],
        "reference": {k: small[k] for k in ("contexts", "p50_ms", "p95_ms", "build_s", "queries_per_post")},
        "p95_ratio_to_reference": round(big["p95_ms"] / small["p95_ms"], 2),
        "database": connection.vendor,
    }


def _case(contexts: int, posts: int, seed: int, *, breakdown: bool) -> dict:
    rng = random.Random(seed)
    site = build_site(contexts, seed=seed)
    per_area = site.areas
    _token, key = ApiToken.issue(site.user, "bench tablet")
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    base = f"/api/v1/projects/{site.project.organisation.slug}:{site.project.code}"
    url_rel, url_ctx = f"{base}/relationships/", f"{base}/contexts/"

    def next_body(k: int) -> dict:
        area = per_area[k % len(per_area)]
        if k % 2 == 0:
            label = f"N{k:07d}"
            _post(client, url_ctx, {"label": label, "kind": "deposit", "area": "new"})
            body = {"subject": label, "type": "above", "object": area[-1]}
            area.append(label)
            return body
        j = rng.randrange(3, min(len(area), 40))
        return {"subject": area[-1 - rng.randrange(0, 2)], "type": "above", "object": area[-1 - j]}

    timings = []
    steps = _StepTimes() if breakdown else None
    with override_settings(REST_FRAMEWORK=_without_throttles()):
        _post(client, url_rel, next_body(-1))  # warm the per-process order, as a running server has it
        for k in range(posts):
            body = next_body(k)
            with steps.measuring() if steps else _nothing():
                t0 = time.perf_counter()
                _post(client, url_rel, body)
                timings.append((time.perf_counter() - t0) * 1000)
        body = next_body(posts)
        with CaptureQueriesContext(connection) as captured:
            _post(client, url_rel, body)
    timings.sort()
    return {
        "contexts": contexts,
        "relationships": site.relationships,
        "posts": posts,
        "p50_ms": round(statistics.median(timings), 3),
        "p95_ms": round(timings[int(0.95 * (len(timings) - 1))], 3),
        "posts_per_s": round(posts / (sum(timings) / 1000), 1),
        "build_s": round(site.seconds, 2),
        "queries_per_post": len(captured.captured_queries),
        "queries": [{"sql": q["sql"][:90], "ms": round(float(q["time"]) * 1000, 3)} for q in captured.captured_queries],
        "steps_ms": steps.medians(timings) if steps else None,
    }


def _post(client, url: str, body: dict):
    response = client.post(url, body, format="json")
    if response.status_code >= 300 and response.status_code != 409:
        raise RuntimeError(f"unexpected {response.status_code}: {response.content[:300]}")
    return response


@contextmanager
def _nothing():
    yield


class _StepTimes:
    """Median milliseconds per post spent in each step, by wrapping the function that does it."""

    def __init__(self) -> None:
        from api import authentication
        from api.views import base
        from chronology.engine.incremental import IncrementalOrder
        from projects.record import changes, order_cache, writes

        self.targets = {
            "authenticate token": (authentication.DeviceTokenAuthentication, "authenticate"),
            "project and role": (base, "find_project"),
            "order from cache": (order_cache, "checkout"),
            "two contexts": (writes, "_two_contexts"),
            "cycle check": (IncrementalOrder, "find_cycle"),
            "log, state rows, revision": (changes.ChangeSet, "finish"),
        }
        self.samples: dict[str, list[float]] = {name: [] for name in self.targets}
        self.current: dict[str, float] = {}

    @contextmanager
    def measuring(self):
        self.current = {name: 0.0 for name in self.targets}
        with ExitStack() as stack:
            for name, (owner, attribute) in self.targets.items():
                stack.enter_context(self._wrapped(name, owner, attribute))
            yield
        for name, spent in self.current.items():
            self.samples[name].append(spent)

    @contextmanager
    def _wrapped(self, name: str, owner, attribute: str):
        original = owner.__dict__[attribute] if isinstance(owner, type) else getattr(owner, attribute)
        func = original

        def timed(*args, **kwargs):
            t0 = time.perf_counter()
            try:
                return func(*args, **kwargs)
            finally:
                self.current[name] += (time.perf_counter() - t0) * 1000

        setattr(owner, attribute, timed)
        try:
            yield
        finally:
            setattr(owner, attribute, original)

    def medians(self, totals: list[float]) -> dict:
        out = {name: round(statistics.median(values), 3) for name, values in self.samples.items()}
        out["everything else (DRF, serializers, writes, commit, response)"] = round(
            statistics.median(totals) - sum(out.values()), 3
        )
        return out


def _without_throttles() -> dict:
    from django.conf import settings

    return {**settings.REST_FRAMEWORK, "DEFAULT_THROTTLE_CLASSES": []}
