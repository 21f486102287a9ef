"""The outputs step of the demo (see demo/steps.py).

For the run the model step made, writes what a reviewer receives: the run
report as self-contained HTML and as PDF, the CSV of every modelled range,
and the density panels of the phase boundaries (the interval chart is
written by the model step).  Every one of them says that the curve is
synthetic and that the results need review by a qualified specialist.
"""

from __future__ import annotations

from demo.outputs import write_output as _write

__all__ = ["outputs_step"]


def outputs_step(state, stdout):
    """Outputs: the run report (HTML and PDF), the CSV of modelled ranges and the boundary densities."""
    from chronology.runs.figures import density_figure
    from chronology.runs.report import load_results, stored_report_file

    run = state.get("run")
    if run is None or run.state != "done":
        stdout.write("  no finished run; skipped\n")
        return
    for name, out in (("report.html", "model-report.html"), ("report.pdf", "model-report.pdf"),
                      ("ranges.csv", "model-ranges.csv")):
        _write(state, out, stored_report_file(run, name).read_bytes())
    results = load_results(run)
    boundaries = [e["key"] for e in results["events"] if e["kind"] == "boundary"]
    if boundaries:
        for fmt in ("svg", "png"):
            _write(state, f"model-densities.{fmt}", density_figure(results, boundaries, fmt))
    stdout.write(f"  run report (HTML and PDF), {len(results['events'])} events in model-ranges.csv, "
                 f"{len(boundaries)} boundary densities\n")
