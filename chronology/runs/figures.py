"""The figures of a finished run, drawn from its results (``results.json``).

* the interval chart of every event, grouped by phase (``plot.svg`` /
  ``plot.png`` in the run's folder);
* densities of chosen events as small panels (on request);
* two runs compared in one interval chart, with the differences of medians.

Everything here reads the plain results document, so old runs can be drawn
again without their draws; the engine's plotting functions do the drawing.
"""

from __future__ import annotations

import os

import numpy as np

from chronology.engine.plots.comparison_chart import ComparisonGroup, PairedRow, comparison_chart_figure
from chronology.engine.plots.density_grid import DensityPanel, density_grid_figure
from chronology.engine.plots.figure_parts import render
from chronology.engine.plots.figure_parts import FigureHeading
from chronology.engine.plots.interval_chart import (
    ChartGroup,
    ChartRow,
    chart_extent,
    interval_chart_figure,
)

__all__ = ["heading_for", "chart_groups", "chart_pages", "interval_figure_pages", "interval_page_figures",
           "density_grid_of", "write_run_figures", "interval_figure", "density_figure",
           "compare_runs", "comparison_figure", "comparison_figure_of", "interval_figure_of", "OUTSIDE_PHASES"]

OUTSIDE_PHASES = "Not in a phase"


def heading_for(results: dict) -> FigureHeading:
    """The figure heading of a run: site, version, revision, run, curves, synthetic, convergence, caution."""
    site = results.get("site") or results.get("project") or ""
    if results.get("project") and results.get("site") and results["project"] not in site:
        site = f"{site} ({results['project']})"
    curves = tuple(results.get("curve_names") or (c.get("name", "") for c in results.get("curves", [])))
    return FigureHeading(
        site=site, version=results.get("version_label") or f"version {results.get('version')}",
        record_revision=results.get("record_revision"), run=str(results.get("run", "")), curves=curves,
        synthetic=any(c.get("synthetic") for c in results.get("curves", [])),
        converged=results.get("converged"), caution=results.get("caution", ""),
        method="Method: " + "; ".join(results.get("methods") or []) if results.get("methods") else "",
    )


def _pairs(ranges) -> tuple:
    return tuple((float(r["from"]), float(r["to"])) for r in ranges or ())


def _row(e: dict) -> ChartRow:
    unmodelled = (e.get("unmodelled") or {}).get("95.4") or ()
    label = e["label"] + (" (order only)" if e.get("estimated_from_order_only") else "")
    return ChartRow(e["key"], label, e["kind"], float(e["median"]), _pairs(e["hpd"]["68.3"]),
                    _pairs(e["hpd"]["95.4"]), _pairs(unmodelled))


def _ordered_events(results: dict) -> list[tuple[str, list[dict]]]:
    """(group label, events) in reading order: each phase's beginning, members by median, close."""
    events = {e["key"]: e for e in results.get("events", [])}
    placed: set = set()
    out = []
    phases = results.get("phases") or []
    for p in phases:
        rows = []
        if p["beginning"] in events and p["beginning"] not in placed:
            rows.append(events[p["beginning"]])
        members = sorted((events[k] for k in p["members"] if k in events), key=lambda e: e["median"])
        rows += members
        if p["close"] in events:
            rows.append(events[p["close"]])
        rows = [e for e in rows if e["key"] not in placed]
        placed.update(e["key"] for e in rows)
        out.append((p["label"], rows))
    rest = sorted((e for k, e in events.items() if k not in placed), key=lambda e: e["median"])
    if rest:
        out.append((OUTSIDE_PHASES if phases else "Events", rest))
    return out


def chart_groups(results: dict) -> list[ChartGroup]:
    """The interval chart's groups of a results document."""
    return [ChartGroup(label, tuple(_row(e) for e in rows)) for label, rows in _ordered_events(results)]


def interval_figure_of(results: dict):
    """The Figure of the run's interval chart (every event on one figure)."""
    return interval_chart_figure(chart_groups(results), heading_for(results))


def interval_figure(results: dict, fmt: str = "svg") -> bytes:
    """The run's interval chart as ``fmt`` bytes."""
    return render(interval_figure_of(results), fmt)


def chart_pages(groups, rows_per_page: int = 40) -> list[list[ChartGroup]]:
    """``groups`` cut into pages of at most ``rows_per_page`` lines; a phase cut in two says "(continued)"."""
    if rows_per_page < 2:
        raise ValueError("rows_per_page must be at least 2")
    pages, page, used = [], [], 0
    for g in groups:
        rows, label = list(g.rows), g.label
        while rows:
            room = rows_per_page - used - 1  # one line for the phase's heading
            if room < 1:
                pages.append(page)
                page, used = [], 0
                continue
            take, rows = rows[:room], rows[room:]
            page.append(ChartGroup(label, tuple(take)))
            used += len(take) + 1
            label = f"{g.label} (continued)"
    if page:
        pages.append(page)
    return pages


def interval_page_figures(results: dict, *, rows_per_page: int = 40) -> list:
    """The interval chart cut into pages (for the report) as Figures, every page on the same calendar axis."""
    groups = chart_groups(results)
    extent = chart_extent(groups)
    heading = heading_for(results)
    return [interval_chart_figure(page, heading, extent=extent) for page in chart_pages(groups, rows_per_page)]


def interval_figure_pages(results: dict, fmt: str = "svg", *, rows_per_page: int = 40) -> list[bytes]:
    """:func:`interval_page_figures` rendered as ``fmt`` bytes."""
    return [render(fig, fmt) for fig in interval_page_figures(results, rows_per_page=rows_per_page)]


def write_run_figures(run, results: dict) -> None:
    """Draw the run's interval chart into its folder as ``plot.svg`` and ``plot.png`` (atomically)."""
    fig = interval_figure_of(results)
    for fmt in ("svg", "png"):
        data = render(fig, fmt)
        tmp = run.path(f".plot.{os.getpid()}.tmp.{fmt}")
        tmp.write_bytes(data)
        os.replace(tmp, run.path(f"plot.{fmt}"))


def density_figure(results: dict, keys=None, fmt: str = "svg", *, limit: int = 24) -> bytes:
    """Small panels of the densities of the events ``keys`` (see :func:`density_grid_of`), as ``fmt`` bytes."""
    return render(density_grid_of(results, keys, limit=limit), fmt)


def density_grid_of(results: dict, keys=None, *, limit: int = 24):
    """Small panels of the densities of the events ``keys`` (or labels); all events, up to ``limit``, when None.

    Raises
    ------
    KeyError
        For a key or label no event of the run has.
    """
    events = [e for _label, rows in _ordered_events(results) for e in rows]
    if keys:
        by = {e["key"]: e for e in events} | {e["label"]: e for e in events}
        missing = [k for k in keys if k not in by]
        if missing:
            raise KeyError(", ".join(missing))
        chosen = [by[k] for k in keys]
    else:
        chosen = events[:limit]
    y = results["years"]
    years = y["start"] + y["step"] * np.arange(y["n"])
    panels = [DensityPanel(e["label"], e["kind"], years, np.asarray(e["density"], float), _pairs(e["hpd"]["95.4"]),
                           None if e.get("likelihood") is None else np.asarray(e["likelihood"], float))
              for e in chosen]
    return density_grid_figure(panels, heading_for(results))


def _paired(first: dict, second: dict):
    b_events = {e["label"]: e for e in second.get("events", [])}
    a_labels = {e["label"] for e in first.get("events", [])}
    groups, rows = [], []
    for label, events in _ordered_events(first):
        paired = []
        for e in events:
            other = b_events.get(e["label"])
            if other is None:
                continue
            pair = PairedRow(e["label"], _row(e), _row(other))
            paired.append(pair)
            rows.append({"label": e["label"], "phase": label, "first_median": e["median"],
                         "second_median": other["median"], "median_difference": pair.median_difference,
                         "first_median_text": e["median_text"], "second_median_text": other["median_text"],
                         "first_95_4": [r["text"] for r in e["hpd"]["95.4"]],
                         "second_95_4": [r["text"] for r in other["hpd"]["95.4"]]})
        groups.append(ComparisonGroup(label, tuple(paired)))
    return groups, rows, a_labels, set(b_events)


def compare_runs(first: dict, second: dict) -> dict:
    """The events two runs share (matched by label), with medians and their difference (second minus first).

    Returns plain JSON: both runs' provenance, per shared event the two
    medians, the difference in years and both 95.4% ranges, and the events
    only one run has.
    """
    _groups, rows, a_labels, b_labels = _paired(first, second)
    return {
        "first": _provenance(first), "second": _provenance(second),
        "difference": "second minus first, in years (positive: the second run puts the event later)",
        "events": rows,
        "only_in_first": sorted(a_labels - b_labels),
        "only_in_second": sorted(b_labels - a_labels),
        "caution": first.get("caution", ""),
    }


def _provenance(r: dict) -> dict:
    return {"run": r.get("run"), "version": r.get("version"), "version_label": r.get("version_label"),
            "record_revision": r.get("record_revision"), "curve_names": r.get("curve_names"),
            "converged": r.get("converged"), "synthetic": any(c.get("synthetic") for c in r.get("curves", []))}


def comparison_figure(first: dict, second: dict, fmt: str = "svg") -> bytes:
    """The two runs in one interval chart (see :func:`comparison_figure_of`), as ``fmt`` bytes."""
    return render(comparison_figure_of(first, second), fmt)


def comparison_figure_of(first: dict, second: dict):
    """The Figure of two runs' shared events side by side, with the differences of medians."""
    groups = _paired(first, second)[0]
    return comparison_chart_figure(groups, heading_for(first), heading_for(second))
