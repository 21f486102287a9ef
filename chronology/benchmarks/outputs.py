"""Benchmark of a finished run's outputs: the report (HTML and PDF), the CSV and every figure.

A 200-event run is made up here, for the benchmark only: ten phases, each
with its beginning, its close and eighteen dated events, and posterior
draws fabricated from normal distributions (their densities and
highest-density ranges are computed by the engine as for a real run).  One
radiocarbon determination per dated event, calibrated against the engine's
SYNTHETIC curve, and the order diagram of a generated 200-context site stand
in for what the report reads from the record.  Everything a reader gets is
timed and its size reported: the report HTML and PDF, the CSV of modelled
ranges, the interval chart (SVG, PNG), the density panels (SVG, PNG) and a
comparison of two runs (SVG, PNG).
"""

from __future__ import annotations

import base64
import tempfile
import time
from pathlib import Path

import numpy as np

__all__ = ["run", "synthetic_results", "QUICK"]

QUICK = {"phases": 3, "per_phase": 6}

_MASSES = (0.683, 0.954)


def _ranges(years, density):
    from chronology.engine.calendar_scales import format_range
    from chronology.engine.hpd import hpd_regions

    out = {}
    for m in _MASSES:
        out[f"{m * 100:.1f}"] = [{"from": r.start, "to": r.end, "probability": r.probability,
                                  "text": format_range(r.start, r.end), "text_cal_bp": format_range(r.start, r.end, "bp")}
                                 for r in hpd_regions(years, density, m)]
    return out


def _event(key, label, kind, phase, draws, years, likelihood=None) -> dict:
    from chronology.engine.calendar_scales import format_year
    from chronology.engine.posterior import _smooth

    edges = np.append(years - 0.5, years[-1] + 0.5)
    density = np.histogram(draws, bins=edges)[0].astype(float)
    # Smoothed as the service's own summaries are, so the ranges split as a real run's do.
    density = _smooth(density / density.sum(), draws, 1.0)
    density /= density.sum()
    median = float(np.median(draws))
    return {"key": key, "label": label, "kind": kind, "phase": phase, "estimated_from_order_only": False,
            "median": median, "median_text": format_year(median), "median_cal_bp": 1950 - median,
            "mean": float(draws.mean()), "mcse_mean": 0.5, "hpd": _ranges(years, density),
            "unmodelled": None if likelihood is None else _ranges(years, likelihood),
            "diagnostics": {"r_hat": 1.002, "ess_bulk": 2400.0, "ess_tail": 2100.0, "mcse": 0.5, "ok": True},
            "density": density.tolist(), "likelihood": None if likelihood is None else likelihood.tolist()}


def synthetic_results(phases: int = 10, per_phase: int = 18, *, seed: int = 0, shift: float = 0.0) -> dict:
    """A made-up results document of ``phases * (per_phase + 2)`` events (benchmark only)."""
    from chronology.engine.posterior import CAUTION

    rng = np.random.default_rng(seed)
    years = np.arange(-1500.0, 601.0)
    events, phase_rows, evidence, outliers = [], [], [], []
    n = 4000
    for j in range(phases):
        key, name = f"p{j}", f"Phase {j + 1}"
        t0 = -1200 + 160 * j + shift
        members = []
        for kind, label, mu in (("boundary", f"Beginning of {name}", t0), ("boundary", f"Close of {name}", t0 + 120)):
            events.append(_event(f"{'beginning' if 'Beginning' in label else 'close'}:{key}", label, kind, key,
                                 rng.normal(mu, 25, n), years))
        for i in range(per_phase):
            mu = t0 + 10 + 100 * (i + 0.5) / per_phase
            label = f"{2001 + 100 * j + i}"
            lik = np.exp(-0.5 * ((years - mu) / 45) ** 2)
            lik /= lik.sum()
            ev_key = f"ctx:{j * 100 + i}"
            events.append(_event(ev_key, label, "dated", key, rng.normal(mu, 18, n), years, lik))
            members.append(ev_key)
            code = f"VXL-{1001 + j * per_phase + i:04d}"
            evidence.append({"key": f"determination:{j * 100 + i}", "kind": "radiocarbon", "lab_codes": [code],
                             "label": code, "context_label": label, "use": "included", "outlier_prior": 0.05,
                             "true_year": mu})
            outliers.append({"evidence": f"determination:{j * 100 + i}", "name": code, "event": ev_key,
                             "event_label": label, "chance_assumed": 0.05,
                             "chance_estimated": float(rng.uniform(0, 0.2)), "mcse": 0.004})
        phase_rows.append({"key": key, "label": name, "beginning": f"beginning:{key}", "close": f"close:{key}",
                           "members": members, "arrangement_next": "sequential" if j + 1 < phases else None})
    from chronology.engine.labels import format_probability

    for o in outliers:
        o["chance_estimated_text"] = format_probability(o["chance_estimated"])
    curve = {"key": "1", "name": "TELLSTACK-SYNTHETIC-1", "synthetic": True, "checksum": "0" * 64,
             "citation": "SYNTHETIC curve generated by Tellstack; not for dating real samples.",
             "licence": "SYNTHETIC; free to copy and use for testing."}
    return {
        "run": f"bench-{seed}", "project": "VML24", "site": "Vellmarsh Lane", "version": 1,
        "version_label": "Benchmark phasing v1", "record_revision": 200, "model_hash": "0" * 64,
        "curves": [curve], "curve_names": ["TELLSTACK-SYNTHETIC-1 (checksum 000000000000)"],
        "prior": "uniform-span", "prior_text": "uniform-span boundary prior (Nicholls & Jones 2001)",
        "range": {"lo": -1500, "hi": 600}, "grid": {"step": 1.0}, "methods": ["fabricated draws (benchmark only)"],
        "caution": CAUTION, "notes": ["a SYNTHETIC calibration curve was used"], "n_draws": n,
        "settings": {"chains": 4, "iterations": 1000, "warmup": 0, "thin": 1, "seed_entropy": seed},
        "software": {"commit": "benchmark", "libraries": {"numpy": np.__version__}}, "converged": True,
        "convergence": {"converged": True, "warning": None, "max_r_hat": 1.002, "min_ess_bulk": 2400.0,
                        "failing": [], "thresholds": {"r_hat_max": 1.01, "ess_bulk_min": 400.0},
                        "method": "fabricated (benchmark only)"},
        "phases": phase_rows, "events": events,
        "questions": [{"key": "precedence:p0:p1", "label": "Probability that Phase 1 began before Phase 2",
                       "kind": "precedence", "probability": 1.0, "probability_text": "> 0.999", "mcse": 0.0}],
        "outliers": outliers, "evidence": evidence,
        "years": {"start": float(years[0]), "step": 1.0, "n": int(years.size)},
    }


def _facts(results: dict) -> dict:
    """What the report reads from the record, made up to match ``results``: determinations and the diagram."""
    from chronology.benchmarks.diagram import site_graph
    from chronology.engine.calibration import calibrate, curve_on_grid
    from chronology.engine.diagram import layout_diagram, render_svg
    from chronology.engine.synthetic_curve import synthetic_curve
    from chronology.runs.report_tables import determination_row

    curve = curve_on_grid(synthetic_curve(0, 4000))
    rows = []
    for ev in results["evidence"]:
        bp = 1950 - ev["true_year"]
        cra = float(np.interp(bp, 1950 - curve.grid.years[::-1], curve.mu[::-1]))
        cal = calibrate(cra, 30.0, curve, label=ev["label"])
        calibrated = {f"{m * 100:.1f}": [(r.start, r.end) for r in rs] for m, rs in cal.hpd.items()}
        fact = {"lab_code": ev["label"], "context": ev["context_label"], "sample": f"S{ev['context_label']}",
                "material": "charred grain", "short_lived": True, "delta13c": -24.0, "cra": cra, "sigma": 30.0,
                "curve": "TELLSTACK-SYNTHETIC-1", "use": "included", "outlier_prior": 0.05}
        rows.append(determination_row(fact, calibrated))
    nodes, edges = site_graph(200, seed=1)
    svg = render_svg(layout_diagram(nodes, edges), title="Vellmarsh Lane — temporal order (benchmark site)")
    return {"digest": "0" * 64, "determinations": rows, "structure_svg": "data:image/svg+xml;base64," + base64.b64encode(svg.encode()).decode(),
            "structure_error": "", "reasons": {"message": "benchmark"}}


def run(phases: int = 10, per_phase: int = 18) -> dict:
    """Time the report (HTML, PDF), the CSV and every figure of a made-up run; sizes in bytes.

    ``seconds`` is the wall-clock time of everything after the made-up run
    exists; ``cpu_seconds`` the processor time of this process over the same
    span (on a shared machine the wall clock also counts other processes).
    """
    from chronology.engine.plots.figure_parts import render
    from chronology.runs.figures import comparison_figure_of, density_grid_of, interval_figure_of
    from chronology.runs.report import ranges_csv, report_documents

    first = synthetic_results(phases, per_phase, seed=0)
    second = synthetic_results(phases, per_phase, seed=1, shift=15.0)
    steps, files = {}, []
    out = Path(tempfile.mkdtemp(prefix="tellstack-bench-outputs-"))

    def keep(name, data):
        data = data.encode() if isinstance(data, str) else data
        (out / name).write_bytes(data)
        files.append({"name": name, "bytes": len(data)})

    def timed(step, fn):
        t, c = time.perf_counter(), time.process_time()
        value = fn()
        steps[step] = {"seconds": round(time.perf_counter() - t, 3), "cpu_seconds": round(time.process_time() - c, 3)}
        return value

    total, cpu = time.perf_counter(), time.process_time()
    facts = timed("record facts (calibrations, order diagram)", lambda: _facts(first))
    docs = timed("report HTML and PDF", lambda: report_documents(first, facts))
    keep("report.html", docs["html"])
    keep("report.pdf", docs["pdf"])
    keep("ranges.csv", timed("ranges CSV", lambda: ranges_csv(first)))
    for name, make in (("interval-chart", lambda: interval_figure_of(first)),
                       ("densities", lambda: density_grid_of(first, None)),
                       ("compare", lambda: comparison_figure_of(first, second))):
        fig = timed(f"{name} drawn", make)
        for fmt in ("svg", "png"):
            keep(f"{name}.{fmt}", timed(f"{name}.{fmt}", lambda: render(fig, fmt)))
    seconds, cpu_seconds = time.perf_counter() - total, time.process_time() - cpu
    return {"suite": "outputs", "seconds": round(seconds, 3), "cpu_seconds": round(cpu_seconds, 3),
            "events": len(first["events"]), "determinations": len(facts["determinations"]),
            "target_seconds": 10.0, "steps": steps, "files": files, "folder": str(out)}
