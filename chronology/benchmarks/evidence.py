"""Benchmark of weighing by the evidence: the Bayes factor of the demo's two versions.

Reuses the invented demo site Vellmarsh Lane (VML24) on the configured
database, or loads it first with ``manage.py demo --quick`` (tasks
in-process), compiles its two committed readings ("Hearth with the floor" and
"Hearth apart", which use the same evidence) on one overall range, and estimates each one's marginal likelihood by
stepping-stone sampling (Xie et al. 2011) with independent repeats, the two
in parallel threads.  ``seconds`` is the wall time of the two estimates (the
kernel's compile is reported apart); ``relative_mcse`` is the Monte Carlo
standard error of the Bayes factor relative to itself, which is the error of
``log BF`` (delta method).  It prints exactly ``{"suite", "seconds",
"bayes_factor", "relative_mcse"}``; each candidate's estimate, the settings
and the compile time go to stderr.  Correctness is asserted by
``tests/engine/test_marginal_likelihood.py``; this reports time.
"""

from __future__ import annotations

import io
import json
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from chronology.engine.marginal_likelihood import SteppingStoneSettings, stepping_stone
from chronology.engine.sampler import warm_up

__all__ = ["run", "QUICK", "SETTINGS"]

#: Settings of the full run (the target: relative Monte Carlo error of the Bayes factor <= 10 % in <= 2 min).
SETTINGS = SteppingStoneSettings(stones=24, draws=300, thin=2, warmup=150, repeats=40, prior_thin_factor=4)
QUICK = {"settings": SteppingStoneSettings(stones=8, draws=100, thin=1, warmup=50, repeats=2)}


def _demo_versions(code: str):
    """The latest committed version of each of the project's first two interpretations.

    When the demo project is not in the database, ``manage.py demo --quick``
    loads it first (with tasks in-process).
    """
    from django.core.management import call_command

    from chronology.interpretations.models import Interpretation
    from config.celery import app
    from projects.models import Project

    if not Project.objects.filter(code=code).exists():
        previous = app.conf.task_always_eager
        app.conf.task_always_eager = True
        try:
            with tempfile.TemporaryDirectory() as out:
                call_command("demo", out=out, quick=True, stdout=io.StringIO())
        finally:
            app.conf.task_always_eager = previous
    project = Project.objects.filter(code=code).order_by("pk").first()
    found = []
    for interp in Interpretation.objects.filter(project=project).order_by("pk"):
        version = interp.versions.exclude(status="draft").order_by("-number").first()
        if version is not None:
            found.append(version)
    if len(found) < 2:
        raise LookupError(f"project {code} has fewer than two committed interpretations")
    return found[:2]


def run(*, settings: SteppingStoneSettings = SETTINGS, entropy: int = 2011, project: str = "VML24") -> dict:
    """``{"suite": "evidence", "seconds", "bayes_factor", "relative_mcse"}``."""
    from chronology.weighing.candidates import prepare

    compile_seconds = warm_up()
    first, second = _demo_versions(project)
    prepared = prepare(first.project, versions=[first.pk, second.pk])
    models = [c.model for c in prepared.models]
    t0 = time.perf_counter()
    with ThreadPoolExecutor(max_workers=2) as pool:
        estimates = list(pool.map(lambda im: stepping_stone(im[1], entropy=entropy + im[0], settings=settings),
                                  enumerate(models)))
    seconds = time.perf_counter() - t0
    log_bf = estimates[0].log_ml - estimates[1].log_ml
    mcse = float(np.hypot(estimates[0].mcse, estimates[1].mcse))
    details = {
        "log_bayes_factor": round(float(log_bf), 4),
        "compile_seconds": round(compile_seconds, 2),
        "candidates": [{"name": c["name"], "events": c["events"], "log_marginal_likelihood": round(e.log_ml, 4),
                        "mcse": round(e.mcse, 4)} for c, e in zip(prepared.candidates, estimates)],
        "settings": settings.as_dict(),
        "method": estimates[0].method,
        "note": "SYNTHETIC curve: for testing only, not for dating real samples; Bayes factors depend on the priors",
    }
    # stdout carries exactly the suite's figures; the details go to stderr for the reader
    sys.stderr.write(json.dumps(details) + "\n")
    return {"suite": "evidence", "seconds": round(seconds, 2), "bayes_factor": float(np.exp(log_bf)),
            "relative_mcse": round(mcse, 4)}
