"""Combining a run's chains into diagnostics, summaries, plots and the NetCDF archive.

Everything numerical comes from the engine: question draws and summaries
(:mod:`chronology.engine.posterior`), convergence diagnostics with ArviZ
(:mod:`chronology.engine.diagnostics`); the figures are drawn by
:mod:`chronology.runs.figures`.  This module reads the chain files, writes
the artefacts into the run's folder and turns the summary into plain JSON.
Every output names the curve(s), the prior and the run, and carries the
engine's caution.  Events, questions and outliers are named in plain words:
contexts by label, determinations by lab code, boundaries as "Beginning of
X", "Close of X" or "Changeover X to Y".
"""

from __future__ import annotations

import json
import os
import uuid
from pathlib import Path

import numpy as np

from chronology.engine.diagnostics import (
    ESS_BULK_MIN,
    R_HAT_MAX,
    read_netcdf,
    to_inference_data,
    write_netcdf,
)
from chronology.engine.diagnostics import diagnose as engine_diagnose
from chronology.engine.calendar_scales import format_range
from chronology.engine.hpd import hpd_regions
from chronology.engine.labels import format_probability, label_list
from chronology.engine.model import Model
from chronology.engine.range_pressure import RANGE_WARNING, range_pressure
from chronology.engine.posterior import CAUTION, HPD_MASSES, PosteriorSummary, question_draws, summarise
from chronology.runs.figures import write_run_figures

__all__ = ["CAUTION", "NOT_CONVERGED", "load_model", "load_chain", "combine_draws", "compute_results",
           "read_chain_file", "write_chain_file"]

NOT_CONVERGED = (
    f"NOT CONVERGED: at least one reported quantity has R-hat above {R_HAT_MAX} or a bulk or tail effective "
    f"sample size below {ESS_BULK_MIN:g} (Vehtari et al. 2021). Continue the run for more iterations before "
    "using these results."
)


def load_model(run) -> Model:
    return Model.from_json(run.path("model.json").read_text())


def write_chain_file(path: Path, result, *, model_hash: str, seed_entropy: str) -> None:
    """Write one chain's draws atomically (a reader never sees half a file)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.stem}.{os.getpid()}.tmp.npz")
    np.savez(tmp, draws=result.draws, outliers=result.outliers, event_keys=np.array(result.event_keys),
             evidence_keys=np.array(result.evidence_keys, dtype=str), initial=result.initial,
             seconds=np.array(result.seconds), model_hash=np.array(model_hash),
             seed_entropy=np.array(seed_entropy), chain=np.array(result.chain))
    os.replace(tmp, path)


def read_chain_file(path: Path) -> dict:
    with np.load(path, allow_pickle=False) as f:
        return {k: f[k] for k in f.files}


def load_chain(run, k: int) -> dict | None:
    """The stored draws of chain ``k`` if they belong to this run's model and seed, else None."""
    path = run.chain_path(k)
    if not path.exists():
        return None
    try:
        data = read_chain_file(path)
    except (OSError, ValueError):
        return None
    if str(data["model_hash"]) != run.model_hash or str(data["seed_entropy"]) != run.seed_entropy:
        return None
    return data


def combine_draws(run) -> tuple[np.ndarray, np.ndarray, tuple[str, ...]]:
    """(dates, outliers, evidence keys) of every chain as (chain, draw, ...) arrays.

    A continuation's draws follow its parent's, chain by chain.  Chains are
    cut to the shortest one.
    """
    chains = [load_chain(run, k) for k in range(run.chains)]
    if any(c is None for c in chains):
        raise FileNotFoundError("a chain's draws are missing")
    evidence_keys = tuple(str(k) for k in chains[0]["evidence_keys"])
    dates = [c["draws"] for c in chains]
    outl = [c["outliers"] for c in chains]
    if run.parent_id is not None:
        parent = read_netcdf(str(run.parent.path("samples.nc"))).posterior
        pd = np.asarray(parent["date"].values)
        po = np.asarray(parent["outlier"].values) if "outlier" in parent else np.zeros(pd.shape[:2] + (0,))
        dates = [np.concatenate([pd[k], dates[k]]) for k in range(run.chains)]
        outl = [np.concatenate([po[k].astype(np.int8), outl[k]]) for k in range(run.chains)]
    n = min(d.shape[0] for d in dates)
    return np.stack([d[:n] for d in dates]), np.stack([o[:n] for o in outl]), evidence_keys


def _curve_names(run) -> list[str]:
    return [f"{c.get('name')} (checksum {str(c.get('checksum', ''))[:12]})" for c in run.curves]


def _ranges(hpd: dict, text: dict, text_bp: dict) -> dict:
    out = {}
    for m in HPD_MASSES:
        out[f"{m * 100:.1f}"] = [
            {"from": r.start, "to": r.end, "probability": r.probability, "text": t, "text_cal_bp": tb}
            for r, t, tb in zip(hpd[m], text[m], text_bp[m])
        ]
    return out


def _finite(x):
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def _unmodelled(years, likelihood) -> dict | None:
    """HPD ranges of the event's evidence calibrated alone (no model), as in :func:`_ranges`."""
    if likelihood is None or not np.isfinite(likelihood).all() or likelihood.max() <= 0:
        return None
    out = {}
    for m in HPD_MASSES:
        rs = hpd_regions(years, likelihood, m)
        out[f"{m * 100:.1f}"] = [{"from": r.start, "to": r.end, "probability": r.probability,
                                  "text": format_range(r.start, r.end), "text_cal_bp": format_range(r.start, r.end, "bp")}
                                 for r in rs]
    return out


def _evidence_names(evidence_rows) -> dict:
    """Evidence key -> how a reader knows it: lab codes for radiocarbon, else its label."""
    out = {}
    for row in evidence_rows or ():
        codes = row.get("lab_codes") or []
        out[row["key"]] = label_list(codes, sort=False) if codes else (row.get("label") or row["key"])
    return out


def _phases(model: Model) -> list[dict]:
    return [{"key": p.key, "label": p.label, "beginning": p.beginning, "close": p.close,
             "members": list(p.members), "arrangement_next": p.arrangement_next} for p in model.phases]


def _range_check(model: Model, dates) -> dict:
    event_labels = {e.key: e.label for e in model.events}
    flat = None if dates is None else np.asarray(dates).reshape(-1, len(model.event_keys))
    pressed = [] if flat is None else range_pressure(flat, model.event_keys, model.range_lo, model.range_hi)
    for row in pressed:
        row["label"] = event_labels.get(row["event"], row["event"])
    return {"lo": model.range_lo, "hi": model.range_hi, "pressed": pressed,
            "warning": RANGE_WARNING if pressed else None}


def summary_to_dict(run, model: Model, summary: PosteriorSummary, report, labels: dict, *, densities: bool,
                    evidence_rows=(), dates=None) -> dict:
    diag = {q.name: q for q in report.quantities}

    def d(name):
        q = diag.get(name)
        if q is None:
            return None
        return {"r_hat": _finite(q.r_hat), "ess_bulk": _finite(q.ess_bulk), "ess_tail": _finite(q.ess_tail),
                "mcse": _finite(q.mcse), "ok": bool(q.ok)}

    events = []
    for e in summary.events:
        row = {
            "key": e.key, "label": e.label, "kind": e.kind, "phase": e.phase,
            "estimated_from_order_only": e.estimated_from_order_only,
            "median": e.median, "median_text": e.median_text, "median_cal_bp": e.median_cal_bp,
            "mean": e.mean, "mcse_mean": _finite(e.mcse_mean),
            "hpd": _ranges(e.hpd, e.hpd_text, e.hpd_text_bp),
            "unmodelled": _unmodelled(model.grid.years, e.likelihood),
            "diagnostics": d(e.key),
        }
        if densities:
            row["density"] = [float(v) for v in e.density]
            row["likelihood"] = None if e.likelihood is None else [float(v) for v in e.likelihood]
        events.append(row)
    questions = []
    for q in summary.questions:
        row = {"key": q.key, "label": labels.get(q.key, q.key), "kind": q.kind, "a": q.a, "b": q.b,
               "mean": q.mean, "mcse": _finite(q.mcse), "median": _finite(q.median), "diagnostics": d(q.key)}
        if q.kind == "precedence":
            row["probability"] = q.mean
            row["probability_text"] = format_probability(q.mean)
        else:
            row["unit"] = "years"
            row["hpd"] = {f"{m * 100:.1f}": [{"from": r.start, "to": r.end, "probability": r.probability} for r in rs]
                          for m, rs in q.hpd.items()}
        questions.append(row)
    names = _evidence_names(evidence_rows)
    event_labels = {e.key: e.label for e in model.events}
    outliers = [{"evidence": o.evidence_key, "name": names.get(o.evidence_key, o.evidence_key),
                 "event": o.event_key, "event_label": event_labels.get(o.event_key, ""),
                 "chance_assumed": o.prior, "chance_estimated": o.posterior,
                 "chance_estimated_text": format_probability(o.posterior),
                 "mcse": _finite(o.mcse), "diagnostics": d(o.evidence_key)} for o in summary.outliers]
    converged = bool(report.converged)
    out = {
        "run": str(run.pk),
        "project": run.project.code,
        "site": run.project.name,
        "version": run.version_id,
        "version_label": run.version_label,
        "record_revision": run.record_revision,
        "model_hash": run.model_hash,
        "curves": list(run.curves),
        "curve_names": list(summary.curves),
        "prior": summary.prior,
        "prior_text": summary.prior_text,
        "range": run.range,
        "range_check": _range_check(model, dates),
        "grid": run.grid,
        "methods": list(summary.methods),
        "caution": summary.caution,
        "notes": list(run.compile_notes),
        "n_draws": summary.n_draws,
        "settings": {"chains": run.chains, "iterations": run.iterations, "warmup": run.warmup, "thin": run.thin,
                     "seed_entropy": run.seed_entropy, "rng": run.rng,
                     "continues": str(run.parent_id) if run.parent_id else None},
        "software": {"commit": run.software_commit, "libraries": dict(run.library_versions)},
        "converged": converged,
        "verdict": getattr(run, "verdict", None),
        "timings": dict(getattr(run, "timings", None) or {}),
        "convergence": {
            "converged": converged,
            "warning": None if converged else NOT_CONVERGED,
            "max_r_hat": _finite(report.max_r_hat),
            "min_ess_bulk": _finite(report.min_ess_bulk),
            "failing": list(report.failing),
            "thresholds": dict(report.thresholds),
            "method": report.method,
        },
        "phases": _phases(model),
        "events": events,
        "questions": questions,
        "outliers": outliers,
        "calendar": "HPD ranges in cal BC/AD (text) and cal BP (text_cal_bp); numbers are astronomical years "
                    "(1 BC = 0)",
    }
    return out


def compute_results(run) -> dict:
    """Diagnose and summarise every chain of ``run``; write samples, results and plots; return the summary."""
    model = load_model(run)
    dates, outliers, evidence_keys = combine_draws(run)
    qd = question_draws(model, dates)
    qkeys = [q.key for q in model.questions]
    attrs = {"run": str(run.pk), "model_hash": run.model_hash, "seed_entropy": run.seed_entropy,
             "curves": "; ".join(_curve_names(run)), "prior": model.prior, "caution": CAUTION,
             "chains": run.chains, "warmup": run.warmup, "thin": run.thin,
             "continues": str(run.parent_id or ""), "software_commit": run.software_commit}
    idata = to_inference_data(dates, model.event_keys, outliers, evidence_keys, qd, qkeys, attrs=attrs)
    report = engine_diagnose(idata, probability_questions=[q.key for q in model.questions if q.kind == "precedence"])
    summary = summarise(model, dates, outliers, evidence_keys=evidence_keys, curves=_curve_names(run),
                        run_id=str(run.pk), diagnostics=report)
    labels = (run.summary or {}).get("question_labels", {})
    evidence_rows = (run.summary or {}).get("evidence", [])
    # A private temporary name: two combines of one run (a redelivered task)
    # must never write the same HDF5 file at once.
    tmp = run.path(f".samples.{os.getpid()}.{uuid.uuid4().hex[:8]}.tmp.nc")
    write_netcdf(idata, str(tmp))
    os.replace(tmp, run.path("samples.nc"))
    full = summary_to_dict(run, model, summary, report, labels, densities=True, evidence_rows=evidence_rows,
                           dates=dates)
    full["evidence"] = evidence_rows
    full["years"] = {"start": model.grid.start, "step": model.grid.step, "n": model.grid.n}
    _write(run.path("results.json"), json.dumps(full, allow_nan=False))
    write_run_figures(run, full)
    brief = summary_to_dict(run, model, summary, report, labels, densities=False, evidence_rows=evidence_rows,
                            dates=dates)
    brief["evidence"] = full["evidence"]
    brief["question_labels"] = labels
    return brief


def _write(path: Path, text: str) -> None:
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_text(text)
    os.replace(tmp, path)
