"""Benchmark of the project package: export and import of a large project.

Builds, through the write paths in bulk (``projects.record.bulk`` in change
sets of 2,000 objects, evidence in change sets of 100; never HTTP), a
project of 20,000 contexts, 25,000 relationships, 500 radiocarbon
determinations on 500 samples, 10 interpretation versions and 2 model
runs, with its full change log.  Then,
each in a fresh process (so that its peak memory is its own), writes the
package and imports it into an empty project of another organisation.
Prints seconds each way, the larger of the two peak resident set sizes and
the package size.
"""

from __future__ import annotations

import multiprocessing
import random
import resource
import tempfile
import time
import uuid
from pathlib import Path

QUICK = {"contexts": 1000, "relationships": 1250, "determinations": 25}
CHUNK = 2000


def run(contexts: int = 20000, relationships: int = 25000, determinations: int = 500, versions: int = 10,
        runs: int = 2, seed: int = 1) -> dict:
    from django.db import connection

    started = time.perf_counter()
    source, target, importer = _build(contexts, relationships, determinations, versions, runs, seed)
    build_s = time.perf_counter() - started
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "package.zip"
        exported = _in_child("export", source, path)
        imported = _in_child("import", target, path, importer)
        size = path.stat().st_size
    return {
        "suite": "exchange",
        "export_s": round(exported["seconds"], 2),
        "import_s": round(imported["seconds"], 2),
        "peak_mb": round(max(exported["peak_mb"], imported["peak_mb"]), 1),
        "package_mb": round(size / 1e6, 2),
        "export_peak_mb": round(exported["peak_mb"], 1),
        "import_peak_mb": round(imported["peak_mb"], 1),
        "contexts": contexts, "relationships": relationships, "determinations": determinations,
        "versions": versions, "runs": runs, "change_log_entries": exported["changes"],
        "revisions": exported["revisions"], "build_s": round(build_s, 1), "database": connection.vendor,
    }


# -- the measured work, each in a fresh process ------------------------------------

def _in_child(task: str, project_id: int, path: Path, user_id: int | None = None) -> dict:
    from django.db import connections

    connections.close_all()  # the child opens its own
    context = multiprocessing.get_context("spawn")
    queue = context.Queue()
    child = context.Process(target=_child, args=(task, project_id, str(path), user_id, queue))
    child.start()
    result = queue.get()
    child.join()
    if "error" in result:
        raise RuntimeError(f"{task} failed: {result['error']}")
    return result


def _child(task: str, project_id: int, path: str, user_id: int | None, queue) -> None:
    import django

    django.setup()
    from django.contrib.auth import get_user_model

    from exchange.package.writer import write_package
    from exchange.replay import import_package
    from projects.models import ChangeLogEntry, Project

    try:
        project = Project.objects.select_related("organisation").get(pk=project_id)
        baseline = _peak_mb()
        started = time.perf_counter()
        if task == "export":
            write_package(project, path)
        else:
            import_package(path, project, get_user_model().objects.get(pk=user_id))
        seconds = time.perf_counter() - started
        project.refresh_from_db()
        queue.put({"seconds": seconds, "peak_mb": _peak_mb(), "baseline_mb": baseline,
                   "changes": ChangeLogEntry.objects.filter(project=project).count(), "revisions": project.revision})
    except Exception as exc:  # reported to the parent, which raises
        queue.put({"error": f"{type(exc).__name__}: {exc}"})


def _peak_mb() -> float:
    """Peak resident set of this process image (``VmHWM``; ``ru_maxrss`` would carry the parent's over exec)."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


# -- the project -------------------------------------------------------------------

def _build(n_contexts: int, n_relationships: int, n_dets: int, n_versions: int, n_runs: int, seed: int):
    from django.contrib.auth import get_user_model

    from chronology.benchmarks.site_builder import analyze as _analyze
    from chronology.benchmarks.site_builder import site_items
    from chronology.engine.curves import curve_to_csv
    from chronology.engine.synthetic_curve import synthetic_curve
    from chronology.evidence import writes as evidence_writes
    from chronology.evidence.curves import import_curve
    from chronology.interpretations import services as interpretations
    from chronology.runs.service import run_inline, start_inline
    from projects.models import Membership, Organisation, Project, Role
    from projects.record.changes import Actor, record_change
    from projects.record import bulk

    rng = random.Random(seed)
    suffix = uuid.uuid4().hex[:8]
    home = Organisation.objects.create(slug=f"bench-{suffix}", name="Benchmark unit (invented)")
    away = Organisation.objects.create(slug=f"bench-copy-{suffix}", name="Benchmark archive (invented)")
    users = {}
    for role in (Role.RECORDER, Role.ANALYST, Role.MANAGER):
        user = get_user_model().objects.create_user(username=f"bench-{role}-{suffix}")
        Membership.objects.create(user=user, organisation=home, role=role)
        Membership.objects.create(user=user, organisation=away, role=role)
        users[role] = user
    source = Project.objects.create(organisation=home, code="BENCH", name="Benchmark site (invented)")
    target = Project.objects.create(organisation=away, code="BENCH", name="Benchmark copy (invented)")
    recorder = Actor(user=users[Role.RECORDER], device="bench tablet", request_id="bench")
    analyst = Actor(user=users[Role.ANALYST], device="bench desk")
    manager = Actor(user=users[Role.MANAGER], device="bench office")

    site_contexts, site_rels, per_area = site_items(n_contexts, seed=seed)
    site_rels = site_rels[:n_relationships]
    for i in range(0, len(site_contexts), CHUNK):
        with record_change(source, recorder, summary="contexts") as changes:
            bulk.add_contexts(changes, [({k: v for k, v in c.items() if k != "uid"}, c["uid"])
                                        for c in site_contexts[i:i + CHUNK]])
    for i in range(0, len(site_rels), CHUNK):
        with record_change(source, recorder, summary="relationships") as changes:
            bulk.add_relationships(changes, site_rels[i:i + CHUNK])
    # The full synthetic table, as the demo imports it: curves are shared, and one name holds one table.
    curve, _ = import_curve(curve_to_csv(synthetic_curve()))

    # Four dated layers up one area's sequence, for the model runs; the rest of the evidence later.
    area = per_area[0]
    dated = [area[k * len(area) // 5] for k in range(1, 5)]
    samples = []
    with record_change(source, recorder, summary="first samples") as changes:
        for k, label in enumerate(dated):
            sample = evidence_writes._add_sample(changes, {"context": label, "code": f"S{k:04d}",
                                                           "material": "charred grain", "short_lived": True}, None)
            evidence_writes._add_determination(changes, {"sample": sample.object.id, "lab_code": f"VXB-{k:05d}",
                                                         "cra": 2450 - 50 * k, "cra_sigma": 30,
                                                         "curve": curve.pk}, None)
            samples.append(sample.object)
    content = {"evidence": [{"evidence": f"sample:{s.id}", "use": "included", "outlier_prior": 0.05}
                            for s in samples]}
    _interp, draft = interpretations.create_interpretation(source, analyst, name="Main sequence", content=content)
    version = interpretations.commit(draft, analyst)
    interpretations.propose(version, analyst)
    interpretations.approve(version, manager, reason="benchmark")
    tiny = {"chains": 2, "iterations": 150, "warmup": 50, "thin": 1, "converge": False}
    for k in range(n_runs):
        run_inline(start_inline(source, version, users[Role.ANALYST], seed=k + 1, **tiny))

    labels = [c["label"] for c in site_contexts]
    for start in range(len(dated), n_dets, 100):
        with record_change(source, recorder, summary="samples and determinations") as changes:
            for k in range(start, min(start + 100, n_dets)):
                sample = evidence_writes._add_sample(changes, {"context": rng.choice(labels), "code": f"S{k:04d}",
                                                               "material": "charcoal"}, None)
                evidence_writes._add_determination(changes, {
                    "sample": sample.object.id, "lab_code": f"VXB-{k:05d}", "cra": rng.randint(1500, 3500),
                    "cra_sigma": rng.randint(20, 60), "curve": curve.pk}, None)
    for k in range(1, n_versions):
        version = interpretations.commit(interpretations.new_draft(version, analyst, message=f"look {k}"), analyst)
    _analyze()
    return source.pk, target.pk, users[Role.MANAGER].pk
