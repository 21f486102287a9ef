"""A calibrated radiocarbon date drawn against its calibration curve.

Upper panel: the curve's ±1σ and ±2σ band over calendar years, with the
determination's normal drawn along the radiocarbon axis.  Lower panel: the
calibrated density over the same calendar axis with its HPD ranges shaded,
the 95.4% ranges lighter, the 68.3% darker, each range listed with its
probability.  The figure states the curve, whether it is synthetic, and the
caution that results need review by a qualified specialist.

Colours: Okabe, M. & Ito, K. 2008. Color Universal Design (CUD): how to make
figures and presentations that are friendly to colorblind people
(from memory; the eight-colour palette is widely reproduced).
"""

from __future__ import annotations

import io
from dataclasses import dataclass

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import FixedLocator, FuncFormatter, MaxNLocator

from ..calendar_scales import format_range, to_bc_ad
from ..calibration import CalibratedDate, CurveOnGrid

__all__ = ["PlotImages", "calibration_plot", "OKABE_ITO", "CAUTION", "SYNTHETIC_WARNING"]

#: Okabe & Ito (2008) colour-blind-safe palette.
OKABE_ITO = {
    "black": "#000000", "orange": "#E69F00", "sky_blue": "#56B4E9",
    "bluish_green": "#009E73", "yellow": "#F0E442", "blue": "#0072B2",
    "vermillion": "#D55E00", "reddish_purple": "#CC79A7",
}

CAUTION = "Results need review by a qualified specialist before they are used or published."
SYNTHETIC_WARNING = "SYNTHETIC calibration curve: not for dating real samples."


@dataclass(frozen=True, slots=True)
class PlotImages:
    """One figure as SVG (text kept as text) and PNG bytes."""

    svg: bytes
    png: bytes


def _year_label(t: float, _pos=None) -> str:
    year, era = to_bc_ad(t)
    return f"{year} BC" if era == "BC" else f"AD {year}"


def _round_label_ticks(x0: float, x1: float) -> list[float]:
    # Round numbers on the BC/AD labels: 800 BC is astronomical -799 (no year 0).
    ticks = MaxNLocator(7, integer=True).tick_values(x0, x1)
    return [float(t + 1 if t <= 0 else t) for t in ticks if x0 <= t <= x1]


def _view(date: CalibratedDate) -> tuple[float, float]:
    years, dens = date.years, date.density
    keep = np.flatnonzero(dens >= 1e-3 * dens.max())
    lo, hi = years[keep[0]], years[keep[-1]]
    pad = max(0.15 * (hi - lo), 10.0 * date.step)
    return lo - pad, hi + pad


def _draw_curve(ax, date: CalibratedDate, curve: CurveOnGrid, x0: float, x1: float) -> None:
    years = curve.grid.years
    sel = (years >= x0) & (years <= x1)
    t, mu, sd = years[sel], curve.mu[sel], curve.sigma[sel]
    ax.fill_between(t, mu - 2 * sd, mu + 2 * sd, color=OKABE_ITO["sky_blue"], alpha=0.25,
                    linewidth=0, label="curve ±2σ")
    ax.fill_between(t, mu - sd, mu + sd, color=OKABE_ITO["sky_blue"], alpha=0.55,
                    linewidth=0, label="curve ±1σ")
    ax.plot(t, mu, color=OKABE_ITO["blue"], linewidth=1.0, label="curve mean")
    # The determination's normal, laid along the radiocarbon axis at the left edge.
    ys = np.linspace(date.cra - 4 * date.sigma, date.cra + 4 * date.sigma, 200)
    pdf = np.exp(-0.5 * ((ys - date.cra) / date.sigma) ** 2)
    width = 0.18 * (x1 - x0)
    ax.fill_betweenx(ys, x0, x0 + width * pdf, color=OKABE_ITO["vermillion"], alpha=0.6,
                     linewidth=0, label=f"{date.cra:.0f} ± {date.sigma:.0f} BP")
    lo_y = min(mu.min() - 2 * sd.max(), ys[0]) if mu.size else ys[0]
    hi_y = max(mu.max() + 2 * sd.max(), ys[-1]) if mu.size else ys[-1]
    ax.set_ylim(lo_y, hi_y)
    ax.set_ylabel("Radiocarbon age (BP)")
    ax.legend(loc="upper right", fontsize=7, frameon=False)


def _draw_density(ax, date: CalibratedDate) -> list[str]:
    years, dens = date.years, date.density
    ax.plot(years, dens, color=OKABE_ITO["black"], linewidth=0.9)
    lines = []
    shades = sorted(date.hpd.items(), reverse=True)
    for rank, (mass, ranges) in enumerate(shades):
        colour = OKABE_ITO["orange"] if rank == 0 else OKABE_ITO["bluish_green"]
        for r in ranges:
            sel = (years >= r.start) & (years <= r.end)
            ax.fill_between(years[sel], 0, dens[sel], color=colour, alpha=0.45 + 0.25 * rank,
                            linewidth=0)
        parts = "; ".join(f"{format_range(r.start, r.end)} ({100 * r.probability:.1f}%)"
                          for r in ranges)
        lines.append(f"{100 * mass:.1f}% HPD: {parts}")
    ax.set_ylim(bottom=0)
    ax.set_yticks([])
    ax.set_ylabel("Calibrated\ndensity")
    return lines


def calibration_plot(date: CalibratedDate, curve: CurveOnGrid, *, title: str | None = None,
                     dpi: int = 120) -> PlotImages:
    """Draw ``date`` against ``curve``; return the figure as SVG and PNG bytes.

    Parameters
    ----------
    date : CalibratedDate
        From :func:`chronology.engine.calibration.calibrate`.
    curve : CurveOnGrid
        The curve (with any offset) it was calibrated against.
    title : str, optional
        Defaults to the date's label and measurement.
    dpi : int
        PNG resolution.

    Returns
    -------
    PlotImages
    """
    if not isinstance(date, CalibratedDate) or not isinstance(curve, CurveOnGrid):
        raise TypeError("calibration_plot needs a CalibratedDate and a CurveOnGrid")
    x0, x1 = _view(date)
    fig = Figure(figsize=(7.5, 6.0))
    FigureCanvasAgg(fig)
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1.3]})
    _draw_curve(top, date, curve, x0, x1)
    lines = _draw_density(bottom, date)
    bottom.set_xlim(x0, x1)
    bottom.xaxis.set_major_locator(FixedLocator(_round_label_ticks(x0, x1)))
    bottom.xaxis.set_major_formatter(FuncFormatter(_year_label))
    bottom.set_xlabel("Calendar date (cal BC/AD)")
    for ax in (top, bottom):
        ax.spines[["top", "right"]].set_visible(False)
        ax.set_axisbelow(True)
        ax.grid(axis="x", color="#dddddd", linewidth=0.5)
    heading = title or f"{date.label or 'Determination'}: {date.cra:.0f} ± {date.sigma:.0f} BP"
    top.set_title(heading, loc="left", fontsize=11)
    notes = [f"Curve: {curve.label}", *lines]
    if curve.synthetic or date.synthetic:
        notes.append(SYNTHETIC_WARNING)
    if date.truncated:
        notes.append("The density reaches the end of the curve; part of it may lie beyond.")
    notes.append(CAUTION)
    fig.subplots_adjust(left=0.11, right=0.97, top=0.93, bottom=0.12 + 0.035 * len(notes),
                        hspace=0.08)
    for i, note in enumerate(notes):
        warn = note in (SYNTHETIC_WARNING, CAUTION)
        fig.text(0.02, 0.015 + 0.035 * (len(notes) - 1 - i), note, fontsize=7.5,
                 color=OKABE_ITO["vermillion"] if note == SYNTHETIC_WARNING else "#222222",
                 weight="bold" if warn else "normal")
    return PlotImages(svg=_render(fig, "svg"), png=_render(fig, "png", dpi))


def _render(fig: Figure, fmt: str, dpi: int = 100) -> bytes:
    buf = io.BytesIO()
    # Text stays searchable text in SVG; fixed salt and no date keep output reproducible.
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "tellstack"}):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata={"Date": None} if fmt == "svg" else None)
    return buf.getvalue()
