"""Shapes of model-run input and output."""

from __future__ import annotations

from django.urls import reverse
from rest_framework import serializers

from chronology.engine.posterior import CAUTION
from chronology.runs.models import Run
from chronology.runs.outcomes import USER_ERROR_KEYS
from chronology.runs.results import NOT_CONVERGED
from chronology.runs.service import DEFAULTS, LIMITS


class RunInput(serializers.Serializer):
    version = serializers.IntegerField(help_text="Id of a committed interpretation version of this project.")
    chains = serializers.IntegerField(required=False, default=DEFAULTS["chains"], min_value=LIMITS["chains"][0],
                                      max_value=LIMITS["chains"][1])
    iterations = serializers.IntegerField(required=False, default=DEFAULTS["iterations"],
                                          min_value=LIMITS["iterations"][0], max_value=LIMITS["iterations"][1],
                                          help_text="Kept sweeps per chain after warm-up, before thinning.")
    warmup = serializers.IntegerField(required=False, default=DEFAULTS["warmup"], min_value=LIMITS["warmup"][0],
                                      max_value=LIMITS["warmup"][1])
    thin = serializers.IntegerField(required=False, default=DEFAULTS["thin"], min_value=LIMITS["thin"][0],
                                    max_value=LIMITS["thin"][1])
    seed = serializers.IntegerField(required=False, allow_null=True, default=None, min_value=0,
                                    help_text="Seed entropy; the same model and seed give identical results.")
    converge = serializers.BooleanField(required=False, default=True,
                                        help_text="Extend the run (more iterations, then more chains) until every "
                                                  "reported quantity has R-hat <= 1.01 and bulk and tail ESS >= 400.")
    budget_seconds = serializers.IntegerField(required=False, default=DEFAULTS["budget_seconds"],
                                              min_value=LIMITS["budget_seconds"][0],
                                              max_value=LIMITS["budget_seconds"][1],
                                              help_text="Wall time the run may take to converge.")
    max_iterations = serializers.IntegerField(required=False, default=DEFAULTS["max_iterations"],
                                              min_value=LIMITS["max_iterations"][0],
                                              max_value=LIMITS["max_iterations"][1],
                                              help_text="Most kept sweeps per chain the run may grow to.")


class ContinueInput(serializers.Serializer):
    iterations = serializers.IntegerField(required=False, allow_null=True, default=None,
                                          min_value=LIMITS["iterations"][0], max_value=LIMITS["iterations"][1],
                                          help_text="More kept sweeps per chain (default: as many as the run had). "
                                                    "Leave out to resume a failed or cancelled run as it was.")
    seed = serializers.IntegerField(required=False, allow_null=True, default=None, min_value=0)


def _fraction(run: Run, c) -> float:
    """Share of the chain's kept sweeps stored or being sampled (a warm-up counts as nothing)."""
    if not run.iterations or c.state == "done":
        return 1.0 if c.state == "done" else 0.0
    doing = max(c.sweeps_done - run.warmup, 0) if c.state == "running" else 0
    return round(min((c.iterations_done + doing) / run.iterations, 1.0), 4)


def _url(request, run: Run, name: str = "run-detail", **extra) -> str:
    path = reverse(name, kwargs={"project": run.project.code, "pk": str(run.pk), **extra})
    return request.build_absolute_uri(path) if request is not None else path


def run_output_url(request, run: Run, name: str, **extra) -> str:
    """The URL of one of a run's outputs (``run-report-pdf``, ``run-compare-figure`` ...)."""
    return _url(request, run, name, **extra)


def run_data(run: Run, request=None, *, chains=None) -> dict:
    """The poll view of a run: state, progress per chain, settings, provenance and links."""
    rows = chains if chains is not None else list(run.chain_rows.all())
    total = run.total_sweeps
    progress = [
        {"chain": c.index, "state": c.state, "sweeps_done": c.sweeps_done, "sweeps_total": total,
         "iterations_done": c.iterations_done, "fraction": _fraction(run, c), "attempts": c.attempts,
         "seconds": c.seconds, "compile_seconds": c.compile_seconds,
         "lease_expires_at": c.lease_expires_at if c.state == "running" else None}
        for c in rows
    ]
    overall = sum(p["fraction"] for p in progress) / len(progress) if progress else 0.0
    summary = run.summary or {}
    done = run.state == "done"
    data = {
        "id": str(run.pk),
        "url": _url(request, run),
        "project": run.project.code,
        "version": run.version_id,
        "version_label": run.version_label,
        "record_revision": run.record_revision,
        "continues": str(run.parent_id) if run.parent_id else None,
        "state": run.state,
        "cancel_requested": run.cancel_requested,
        "combining": run.combining,
        "progress": {"fraction": round(1.0 if done else overall, 4), "chains": progress},
        "settings": {"chains": run.chains, "iterations": run.iterations, "warmup": run.warmup, "thin": run.thin,
                     "seed_entropy": run.seed_entropy, "rng": run.rng, "converge": run.converge,
                     "budget_seconds": run.budget_seconds, "max_iterations": run.max_iterations},
        "extensions": run.rounds,
        "verdict": run.verdict,
        "model_hash": run.model_hash,
        "prior": run.prior,
        "grid": run.grid,
        "range": run.range,
        "curves": [{k: c.get(k) for k in ("key", "name", "checksum", "citation", "licence", "synthetic")}
                   for c in run.curves],
        "notes": run.compile_notes,
        "library_versions": run.library_versions,
        "software_commit": run.software_commit,
        "created_at": run.created_at,
        "started_at": run.started_at,
        "finished_at": run.finished_at,
        "timings": run.timings,
        "error": {k: v for k, v in run.error.items() if k in USER_ERROR_KEYS} if run.error else None,
        "converged": run.converged,
        "convergence_warning": NOT_CONVERGED if run.converged is False else None,
        "caution": CAUTION,
        "links": {
            "model": _url(request, run, "run-model"),
        },
    }
    if done:
        data["summary"] = {k: summary.get(k) for k in ("events", "questions", "outliers", "convergence")}
        data["links"].update({
            "results": _url(request, run, "run-results"),
            "samples": _url(request, run, "run-samples"),
            "plot_svg": _url(request, run, "run-plot", fmt="svg"),
            "plot_png": _url(request, run, "run-plot", fmt="png"),
            "report_html": _url(request, run, "run-report-html"),
            "report_pdf": _url(request, run, "run-report-pdf"),
            "ranges_csv": _url(request, run, "run-ranges-csv"),
            "densities_svg": _url(request, run, "run-densities", fmt="svg"),
            "compare": _url(request, run, "run-compare") + "?with={run}",
            "continue": _url(request, run, "run-continue"),
        })
    elif run.state in ("failed", "cancelled"):
        data["links"]["continue"] = _url(request, run, "run-continue")
    elif not run.is_terminal:
        data["links"]["cancel"] = _url(request, run, "run-cancel")
    return data
