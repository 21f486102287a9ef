"""Interval chart of modelled dates, in the manner of a forest plot.

One line per event, grouped under its phase; each phase is a labelled band
with its name as a heading line.  On every line: the 95.4% highest-density
range as a thin line, the 68.3% range as a thick one, the median as a mark
(a shape per kind of event), and, just above, the event's unmodelled
(calibrated-only) 95.4% range as a light line, so the effect of the model is
seen at a glance.  Every range line carries an SVG id
(``range-<row>-<mass>-<piece>``) so the chart can be checked against the
results table.

Forest plots: Lewis, S. & Clarke, M. 2001. Forest plots: trying to see the
wood and the trees. BMJ 322: 1479-1480.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle

from .figure_parts import (
    COLOURS,
    KIND_WORDS,
    MARKERS,
    FigureHeading,
    draw_calendar_axis,
    draw_heading,
    draw_notes,
    notes_height,
    render,
)

__all__ = ["ChartRow", "ChartGroup", "interval_chart", "interval_chart_figure", "chart_extent"]

_ROW_IN = 0.24
_HEAD_IN = 0.72


@dataclass(frozen=True)
class ChartRow:
    """One event: ranges as (from, to) pairs in astronomical years."""

    key: str
    label: str
    kind: str
    median: float
    hpd68: tuple[tuple[float, float], ...]
    hpd95: tuple[tuple[float, float], ...]
    unmodelled95: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class ChartGroup:
    """A phase (or the events in no phase) and its rows, earliest first."""

    label: str
    rows: tuple[ChartRow, ...] = field(default_factory=tuple)


def chart_extent(groups, pad: float = 0.06) -> tuple[float, float]:
    """The calendar extent that shows every range, padded on both sides."""
    values = [v for g in groups for r in g.rows for pair in (*r.hpd95, *r.unmodelled95) for v in pair]
    values += [r.median for g in groups for r in g.rows]
    if not values:
        raise ValueError("nothing to draw")
    lo, hi = min(values), max(values)
    width = max(hi - lo, 10.0)
    return lo - pad * width, hi + pad * width


def _legend_handles(kinds: set[str], unmodelled: bool) -> list:
    ink = COLOURS["ink"]
    handles = [Line2D([], [], color=ink, lw=1.0, label="95.4% highest-density range (modelled)"),
               Line2D([], [], color=ink, lw=4.0, solid_capstyle="butt", label="68.3% highest-density range (modelled)")]
    for kind in ("dated", "undated", "boundary"):
        if kind in kinds:
            handles.append(Line2D([], [], color=COLOURS[kind], lw=0, marker=MARKERS[kind], markersize=5,
                                  markerfacecolor="white", markeredgewidth=1.2,
                                  label=f"median; colour: {KIND_WORDS[kind]}"))
    if unmodelled:
        handles.append(Line2D([], [], color=COLOURS["unmodelled"], lw=1.6,
                              label="95.4% range calibrated alone (unmodelled)"))
    handles.append(Patch(facecolor=COLOURS["band"], edgecolor="none", label="phase (band with its name)"))
    return handles


def interval_chart_figure(groups, heading: FigureHeading, *, extent: tuple[float, float] | None = None,
                          what: str = "Modelled dates") -> Figure:
    """A matplotlib Figure of ``groups`` (see the module docstring)."""
    groups = [g for g in groups if g.rows]
    n_lines = sum(len(g.rows) + 1 for g in groups)
    foot = notes_height(heading) + 1.25
    height = _HEAD_IN + _ROW_IN * n_lines + foot
    fig = Figure(figsize=(9.0, height))
    FigureCanvasAgg(fig)
    ax = fig.add_axes([0.30, foot / height, 0.66, _ROW_IN * n_lines / height])
    lo, hi = extent or chart_extent(groups)
    y = n_lines - 0.5
    kinds, any_unmodelled, row_no = set(), False, 0
    for gi, g in enumerate(groups):
        top = y + 0.5
        # the band runs under the labels too, so each phase reads as one block
        ax.add_patch(Rectangle((-0.45, y - len(g.rows) - 0.5), 1.45, len(g.rows) + 1, transform=ax.get_yaxis_transform(),
                               clip_on=False, color=COLOURS["band" if gi % 2 == 0 else "band_alt"], lw=0, zorder=0))
        ax.text(-0.44, y, g.label, transform=ax.get_yaxis_transform(), ha="left", va="center", fontsize=8,
                weight="bold", color=COLOURS["ink"])
        y -= 1
        for r in g.rows:
            colour = COLOURS.get(r.kind, COLOURS["dated"])
            kinds.add(r.kind)
            for i, (a, b) in enumerate(r.unmodelled95):
                any_unmodelled = True
                ax.add_line(Line2D([a, b], [y + 0.3, y + 0.3], color=COLOURS["unmodelled"], lw=1.6,
                                   solid_capstyle="butt", gid=f"range-{row_no}-unmodelled-{i}", zorder=2))
            for i, (a, b) in enumerate(r.hpd95):
                ax.add_line(Line2D([a, b], [y, y], color=colour, lw=1.0, solid_capstyle="butt",
                                   gid=f"range-{row_no}-95.4-{i}", zorder=3))
            for i, (a, b) in enumerate(r.hpd68):
                ax.add_line(Line2D([a, b], [y, y], color=colour, lw=4.0, solid_capstyle="butt",
                                   gid=f"range-{row_no}-68.3-{i}", zorder=4))
            ax.add_line(Line2D([r.median], [y], lw=0, marker=MARKERS.get(r.kind, "o"), markersize=5, color=colour,
                               markerfacecolor="white", markeredgewidth=1.2, zorder=5, gid=f"median-{row_no}"))
            ax.text(-0.42, y, r.label, transform=ax.get_yaxis_transform(), ha="left", va="center", fontsize=7.5,
                    color=COLOURS["ink"])
            y -= 1
            row_no += 1
    ax.set_ylim(-0.05, n_lines)
    ax.set_yticks([])
    for side in ("left", "right", "top"):
        ax.spines[side].set_visible(False)
    draw_calendar_axis(ax, lo, hi)
    ax.grid(axis="x", color="#D9D9D9", lw=0.5, zorder=1)
    ax.set_axisbelow(True)
    fig.legend(handles=_legend_handles(kinds, any_unmodelled), loc="lower left",
               bbox_to_anchor=(0.02, (notes_height(heading) + 0.05) / height), ncol=2, fontsize=7, frameon=False)
    draw_heading(fig, heading, what, top_in=_HEAD_IN, height_in=height)
    draw_notes(fig, heading, height_in=height)
    return fig


def interval_chart(groups, heading: FigureHeading, fmt: str = "svg", *, dpi: int = 110,
                   extent: tuple[float, float] | None = None) -> bytes:
    """Render :func:`interval_chart_figure` as ``svg`` or ``png`` bytes."""
    return render(interval_chart_figure(groups, heading, extent=extent), fmt, dpi)
