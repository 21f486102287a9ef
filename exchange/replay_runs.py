"""Runs of a package, kept in the target as the finished records they are.

A run is not replayed (its draws are in the package as NetCDF; sampling
again would cost what it cost the first time and, with another software
version, might not give the same draws).  The run row is stored with its
settings, seed, model hash, summaries and diagnostics exactly as in the
package, pointing at the rebuilt version, and its samples file is copied
into the run's directory.  The run's key in the package is kept with the
import so a later export names the run as its first home did.
"""

from __future__ import annotations

import shutil

from chronology.runs.models import Run

from .package import reader
from .package.reader import refuse


def replay(replay) -> dict[str, str]:
    """Store every run of the package; returns {new run id: run key in the package}."""

    keys, made = replay.keys, {}
    by_key: dict[str, Run] = {}
    for n, row in enumerate(reader.rows(replay.zf, "runs"), start=2):
        version = keys.version_row.get(row["version"])
        if version is None:
            raise refuse("runs", n, f"run {row['key']} refers to version {row['version']}, which was not rebuilt",
                         "missing-reference", "version")
        user = replay.actors.user(row["created_by"] or "") or replay.importer
        run = Run.objects.create(
            project=replay.project, version_id=version, version_label=row["version"],
            record_revision=row["record_revision"], parent=by_key.get(row["parent"]) if row["parent"] else None,
            state=row["state"], created_by=user, chains=row["chains"], iterations=row["iterations"],
            warmup=row["warmup"], thin=row["thin"], seed_entropy=row["seed_entropy"] or "", rng=row["rng"] or "",
            model_hash=row["model_hash"] or "", prior=row["prior"] or "", grid=row["grid"] or {},
            range=row["range"] or {}, curves=row["curves"] or [], compile_notes=row["compile_notes"] or [],
            library_versions=row["library_versions"] or {}, software_commit=row["software_commit"] or "",
            converged=row["converged"], error=row["error"], summary=row["summary"],
        )
        by_key[row["key"]] = run
        made[str(run.pk)] = row["key"]
        if row["samples_file"]:
            run.directory.mkdir(parents=True, exist_ok=True)
            with replay.zf.open(row["samples_file"]) as src, open(run.path("samples.nc"), "wb") as out:
                shutil.copyfileobj(src, out, 1 << 20)
    return made
