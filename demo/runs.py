"""The runs step of the demo (see demo/steps.py).

Samples the approved demonstration interpretation of Vellmarsh Lane (VML24)
in this process and writes its summary table (Markdown and JSON) and the
posterior plots.  The radiocarbon ages were simulated through the engine's
SYNTHETIC curve, so the dates are for demonstration only.
"""

from __future__ import annotations

import json

from demo.outputs import write_output as _write

__all__ = ["model_step", "DEMO_SEED"]

#: Fixed seed entropy, so the demo gives the same numbers on every run.
DEMO_SEED = 20240517


def model_step(state, stdout):
    """Model: sample the approved interpretation of VML24 (4 chains, in-process) and write its summary and interval chart."""
    from chronology.runs.compile import ModelRefused
    from chronology.runs.service import run_inline, start_inline
    from chronology.runs.sources import current_reading
    from chronology.runs.summary_table import markdown_summary

    project = state["project"]
    version = state.get("approved_version") or current_reading(project)
    if version is None:
        stdout.write("  no committed interpretation to model; skipped\n")
        return
    quick = bool(state.get("quick"))
    settings = {"chains": 2, "iterations": 1500, "warmup": 500} if quick else \
        {"chains": 4, "iterations": 6000, "warmup": 1500}
    user = (state.get("users") or {}).get("cleo.analyst")
    try:
        run = start_inline(project, version, user, seed=DEMO_SEED, thin=1, **settings)
    except ModelRefused as exc:
        stdout.write(f"  the model was refused ({exc.code}): {exc.message}\n")
        _write(state, "model-refused.json", json.dumps(exc.as_dict(), indent=2, default=str))
        return
    run = run_inline(run)
    state["run"] = run
    if run.state != "done":
        stdout.write(f"  run {run.pk} ended {run.state}: {run.error}\n")
        return
    _write(state, "model-summary.md", markdown_summary(run, run.summary))
    _write(state, "model-summary.json", json.dumps(run.summary, indent=2, allow_nan=False))
    _write(state, "model-results.json", run.path("results.json").read_text())
    _write(state, "model.json", run.path("model.json").read_text())
    for fmt in ("svg", "png"):
        _write(state, f"model-interval-chart.{fmt}", run.path(f"plot.{fmt}").read_bytes())
    verdict = "converged" if run.converged else "NOT converged (continue the run for more iterations)"
    stdout.write(f"  run {run.pk}: {len(run.summary['events'])} events, {run.chains} chains, {verdict}; "
                 f"{run.timings.get('wall_seconds') or 0:.1f} s\n")
