"""The run report: a self-contained HTML page, its PDF and a CSV of every modelled range.

For a finished run the report gives what a reviewer needs to sign it off:
the site, interpretation version, record revision and its digest; the
model's structure in words and as the phased order diagram; the priors and
the reasons written in the version; every determination as the reporting
conventions ask (Millard 2014: lab code, material, short-lived or not, δ13C
where measured, conventional age ± error, the curve and its citation, the
software and its version, calibrated ranges rounded outwards); the modelled
ranges, the questions, the outliers in plain words, the diagnostics with the
convergence verdict, the figures and the cautions.  The PDF is the same HTML
printed by WeasyPrint.

References
----------
Millard, A.R. 2014. Conventions for reporting radiocarbon determinations.
    Radiocarbon 56(2): 555-559.
"""

from __future__ import annotations

import base64
import csv
import io
import json

from django.template.loader import render_to_string

from chronology.engine.labels import format_probability, label_list
from chronology.engine.plots.figure_parts import SYNTHETIC_WARNING
from chronology.engine.reporting import reported_range, rounding_resolution

from .figures import chart_groups, density_figure, heading_for, interval_figure

__all__ = ["report_context", "report_html", "report_pdf", "ranges_csv", "load_results"]

_ARRANGEMENT_WORDS = {"sequential": "followed, perhaps after a gap, by", "contiguous": "followed at once by",
                      "overlapping": "overlapping with", None: ""}
_CSV_FIELDS = ["event", "phase", "kind", "level", "from", "to", "probability", "text", "text_cal_bp", "median",
               "median_text", "run", "version", "record_revision", "curves", "converged"]


def load_results(run) -> dict:
    return json.loads(run.path("results.json").read_text())


def _data_uri(svg: bytes) -> str:
    return "data:image/svg+xml;base64," + base64.b64encode(svg).decode()


def _structure(results: dict) -> list[str]:
    labels = {e["key"]: e["label"] for e in results.get("events", [])}
    out = []
    phases = results.get("phases") or []
    for j, p in enumerate(phases):
        members = [labels.get(k, k) for k in p["members"]]
        text = f"Phase {p['label']}: {len(members)} dated or estimated event(s)"
        if members:
            text += f" ({label_list(members, limit=12, rest=' — all are listed under Modelled ranges')})"
        nxt = phases[j + 1]["label"] if j + 1 < len(phases) else None
        if nxt and p.get("arrangement_next"):
            text += f"; {_ARRANGEMENT_WORDS[p['arrangement_next']]} {nxt}"
        out.append(text + ".")
    if not phases:
        out.append("No phases: the events are ordered by the stratigraphic record alone.")
    return out


def _version_reasons(version) -> dict:
    content = version.content if version is not None else {}
    return {
        "message": getattr(version, "message", "") or "",
        "equalities": [e for e in content.get("equalities", []) if e.get("reason")],
        "set_aside": [e for e in content.get("set_aside", []) if e.get("reason")],
        "orderings": [e for e in content.get("orderings", []) if e.get("reason")],
    }


def _determination_rows(run, results: dict) -> list[dict]:
    """Every radiocarbon determination the run used, with its record facts and calibrated ranges."""
    from chronology.engine.calibration import calibrate, curve_on_grid
    from chronology.evidence.curves import engine_curve
    from chronology.evidence.models import Curve
    from chronology.runs.sources import _state_rows

    samples = {d["id"]: d for d in _state_rows(run.project, "sample", run.record_revision)}
    dets = {d["lab_code"]: d for d in _state_rows(run.project, "determination", run.record_revision)}
    curves = {str(c.pk): c for c in Curve.objects.filter(pk__in=[d["curve_id"] for d in dets.values()])}
    on_grid: dict = {}
    software = "Tellstack " + (run.software_commit[:12] or "(no commit recorded)") + \
        f"; numpy {run.library_versions.get('numpy', '?')}"
    rows = []
    for ev in results.get("evidence", []):
        for code in ev.get("lab_codes") or ():
            d = dets.get(code)
            if d is None:
                continue
            sample = samples.get(d["sample_id"], {})
            curve = curves.get(str(d["curve_id"]))
            ranges = {}
            if curve is not None:
                if curve.pk not in on_grid:
                    on_grid[curve.pk] = curve_on_grid(engine_curve(curve))
                cal = calibrate(float(d["cra"]), float(d["cra_sigma"]), on_grid[curve.pk], label=code)
                ranges = {f"{m * 100:.1f}": [reported_range(r.start, r.end, float(d["cra_sigma"])) for r in rs]
                          for m, rs in cal.hpd.items()}
            rows.append({
                "lab_code": code, "context": ev.get("context_label", ""), "sample": sample.get("code", ""),
                "material": sample.get("material", ""), "short_lived": sample.get("short_lived"),
                "delta13c": d.get("delta13c"), "cra": d["cra"], "sigma": d["cra_sigma"],
                "curve": getattr(curve, "name", ""), "citation": getattr(curve, "citation", ""),
                "synthetic": bool(getattr(curve, "synthetic", False)) if curve is not None else False,
                "use": ev.get("use"), "outlier_prior": ev.get("outlier_prior"),
                "ranges": ranges, "resolution": rounding_resolution(float(d["cra_sigma"])), "software": software,
            })
    return rows


def report_context(run, results: dict | None = None, *, version=None) -> dict:
    """Everything the report template shows, as plain data."""
    from chronology.runs.sources import find_version
    from projects.models import Revision

    results = results or load_results(run)
    version = version or find_version(run.project, run.version_id)
    revision = Revision.objects.filter(project=run.project, number=run.record_revision).first()
    heading = heading_for(results)
    structure_svg = None
    try:
        from chronology.order_service import diagram_svg, version_order

        order, phases, phase_of = version_order(version)
        structure_svg = _data_uri(diagram_svg(order, phases=phases, phase_of=phase_of).encode())
    except Exception as exc:  # noqa: BLE001 - the report says why the diagram is missing
        structure_svg = None
        structure_error = str(exc)
    else:
        structure_error = ""
    densities = [e["key"] for e in results["events"] if e["kind"] == "boundary"][:12]
    return {
        "results": results, "run": run, "heading": heading, "title": heading.title("Model run report"),
        "synthetic": heading.synthetic, "synthetic_warning": SYNTHETIC_WARNING,
        "digest": getattr(revision, "digest", ""), "structure": _structure(results),
        "structure_svg": structure_svg, "structure_error": structure_error,
        "reasons": _version_reasons(version),
        "determinations": _determination_rows(run, results),
        "groups": chart_groups(results),
        "events": results["events"],
        "questions": [_question_row(q) for q in results.get("questions", [])],
        "outliers": results.get("outliers", []),
        "chart": _data_uri(interval_figure(results, "svg")),
        "densities": _data_uri(density_figure(results, densities, "svg")) if densities else None,
        "curves": results.get("curves", []),
    }


def _question_row(q: dict) -> dict:
    if q["kind"] == "precedence":
        value = f"probability {q.get('probability_text') or format_probability(q['probability'])}"
    else:
        spans = "; ".join(f"{r['from']:.0f} to {r['to']:.0f}" for r in q.get("hpd", {}).get("95.4", []))
        value = f"median {q['median']:.0f} years; 95.4% range {spans} years"
    return {"label": q["label"], "kind": q["kind"], "value": value,
            "mcse": "-" if q.get("mcse") is None else f"{q['mcse']:.3g}"}


def report_html(run, results: dict | None = None) -> str:
    """The self-contained HTML report of a finished run (figures embedded)."""
    return render_to_string("runs/report.html", report_context(run, results))


def report_pdf(run, html: str | None = None) -> bytes:
    """The report printed to PDF by WeasyPrint."""
    from weasyprint import HTML

    return HTML(string=html or report_html(run)).write_pdf()


def ranges_csv(results: dict) -> str:
    """Every modelled range of every event, one line per range, with the run's provenance on each line."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=_CSV_FIELDS)
    w.writeheader()
    phases = {p["key"]: p["label"] for p in results.get("phases") or []}
    curves = "; ".join(results.get("curve_names") or [])
    for e in results["events"]:
        for level in ("68.3", "95.4"):
            for r in e["hpd"][level]:
                w.writerow({"event": e["label"], "phase": phases.get(e.get("phase"), ""), "kind": e["kind"],
                            "level": level, "from": round(r["from"], 1), "to": round(r["to"], 1),
                            "probability": round(r["probability"], 4), "text": r["text"],
                            "text_cal_bp": r["text_cal_bp"], "median": round(e["median"], 1),
                            "median_text": e["median_text"], "run": results.get("run"),
                            "version": results.get("version_label"), "record_revision": results.get("record_revision"),
                            "curves": curves, "converged": results.get("converged")})
    return buf.getvalue()

