"""The work of a sensitivity run's job, as the Celery task runs it (see :mod:`chronology.weighing.sensitivity`).

The base and each variation are sampled with the same settings and seed; a
variation that can no longer be compiled is reported as refused, the others
by how each boundary's median and ranges move from the base.
"""

from __future__ import annotations

import numpy as np

from chronology import jobs
from chronology.engine.errors import SamplingCancelled
from chronology.engine.posterior import CAUTION, summarise
from chronology.engine.sampler import SAMPLER_METHOD, run_chains
from chronology.engine.sensitivity import boundary_table, movements
from chronology.models import Job
from chronology.runs.compile import ModelRefused
from chronology.runs.sources import find_version

from .job_errors import refused_in_job
from .variants import compile_variant

__all__ = ["run"]


def _label(v: dict, i: int) -> str:
    if v.get("label"):
        return v["label"]
    return "; ".join(f"{k} {v[k]}" for k in v if k != "label") or f"variation {i + 1}"


def _sample(compiled, params, reporter, share: float, offset: float) -> tuple[dict, dict]:
    s = params["settings"]

    def progress(done):
        reporter.progress(offset + share * done / (s["chains"] * (s["iterations"] + s["warmup"])))

    try:
        chains = run_chains(compiled.model, entropy=int(params["seed"]), n_chains=s["chains"],
                            iterations=s["iterations"], warmup=s["warmup"], workers=1, progress=progress,
                            cancel=reporter.cancelled)
    except SamplingCancelled as exc:
        raise jobs.JobCancelled() from exc
    draws = np.stack([c.draws for c in chains])
    summary = summarise(compiled.model, draws, curves=[c.get("name", c.get("key", "")) for c in compiled.curves])
    table = boundary_table(compiled.model, summary)
    return table, {"model_hash": compiled.model_hash, "curves": list(compiled.curves),
                   "range": [compiled.model.range_lo, compiled.model.range_hi]}


def run(job: Job, reporter: jobs.Reporter) -> dict:
    """The job's work: sample the base and each variation, then the moves of every boundary."""
    version = find_version(job.project, job.params["version"])
    variations = job.params["variations"]
    share = 1.0 / (len(variations) + 1)
    try:
        base_model = compile_variant(version)
    except ModelRefused as exc:
        raise refused_in_job(exc) from exc
    reporter.progress(0.0, force=True, step="base")
    base, base_info = _sample(base_model, job.params, reporter, share, 0.0)
    rows = []
    for i, v in enumerate(variations):
        reporter.progress(share * (i + 1), force=True, step=f"variation {i + 1}")
        try:
            compiled = compile_variant(version, variation=v)
        except ModelRefused as exc:
            rows.append({"label": _label(v, i), "variation": v, "refused": {"code": exc.code, "reason": exc.message}})
            continue
        table, info = _sample(compiled, job.params, reporter, share, share * (i + 1))
        rows.append({"label": _label(v, i), "variation": v, **info, "boundaries": movements(base, table)})
    return {
        "version": job.params["version"], "version_label": job.params["version_label"],
        "base": {**base_info, "boundaries": base}, "variations": rows,
        "settings": job.params["settings"], "seed": job.params["seed"],
        "units": "calendar years (astronomical); a positive shift is toward the present",
        "method": SAMPLER_METHOD, "review": CAUTION,
        "note": "moves are differences of Monte Carlo estimates: compare them with shift_mcse",
    }
