"""Benchmark of weighing by the evidence: Bayes factors of two pairs of versions.

Two cases, each a pair of committed versions that use the same evidence,
compiled on one overall range, whose marginal likelihoods are estimated by
stepping-stone sampling (Xie et al. 2011) with independent repeats, the two
versions in parallel threads:

* ``24-events``: the invented benchmark site Rookham Field (``EVB24``,
  :mod:`chronology.benchmarks.evidence_site`), built on the configured
  database through the public write path when missing: "Pits in turn" and
  "Pits together", 24 events each.  This is the case of the target (relative
  Monte Carlo error of the Bayes factor <= 10 % in <= 2 min on the shared
  2-core machine) and gives the top-level figures;
* ``demo``: the demo site Vellmarsh Lane (VML24), loaded first with
  ``manage.py demo --quick`` (tasks in-process) when missing: "Hearth with the
  floor" and "Hearth apart" (19 and 20 events).

``seconds`` is the wall time of a case's two estimates (the kernel's compile
is reported apart); ``relative_mcse`` is the Monte Carlo standard error of
the Bayes factor relative to itself, which is the error of ``log BF`` (delta
method).  stdout carries ``{"suite", "seconds", "bayes_factor",
"relative_mcse", "events", "cases"}``; each candidate's estimate, the
settings and the compile time go to stderr.  Correctness is asserted by
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

__all__ = ["run", "QUICK", "SETTINGS", "DEMO_SETTINGS", "CASES"]

#: Settings of the 24-event case (the target: relative Monte Carlo error of the Bayes factor <= 10 % in <= 2 min).
#: Whole-site moves on the stones below beta = 0.05 (the default) and twice the thinning there: on this site
#: the error is spread over the ten stones below 0.05; 20 repeats give about 6-7 % (docs/statistics.md).
SETTINGS = SteppingStoneSettings(stones=24, draws=300, thin=2, warmup=150, repeats=20, prior_thin_factor=2,
                                 near_prior=0.05)
#: Settings of the demo case: on its five phases the first three stones need the longest chains (four times
#: the thinning below beta = 0.0005), with the whole-site moves below 0.05 as above.
DEMO_SETTINGS = SteppingStoneSettings(stones=24, draws=300, thin=2, warmup=150, repeats=24, prior_thin_factor=4,
                                      near_prior=0.0005)
_SMALL = SteppingStoneSettings(stones=8, draws=100, thin=1, warmup=50, repeats=2)
QUICK = {"settings": _SMALL, "demo_settings": _SMALL}
CASES = ("24-events", "demo")


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


def _case(versions, settings: SteppingStoneSettings, entropy: int) -> tuple[dict, dict]:
    """One pair of versions: (figures for stdout, details for stderr)."""
    from chronology.weighing.candidates import prepare

    first, second = versions
    prepared = prepare(first.project, versions=[first.pk, second.pk])
    models = [c.model for c in prepared.models]
    t0 = time.perf_counter()
    with ThreadPoolExecutor(max_workers=2) as pool:
        estimates = list(pool.map(lambda im: stepping_stone(im[1], entropy=entropy + im[0], settings=settings),
                                  enumerate(models)))
    seconds = time.perf_counter() - t0
    log_bf = estimates[0].log_ml - estimates[1].log_ml
    mcse = float(np.hypot(estimates[0].mcse, estimates[1].mcse))
    figures = {"seconds": round(seconds, 2), "bayes_factor": float(np.exp(log_bf)), "relative_mcse": round(mcse, 4),
               "events": {c["name"]: c["events"] for c in prepared.candidates}}
    details = {
        "log_bayes_factor": round(float(log_bf), 4),
        "candidates": [{"name": c["name"], "events": c["events"], "log_marginal_likelihood": round(e.log_ml, 4),
                        "mcse": round(e.mcse, 4)} for c, e in zip(prepared.candidates, estimates)],
        "settings": settings.as_dict(),
        "method": estimates[0].method,
    }
    return figures, details


def run(*, settings: SteppingStoneSettings = SETTINGS, demo_settings: SteppingStoneSettings = DEMO_SETTINGS,
        entropy: int = 2011, project: str = "VML24", cases=CASES) -> dict:
    """``{"suite": "evidence", "seconds", "bayes_factor", "relative_mcse", "events", "cases"}``.

    The top-level figures are those of the ``24-events`` case (or of the
    first case run, when it is left out).
    """
    from chronology.benchmarks.evidence_site import ensure_site

    compile_seconds = warm_up()
    figures, details = {}, {"compile_seconds": round(compile_seconds, 2)}
    for name in cases:
        if name == "24-events":
            figures[name], details[name] = _case(ensure_site(), settings, entropy)
        elif name == "demo":
            figures[name], details[name] = _case(_demo_versions(project), demo_settings, entropy)
        else:
            raise ValueError(f"unknown case {name!r}: one of {', '.join(CASES)}")
    details["note"] = ("SYNTHETIC curve: for testing only, not for dating real samples; Bayes factors depend on "
                       "the priors")
    # stdout carries the suite's figures; the details go to stderr for the reader
    sys.stderr.write(json.dumps(details) + "\n")
    top = figures.get("24-events") or figures[cases[0]]
    return {"suite": "evidence", **top, "cases": figures}
