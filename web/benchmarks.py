"""Benchmark of the pages: server time and SQL queries of the main pages on a large project.

``python manage.py bench pages --json`` builds, on the configured database, a
project of 20,000 contexts and 25,000 relationships through the record's one
write path (sync batches of 5,000 items), two committed interpretation
versions that phase it differently (the first approved and current), and times in process (Django's test
client, a signed-in manager) the organisation home, the contexts table's first
page, the change feed's first page and the comparison of the two versions:
median and 95th percentile over 20 requests after one warm-up request, and the
number of SQL queries of one request.
"""

from __future__ import annotations

import statistics
import time
import uuid

from django.contrib.auth import get_user_model
from django.db import connection
from django.test import Client
from django.test.utils import CaptureQueriesContext

from chronology.interpretations import services
from projects.models import Membership, Organisation, Project, Role
from projects.record.changes import Actor
from projects.record.sync import MAX_ITEMS, sync_batch

QUICK = {"contexts": 2000, "relationships": 2500, "requests": 5}
AREAS = 8


def site_items(contexts: int, relationships: int) -> tuple[list[dict], list[dict]]:
    """Contexts in ``AREAS`` areas, each area one deep sequence; relationships exactly ``relationships``.

    Every context lies above the one below it in its area; the remaining
    relationships tie a context to one two to six layers further down (often
    redundant, as on a real site).  Needs at least ``contexts - AREAS`` relationships.
    """
    items, by_area = [], [[] for _ in range(AREAS)]
    for i in range(contexts):
        area = i % AREAS
        label = f"{area + 1}{i // AREAS:06d}"
        items.append({"uid": str(uuid.uuid4()), "label": label, "kind": "deposit", "area": f"A{area + 1}"})
        by_area[area].append(label)
    rels = [{"subject": seq[k], "type": "above", "object": seq[k - 1]} for seq in by_area for k in range(1, len(seq))]
    longest, skip = max((len(seq) for seq in by_area), default=0), 2
    while len(rels) < relationships and skip < longest:
        for j in range(skip, longest, 7):
            rels += [{"subject": seq[j], "type": "above", "object": seq[j - skip]} for seq in by_area if j < len(seq)]
        skip += 1
    return items, rels[:relationships]


def build(contexts: int, relationships: int, *, tag: str | None = None) -> dict:
    """An organisation, a manager, the project and two committed versions; returns what the timing needs."""
    tag = tag or uuid.uuid4().hex[:8]
    org = Organisation.objects.create(slug=f"bench-{tag}", name="Benchmark unit (invented)")
    user = get_user_model().objects.create_user(username=f"bench-manager-{tag}")
    Membership.objects.create(user=user, organisation=org, role=Role.MANAGER)
    project = Project.objects.create(organisation=org, code="BENCH", name="Benchmark site (invented)")
    actor = Actor(user=user, device="bench")
    items, rels = site_items(contexts, relationships)
    for i in range(0, len(items), MAX_ITEMS):
        sync_batch(project, actor, batch_id=uuid.uuid4(), contexts=items[i:i + MAX_ITEMS])
    for i in range(0, len(rels), MAX_ITEMS):
        sync_batch(project, actor, batch_id=uuid.uuid4(), relationships=rels[i:i + MAX_ITEMS])
    project.refresh_from_db()
    versions = [_version(project, actor, name, share) for name, share in (("Lower half early", 2), ("Lower third early", 3))]
    built = {"org": org, "user": user, "project": project, "versions": versions}
    make_first_current(built)
    return built


def make_first_current(built: dict) -> None:
    """Approve the first version and make it the current reading (the contexts table shows its phases)."""
    from chronology.interpretations.models import Reading

    if Reading.objects.filter(project=built["project"]).exists():
        return
    actor = Actor(user=built["user"], device="bench")
    first = services.propose(built["versions"][0], actor)
    services.make_current(services.approve(first, actor, reason="benchmark reading"), actor)


def _version(project, actor, name: str, share: int):
    """A committed version: per area, the lowest 1/``share`` of the sequence early, the rest late."""
    from projects.models import Context

    rows = list(Context.objects.filter(project=project, retracted_revision__isnull=True).values_list("id", "label"))
    depth = {cid: int(label[1:]) for cid, label in rows}
    top = max(depth.values(), default=0) + 1
    content = {
        "phases": [{"key": "early", "name": "Early", "to_next": {"arrangement": "sequential"}},
                   {"key": "late", "name": "Late"}],
        "assignments": [{"context": cid, "phase": "early" if depth[cid] * share < top else "late"}
                        for cid, _label in rows],
    }
    _interp, draft = services.create_interpretation(project, actor, name=name, content=content)
    return services.commit(draft, actor)


def page_urls(built: dict) -> dict[str, str]:
    org, project = built["org"].slug, built["project"].code
    a, b = built["versions"]
    base = f"/projects/{org}/{project}/"
    return {
        "organisation home": "/",
        "contexts, first page": base + "contexts/",
        "change feed, first page": base + "changes/",
        "version comparison": base + f"versions/compare/?a={a.pk}&b={b.pk}",
    }


def signed_in(user) -> Client:
    client = Client()
    client.force_login(user)
    return client


def query_count(client: Client, url: str) -> int:
    with CaptureQueriesContext(connection) as queries:
        response = client.get(url)
    if response.status_code != 200:
        raise RuntimeError(f"{url} answered {response.status_code}")
    return len(queries.captured_queries)


def time_page(client: Client, url: str, requests: int) -> dict:
    t0 = time.perf_counter()
    client.get(url)  # warm-up: templates, the per-process caches, the kept comparison
    first_ms = (time.perf_counter() - t0) * 1000
    timings = []
    for _ in range(requests):
        t0 = time.perf_counter()
        response = client.get(url)
        timings.append((time.perf_counter() - t0) * 1000)
        if response.status_code != 200:
            raise RuntimeError(f"{url} answered {response.status_code}")
    timings.sort()
    return {"median_ms": round(statistics.median(timings), 1),
            "p95_ms": round(timings[min(len(timings) - 1, round(0.95 * (len(timings) - 1)))], 1),
            "first_ms": round(first_ms, 1)}


def reuse(contexts: int, relationships: int) -> dict | None:
    """The project an earlier run of this size built, if it is complete (its two versions committed)."""
    from chronology.interpretations.models import Version

    project = (Project.objects.filter(organisation__slug=f"bench-pages-{contexts}-{relationships}", code="BENCH")
               .select_related("organisation").first())
    if project is None:
        return None
    versions = list(Version.objects.filter(project=project).exclude(status="draft").order_by("id"))
    if len(versions) != 2:
        return None
    user = Membership.objects.filter(organisation=project.organisation, role=Role.MANAGER).first().user
    return {"org": project.organisation, "user": user, "project": project, "versions": versions}


def run(contexts: int = 20000, relationships: int = 25000, requests: int = 20, fresh: bool = False) -> dict:
    """Time the pages; the project is built once per size and kept for later runs (``fresh`` builds anew)."""
    started = time.perf_counter()
    built = None if fresh else reuse(contexts, relationships)
    reused = built is not None
    if built is None:
        taken = Organisation.objects.filter(slug=f"bench-pages-{contexts}-{relationships}").exists()
        tag = uuid.uuid4().hex[:8] if taken or fresh else f"pages-{contexts}-{relationships}"
        built = build(contexts, relationships, tag=tag)
    make_first_current(built)
    build_seconds = time.perf_counter() - started
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute("ANALYZE")  # as autovacuum would after a bulk load on a live server
    client = signed_in(built["user"])
    pages, first = [], {}
    for name, url in page_urls(built).items():
        timed = time_page(client, url, requests)
        first[name] = timed.pop("first_ms")
        pages.append({"page": name, **timed, "queries": query_count(client, url)})
    # The first request of each page is not in the figures: it fills the caches (for the comparison of two
    # committed versions, the difference itself), so it is reported on its own.
    return {"suite": "pages", "pages": pages, "first_request_ms": first, "contexts": contexts, "relationships": relationships,
            "requests": requests, "build_seconds": round(build_seconds, 1), "reused_project": reused, "database": connection.vendor}
