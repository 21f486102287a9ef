"""Densities of chosen events as a grid of small panels (small multiples).

Each panel shows one event: its modelled density filled, the parts inside the
95.4% highest-density range darker, and the unmodelled (calibrated-only)
density as a light solid line.  Every panel has its own calendar axis with
round cal BC / cal AD ticks.  Small multiples: Tufte, E.R. 1983. The Visual
Display of Quantitative Information. Graphics Press.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from .figure_parts import COLOURS, FigureHeading, draw_calendar_axis, draw_heading, draw_notes, notes_height, render

__all__ = ["DensityPanel", "density_grid", "density_grid_figure"]


@dataclass(frozen=True, eq=False)
class DensityPanel:
    """One event's densities on the grid ``years`` (astronomical years)."""

    label: str
    kind: str
    years: np.ndarray
    density: np.ndarray
    hpd95: tuple[tuple[float, float], ...]
    unmodelled: np.ndarray | None = None


def _view(p: DensityPanel) -> tuple[float, float]:
    keep = p.density >= 1e-3 * p.density.max()
    if p.unmodelled is not None and p.unmodelled.max() > 0:
        keep |= p.unmodelled >= 1e-3 * p.unmodelled.max()
    sel = p.years[keep]
    lo, hi = float(sel.min()), float(sel.max())
    pad = max(0.08 * (hi - lo), 5.0)
    return lo - pad, hi + pad


def _within(p: DensityPanel, lo: float, hi: float) -> DensityPanel:
    keep = (p.years >= lo) & (p.years <= hi)
    return DensityPanel(p.label, p.kind, p.years[keep], p.density[keep], p.hpd95,
                        None if p.unmodelled is None else p.unmodelled[keep])


def _legend_count(panels) -> int:
    return 3 + any(p.kind == "boundary" for p in panels) + any(p.kind == "undated" for p in panels)


def density_grid(panels, heading: FigureHeading, fmt: str = "svg", *, columns: int = 3, dpi: int = 110) -> bytes:
    """Render the panels as a grid, ``columns`` wide; SVG or PNG bytes."""
    return render(density_grid_figure(panels, heading, columns=columns), fmt, dpi)


def density_grid_figure(panels, heading: FigureHeading, *, columns: int = 3) -> Figure:
    """The matplotlib Figure of :func:`density_grid` (to render in more than one format)."""
    panels = [p for p in panels if p.density.max() > 0]
    if not panels:
        raise ValueError("no event to draw")
    cols = min(columns, len(panels))
    rows = math.ceil(len(panels) / cols)
    legend_rows = math.ceil(_legend_count(panels) / 3)
    # the bottom row's tick labels, then the legend, then the notes
    foot = notes_height(heading) + 0.45 + 0.2 * legend_rows
    head = 0.75
    height = head + 1.7 * rows + foot
    fig = Figure(figsize=(3.1 * cols + 0.4, height))
    FigureCanvasAgg(fig)
    fig.subplots_adjust(left=0.04, right=0.98, top=1 - head / height, bottom=foot / height, hspace=0.85, wspace=0.12)
    axes = fig.subplots(rows, cols, squeeze=False)
    for ax in axes.flat[len(panels):]:
        ax.set_visible(False)
    for ax, p in zip(axes.flat, panels):
        colour = COLOURS.get(p.kind, COLOURS["dated"])
        lo, hi = _view(p)
        p = _within(p, lo, hi)  # only what the panel shows is drawn (and stored in the SVG)
        d = p.density / p.density.max()
        ax.fill_between(p.years, 0, d, color=colour, alpha=0.25, lw=0)
        for a, b in p.hpd95:
            sel = (p.years >= a) & (p.years <= b)
            ax.fill_between(p.years[sel], 0, d[sel], color=colour, alpha=0.6, lw=0)
        if p.unmodelled is not None and p.unmodelled.max() > 0:
            u = p.unmodelled / p.unmodelled.max()
            shown = u > 1e-3
            ax.plot(p.years[shown], u[shown], color=COLOURS["unmodelled"], lw=1.1)
        ax.set_ylim(0, 1.08)
        ax.set_yticks([])
        for side in ("left", "right", "top"):
            ax.spines[side].set_visible(False)
        draw_calendar_axis(ax, lo, hi, max_ticks=3, label=False, fontsize=6.5)
        ax.set_title(p.label, fontsize=8, loc="left")
    handles = [Patch(facecolor=COLOURS["dated"], alpha=0.25, label="modelled density"),
               Patch(facecolor=COLOURS["dated"], alpha=0.6, label="inside the 95.4% highest-density range"),
               Line2D([], [], color=COLOURS["unmodelled"], lw=1.1, label="calibrated alone (unmodelled)")]
    if any(p.kind == "boundary" for p in panels):
        handles.append(Patch(facecolor=COLOURS["boundary"], alpha=0.6, label="colour: phase boundary"))
    if any(p.kind == "undated" for p in panels):
        handles.append(Patch(facecolor=COLOURS["undated"], alpha=0.6, label="colour: estimated from the order only"))
    fig.legend(handles=handles, loc="lower left", bbox_to_anchor=(0.02, (notes_height(heading) + 0.02) / height),
               ncol=3, fontsize=7, frameon=False)
    draw_heading(fig, heading, "Densities of chosen events (cal BC / cal AD)", top_in=head, height_in=height)
    draw_notes(fig, heading, height_in=height, width_chars=int(40 * cols))
    return fig
