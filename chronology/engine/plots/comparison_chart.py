"""Two runs in one interval chart: the same events side by side, with the differences of medians.

Rows are the events both runs share (matched by the caller), grouped under
their phase as in :mod:`.interval_chart`; on each line the first run's
ranges sit just above the second run's (blue above, orange below, with
different median marks), and a column on the right lists the difference of
medians (second minus first, years; positive means the second run puts the
event later).
"""

from __future__ import annotations

from dataclasses import dataclass

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle

from .figure_parts import COLOURS, draw_calendar_axis, draw_notes, notes_height, render
from .interval_chart import ChartRow

__all__ = ["PairedRow", "ComparisonGroup", "comparison_chart", "comparison_chart_figure"]

_ROW_IN = 0.34


@dataclass(frozen=True)
class PairedRow:
    label: str
    first: ChartRow
    second: ChartRow

    @property
    def median_difference(self) -> float:
        return self.second.median - self.first.median


@dataclass(frozen=True)
class ComparisonGroup:
    label: str
    rows: tuple[PairedRow, ...]


def _draw(ax, row: ChartRow, y: float, colour: str, marker: str, tag: str) -> None:
    for i, (a, b) in enumerate(row.hpd95):
        ax.add_line(Line2D([a, b], [y, y], color=colour, lw=1.0, solid_capstyle="butt", gid=f"{tag}-95.4-{i}"))
    for i, (a, b) in enumerate(row.hpd68):
        ax.add_line(Line2D([a, b], [y, y], color=colour, lw=3.5, solid_capstyle="butt", gid=f"{tag}-68.3-{i}"))
    ax.add_line(Line2D([row.median], [y], lw=0, marker=marker, markersize=4.5, color=colour, markerfacecolor="white",
                       markeredgewidth=1.1, zorder=5))


def comparison_chart(groups, first_heading, second_heading, fmt: str = "svg", *, dpi: int = 110) -> bytes:
    """Render :func:`comparison_chart_figure` as ``svg`` or ``png`` bytes."""
    return render(comparison_chart_figure(groups, first_heading, second_heading), fmt, dpi)


def comparison_chart_figure(groups, first_heading, second_heading) -> Figure:
    """Render two runs' ranges of shared events side by side; SVG or PNG bytes.

    ``first_heading`` and ``second_heading`` are the runs'
    :class:`~.figure_parts.FigureHeading`; both appear in the title, and the
    notes carry the warnings of either.
    """
    groups = [g for g in groups if g.rows]
    if not groups:
        raise ValueError("the two runs share no event")
    n_lines = sum(len(g.rows) + 1 for g in groups)
    merged = _merged(first_heading, second_heading)
    foot = notes_height(merged, 150) + 1.0
    head = 0.95
    height = head + _ROW_IN * n_lines + foot
    fig = Figure(figsize=(10.0, height))
    FigureCanvasAgg(fig)
    ax = fig.add_axes([0.27, foot / height, 0.56, _ROW_IN * n_lines / height])
    values = [v for g in groups for r in g.rows for c in (r.first, r.second) for pair in c.hpd95 for v in pair]
    lo, hi = min(values), max(values)
    width = max(hi - lo, 10.0)
    lo, hi = lo - 0.05 * width, hi + 0.05 * width
    first, second = COLOURS["dated"], COLOURS["second"]
    y = n_lines - 0.5
    row_no = 0
    for gi, g in enumerate(groups):
        ax.add_patch(Rectangle((-0.49, y - len(g.rows) - 0.5), 1.76, len(g.rows) + 1,
                               transform=ax.get_yaxis_transform(), clip_on=False, lw=0, zorder=0,
                               color=COLOURS["band" if gi % 2 == 0 else "band_alt"]))
        ax.text(-0.47, y, g.label, transform=ax.get_yaxis_transform(), ha="left", va="center", fontsize=8,
                weight="bold")
        y -= 1
        for r in g.rows:
            _draw(ax, r.first, y + 0.16, first, "o", f"first-{row_no}")
            _draw(ax, r.second, y - 0.16, second, "^", f"second-{row_no}")
            ax.text(-0.45, y, r.label, transform=ax.get_yaxis_transform(), ha="left", va="center", fontsize=7.5)
            diff = r.median_difference
            ax.text(1.03, y, f"{diff:+.0f} years", transform=ax.get_yaxis_transform(), ha="left", va="center",
                    fontsize=7.5, gid=f"difference-{row_no}")
            y -= 1
            row_no += 1
    ax.text(1.03, n_lines + 0.1, "Median, second\nminus first", transform=ax.get_yaxis_transform(), ha="left",
            va="bottom", fontsize=7, weight="bold")
    ax.set_ylim(-0.05, n_lines)
    ax.set_yticks([])
    for side in ("left", "right", "top"):
        ax.spines[side].set_visible(False)
    draw_calendar_axis(ax, lo, hi)
    ax.grid(axis="x", color="#D9D9D9", lw=0.5)
    ax.set_axisbelow(True)
    handles = [Line2D([], [], color=first, lw=3.5, marker="o", markerfacecolor="white", markersize=4.5,
                      label=f"first: run {first_heading.run} (thick 68.3%, thin 95.4%, mark median)"),
               Line2D([], [], color=second, lw=3.5, marker="^", markerfacecolor="white", markersize=4.5,
                      label=f"second: run {second_heading.run} (thick 68.3%, thin 95.4%, mark median)"),
               Patch(facecolor=COLOURS["band"], label="phase (band with its name)")]
    fig.legend(handles=handles, loc="lower left", bbox_to_anchor=(0.02, (notes_height(merged, 150) + 0.05) / height),
               ncol=1, fontsize=7, frameon=False)
    title = (f"{'NOT CONVERGED: ' if merged.not_converged else ''}Two runs compared: modelled dates side by side\n"
             f"first: {first_heading.version}, record revision {first_heading.record_revision}, "
             f"run {first_heading.run}\nsecond: {second_heading.version}, record revision "
             f"{second_heading.record_revision}, run {second_heading.run}  ({first_heading.site})")
    fig.text(0.02, 1 - 0.1 / height, title, ha="left", va="top", fontsize=10, weight="bold", linespacing=1.3,
             color=COLOURS["warning"] if merged.not_converged else COLOURS["ink"], gid="figure-title")
    draw_notes(fig, merged, height_in=height, width_chars=150)
    return fig


def _merged(a, b):
    from dataclasses import replace

    curves = tuple(dict.fromkeys((*[f"first: {c}" for c in a.curves], *[f"second: {c}" for c in b.curves])))
    converged = None if a.converged is None and b.converged is None else bool(a.converged and b.converged)
    return replace(a, curves=curves, synthetic=a.synthetic or b.synthetic, converged=converged,
                   caution=a.caution or b.caution)

