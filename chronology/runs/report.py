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

from chronology.engine.csv_cells import neutralise
from chronology.engine.plots.figure_parts import SYNTHETIC_WARNING, render

from .report_weighing import weighing_for_report
from .figures import density_grid_of, heading_for, interval_page_figures
from .report_tables import (
    MODELLED_RESOLUTION,
    combination_notes,
    determination_row,
    diagnostic_summary,
    event_rows,
    modelled_text,
    outlier_prior_lines,
    outlier_rows,
    question_rows,
    structure_lines,
)

__all__ = ["report_facts", "report_context", "report_html", "render_report", "report_documents", "report_pdf",
           "html_to_pdf",
           "ranges_csv", "load_results", "DENSITY_PANELS", "REPORT_FILES", "stored_report_file"]

#: Lines of the interval chart on one printed page (a longer chart continues on the next).
CHART_ROWS = 44
#: Phase boundaries drawn as density panels in the report (the rest are in the interval chart).
DENSITY_PANELS = 12
_CSV_FIELDS = ["event", "phase", "kind", "level", "from", "to", "probability", "text", "text_rounded",
               "text_cal_bp", "median", "median_text", "run", "version", "record_revision", "curves", "synthetic",
               "converged"]


def load_results(run) -> dict:
    return json.loads(run.path("results.json").read_text())


def _data_uri(svg: bytes, kind: str = "image/svg+xml") -> str:
    return f"data:{kind};base64," + base64.b64encode(svg).decode()


def _version_reasons(version) -> dict:
    content = version.content if version is not None else {}
    return {
        "message": getattr(version, "message", "") or "",
        "equalities": [e for e in content.get("equalities", []) if e.get("reason")],
        "set_aside": [e for e in content.get("set_aside", []) if e.get("reason")],
        "orderings": [e for e in content.get("orderings", []) if e.get("reason")],
        "min_gaps": [(p["name"], p["to_next"]["min_gap"]) for p in content.get("phases", [])
                     if (p.get("to_next") or {}).get("min_gap")],
    }


def _determination_facts(run, results: dict) -> list[dict]:
    """Every radiocarbon determination the run used, with its record facts and calibrated ranges."""
    from chronology.engine.calibration import calibrate, curve_on_grid
    from chronology.evidence.curves import engine_curve
    from chronology.evidence.models import Curve
    from chronology.runs.sources import _state_rows

    samples = {d["id"]: d for d in _state_rows(run.project, "sample", run.record_revision)}
    dets = {d["lab_code"]: d for d in _state_rows(run.project, "determination", run.record_revision)}
    curves = {str(c.pk): c for c in Curve.objects.filter(pk__in=[d["curve_id"] for d in dets.values()])}
    on_grid: dict = {}
    rows = []
    for ev in results.get("evidence", []):
        for code in ev.get("lab_codes") or ():
            d = dets.get(code)
            if d is None:
                continue
            sample = samples.get(d["sample_id"], {})
            curve = curves.get(str(d["curve_id"]))
            calibrated = None
            if curve is not None:
                if curve.pk not in on_grid:
                    on_grid[curve.pk] = curve_on_grid(engine_curve(curve))
                cal = calibrate(float(d["cra"]), float(d["cra_sigma"]), on_grid[curve.pk], label=code)
                calibrated = {f"{m * 100:.1f}": [(r.start, r.end) for r in rs] for m, rs in cal.hpd.items()}
            fact = {"lab_code": code, "context": ev.get("context_label", ""), "sample": sample.get("code", ""),
                    "material": sample.get("material", ""), "short_lived": sample.get("short_lived"),
                    "delta13c": d.get("delta13c"), "cra": d["cra"], "sigma": d["cra_sigma"],
                    "curve": getattr(curve, "name", ""), "use": ev.get("use", ""),
                    "outlier_prior": ev.get("outlier_prior")}
            rows.append(determination_row(fact, calibrated))
    return rows


def _structure_svg(version) -> tuple[str | None, str]:
    """The version's phased order diagram as a data URI, or None and the reason it cannot be drawn."""
    if version is None:
        return None, "the interpretation version is not available"
    try:
        from chronology.order_service import diagram_svg, version_order

        order, phases, phase_of = version_order(version)
        return _data_uri(diagram_svg(order, phases=phases, phase_of=phase_of).encode()), ""
    except Exception as exc:  # noqa: BLE001 - the report says why the diagram is missing
        return None, str(exc)


def report_facts(run, results: dict, *, version=None) -> dict:
    """What the report takes from the record and the version (not in ``results.json``)."""
    from chronology.runs.sources import find_version
    from projects.models import Project, Revision

    version = version or find_version(run.project, run.version_id)
    revision = Revision.objects.filter(project=run.project, number=run.record_revision).first()
    svg, error = _structure_svg(version)
    return {"digest": getattr(revision, "digest", ""), "determinations": _determination_facts(run, results),
            "structure_svg": svg, "structure_error": error, "reasons": _version_reasons(version),
            "weighing": weighing_for_report(run),
            # Anyone holding this report can tell a later rewrite of the history (``verify_record``).
            "head_digest": Project.objects.filter(pk=run.project_id).values_list("head_digest", flat=True).first() or ""}


def _software(results: dict) -> str:
    sw = results.get("software") or {}
    libs = ", ".join(f"{k} {v}" for k, v in sorted((sw.get("libraries") or {}).items()))
    return f"Tellstack {sw.get('commit') or '(no commit recorded)'}" + (f"; {libs}" if libs else "")


def _report_figures(results: dict) -> tuple[list, object | None, int]:
    """(interval chart pages, boundary density panels or None, boundaries left out) as Figures."""
    boundaries = [e["key"] for e in results.get("events", []) if e["kind"] == "boundary"]
    densities = boundaries[:DENSITY_PANELS]
    pages = interval_page_figures(results, rows_per_page=CHART_ROWS)
    return pages, density_grid_of(results, densities) if densities else None, len(boundaries) - len(densities)


def _embedded(figures, images: str) -> dict:
    """The report's figures as data URIs in ``images`` format (SVG keeps text as text; PNG prints fast)."""
    if images not in ("svg", "png"):
        raise ValueError("images must be 'svg' or 'png'")
    kind = "image/svg+xml" if images == "svg" else "image/png"
    pages, densities, left_out = figures
    return {"charts": [_data_uri(render(fig, images), kind) for fig in pages],
            "densities": _data_uri(render(densities, images), kind) if densities is not None else None,
            "densities_left_out": max(0, left_out)}


def _content(results: dict, facts: dict) -> dict:
    heading = heading_for(results)
    return {
        "results": results, "heading": heading, "title": heading.title("Model run report").replace("\n", ": "),
        "synthetic": heading.synthetic, "synthetic_warning": SYNTHETIC_WARNING,
        "caution": results.get("caution", ""), "software": _software(results),
        "curves": results.get("curves", []), "curve_names": ", ".join(results.get("curve_names") or []),
        "structure": structure_lines(results), "reasons": facts.get("reasons") or {},
        "structure_svg": facts.get("structure_svg"), "structure_error": facts.get("structure_error", ""),
        "digest": facts.get("digest", ""), "head_digest": facts.get("head_digest", ""),
        "determinations": facts.get("determinations", []), "combinations": combination_notes(results),
        "outlier_priors": outlier_prior_lines(facts.get("determinations", [])),
        "events": event_rows(results), "modelled_resolution": MODELLED_RESOLUTION,
        "questions": question_rows(results), "outliers": outlier_rows(results),
        "diagnostics": diagnostic_summary(results), "weighing": facts.get("weighing"),
    }


def report_context(results: dict, facts: dict, *, images: str = "svg") -> dict:
    """Everything the report template shows, as plain data (no database).

    ``images`` is the format the figures are embedded in: SVG for the HTML
    report (text stays text), PNG for the printed one (WeasyPrint places a
    raster image at once, where it would draw every SVG element itself).
    """
    return _content(results, facts) | _embedded(_report_figures(results), images)


def render_report(results: dict, facts: dict, *, images: str = "svg") -> str:
    """The self-contained HTML report (figures embedded as data URIs) of ``results`` with ``facts``."""
    return render_to_string("runs/report.html", report_context(results, facts, images=images))


def report_documents(results: dict, facts: dict) -> dict:
    """The HTML report (SVG figures) and its PDF (the same page with PNG figures), figures drawn once."""
    content, figures = _content(results, facts), _report_figures(results)
    html = render_to_string("runs/report.html", content | _embedded(figures, "svg"))
    printed = render_to_string("runs/report.html", content | _embedded(figures, "png"))
    return {"html": html, "pdf": html_to_pdf(printed)}


def report_html(run, results: dict | None = None, *, images: str = "svg") -> str:
    """The self-contained HTML report of a finished run."""
    results = results or load_results(run)
    return render_report(results, report_facts(run, results), images=images)


def html_to_pdf(html: str) -> bytes:
    """A report's HTML printed to PDF by WeasyPrint."""
    from weasyprint import HTML

    return HTML(string=html).write_pdf()


def report_pdf(run, results: dict | None = None) -> bytes:
    """The report of a finished run printed to PDF by WeasyPrint (figures embedded as PNG)."""
    return html_to_pdf(report_html(run, results, images="png"))


def ranges_csv(results: dict) -> str:
    """Every modelled range of every event, one line per range, with the run's provenance on each line.

    ``from`` and ``to`` are the exact astronomical years (1 BC = 0);
    ``text_rounded`` is the range as the report prints it.  Text cells that a
    spreadsheet would run as a formula (a phase or label beginning with ``=``)
    are neutralised (``engine.csv_cells``).
    """
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=_CSV_FIELDS, lineterminator="\n")
    w.writeheader()
    phases = {p["key"]: p["label"] for p in results.get("phases") or []}
    curves = "; ".join(results.get("curve_names") or [])
    synthetic = any(c.get("synthetic") for c in results.get("curves", []))
    for e in results["events"]:
        for level in ("68.3", "95.4"):
            for r in e["hpd"][level]:
                w.writerow({key: neutralise(value) for key, value in {"event": e["label"], "phase": phases.get(e.get("phase"), ""), "kind": e["kind"],
                            "level": level, "from": round(r["from"], 1), "to": round(r["to"], 1),
                            "probability": round(r["probability"], 4), "text": r["text"],
                            "text_rounded": modelled_text(r), "text_cal_bp": r["text_cal_bp"],
                            "median": round(e["median"], 1), "median_text": e["median_text"],
                            "run": results.get("run"), "version": results.get("version_label"),
                            "record_revision": results.get("record_revision"), "curves": curves,
                            "synthetic": synthetic, "converged": results.get("converged")}.items()})
    return buf.getvalue()


#: Files of the report kept in a finished run's folder once made (results never change after the run ends).
REPORT_FILES = {"report.html": "html", "report.pdf": "pdf", "ranges.csv": "csv"}


def stored_report_file(run, name: str):
    """The path of ``report.html``, ``report.pdf`` or ``ranges.csv`` in the run's folder, made on first use.

    Files are written under a private temporary name and moved into place,
    so two requests at once never see half a file.
    """
    import os
    import uuid

    if name not in REPORT_FILES:
        raise ValueError(f"no report file {name!r}")
    path = run.path(name)
    if path.exists():
        return path
    results = load_results(run)
    if name == "ranges.csv":
        made = {name: ranges_csv(results).encode()}
    else:
        # the HTML and the PDF are made together: they share every table and figure
        docs = report_documents(results, report_facts(run, results))
        made = {"report.html": docs["html"].encode(), "report.pdf": docs["pdf"]}
    for made_name, data in made.items():
        tmp = run.path(f".{made_name}.{os.getpid()}.{uuid.uuid4().hex[:8]}.tmp")
        tmp.write_bytes(data)
        os.replace(tmp, run.path(made_name))
    return path
