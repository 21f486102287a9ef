"""Build a large invented site for the benchmarks through the record's public write path.

Contexts and relationships go in as sync batches of ``BATCH`` items, the way
an offline tablet sends them, so every item passes the same checks as a
single post (validation, duplicates, the write-time order check) and lands in
the change log.  The shape is site-like: per area a deep sequence, each layer
above the one below it and often also above one a few layers further down
(a redundant relationship, as recorders write them).
"""

from __future__ import annotations

import random
import time
import uuid
from dataclasses import dataclass, field

from django.contrib.auth import get_user_model

from projects.models import Membership, Organisation, Project, Role
from projects.record.changes import Actor
from projects.record.sync import MAX_ITEMS, sync_batch

BATCH = MAX_ITEMS


@dataclass
class BuiltSite:
    project: Project
    user: object
    actor: Actor
    #: Per area, the labels from the bottom up.
    areas: list[list[str]] = field(default_factory=list)
    relationships: int = 0
    seconds: float = 0.0


def site_items(n: int, *, areas: int = 8, extra_per_context: float = 1.0, seed: int = 1):
    """``n`` contexts in ``areas`` deep sequences and about ``(1 + extra_per_context) * n`` relationships."""
    rng = random.Random(seed)
    contexts, rels = [], []
    per_area: list[list[str]] = [[] for _ in range(areas)]
    for i in range(n):
        area = i % areas
        label = f"{area + 1}{i // areas:06d}"
        contexts.append({"uid": str(uuid.uuid4()), "label": label, "kind": "deposit", "area": f"A{area + 1}"})
        below = per_area[area]
        if below:
            picks = [below[-1]]
            if rng.random() < extra_per_context and len(below) > 1:
                other = below[max(0, len(below) - 2 - rng.randint(0, 5))]
                if other != below[-1]:
                    picks.append(other)
            for other in picks:
                rels.append({"uid": str(uuid.uuid4()), "subject": label, "type": "above", "object": other})
        below.append(label)
    return contexts, rels, per_area


def build_site(n: int, *, code: str = "BENCH", role: str = Role.RECORDER, seed: int = 1,
               extra_per_context: float = 1.0) -> BuiltSite:
    """A new organisation, a user of ``role`` and a project of ``n`` contexts, built through sync batches."""
    suffix = uuid.uuid4().hex[:8]
    org = Organisation.objects.create(slug=f"bench-{suffix}", name="Benchmark unit (invented)")
    user = get_user_model().objects.create_user(username=f"bench-{suffix}")
    Membership.objects.create(user=user, organisation=org, role=role)
    project = Project.objects.create(organisation=org, code=code, name="Benchmark site (invented)")
    actor = Actor(user=user, device="bench loader")
    contexts, rels, per_area = site_items(n, seed=seed, extra_per_context=extra_per_context)
    started = time.perf_counter()
    for items, key in ((contexts, "contexts"), (rels, "relationships")):
        for i in range(0, len(items), BATCH):
            sync_batch(project, actor, batch_id=uuid.uuid4(), **{key: items[i:i + BATCH]})
    seconds = time.perf_counter() - started
    analyze()
    project.refresh_from_db()
    return BuiltSite(project, user, actor, per_area, len(rels), seconds)


def analyze() -> None:
    """Refresh planner statistics after the bulk load, as autovacuum would on a live server."""
    from django.db import connection

    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute("ANALYZE")


__all__ = ["BuiltSite", "build_site", "site_items", "analyze"]
