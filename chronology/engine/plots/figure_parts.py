"""What every model figure shares: the calendar axis, the heading and the notes.

Calendar axis: ticks at round calendar years on the cal BC / cal AD scale.
There is no year 0 on that scale: astronomical year 0 is 1 BC and −1 is
2 BC (ISO 8601 astronomical year numbering), so a tick labelled "200 cal BC"
sits at astronomical −199.  Round BC labels and round AD labels are placed
separately, which keeps every printed number round on both sides of the
change.

Heading: the site, interpretation version, record revision and run, with
"NOT CONVERGED" in front when the run has not converged.  Notes: the curve
name(s), the warning that a synthetic curve is not for dating real samples,
the method and the caution.

The palette is our own selection from the colour-blind-safe set of Okabe &
Ito (2008); shapes differ as well as colours, so nothing rests on colour alone.
"""

from __future__ import annotations

import io
import math
import textwrap
from dataclasses import dataclass

import matplotlib
from matplotlib.figure import Figure

from ..calendar_scales import format_year, from_bc_ad, to_bc_ad

__all__ = ["COLOURS", "MARKERS", "SYNTHETIC_WARNING", "FigureHeading", "calendar_ticks", "tick_label",
           "draw_calendar_axis", "render"]

#: Okabe & Ito (2008) colours, as used by our model figures.
COLOURS = {
    "dated": "#0072B2",       # blue
    "undated": "#009E73",     # bluish green
    "boundary": "#D55E00",    # vermillion
    "unmodelled": "#A6A6A6",  # light grey
    "band": "#F2F2F2",
    "band_alt": "#E6EEF5",
    "ink": "#222222",
    "warning": "#D55E00",
    "second": "#E69F00",      # orange: the second run of a comparison
}
#: Median marks: a shape per event kind.
MARKERS = {"dated": "o", "undated": "s", "boundary": "D"}
KIND_WORDS = {"dated": "dated event", "undated": "estimated from the order only", "boundary": "phase boundary"}

SYNTHETIC_WARNING = "SYNTHETIC calibration curve: not for dating real samples."
_STEPS = (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 2500, 5000, 10000)


def tick_label(t: float) -> str:
    """The label of a tick at astronomical year ``t``: −1 → "2 cal BC", 0 → "1 cal BC", 1 → "cal AD 1"."""
    return format_year(t)


def calendar_ticks(lo: float, hi: float, max_ticks: int = 8) -> list[float]:
    """Astronomical years of ticks at round cal BC / cal AD labels between ``lo`` and ``hi``.

    The step is the smallest of 1, 2, 5, 10, 20, 25, 50 ... years that gives
    at most ``max_ticks`` ticks; BC labels are multiples of it (500 BC is
    astronomical −499) and so are AD labels.
    """
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        raise ValueError("calendar_ticks needs finite lo < hi")
    for step in _STEPS:
        ticks = _ticks(lo, hi, step)
        if len(ticks) <= max_ticks:
            return ticks
    return _ticks(lo, hi, _STEPS[-1])


def _ticks(lo: float, hi: float, step: int) -> list[float]:
    out = []
    first_bc, last_bc = to_bc_ad(lo), to_bc_ad(min(hi, 0))
    if lo <= 0:
        # BC labels run backwards: the earliest (largest number) first
        top = first_bc[0] if first_bc[1] == "BC" else 1
        bottom = last_bc[0] if last_bc[1] == "BC" else 1
        for year in range(top - top % step, bottom - 1, -step):
            if year >= 1 and lo <= from_bc_ad(year, "BC") <= hi:
                out.append(float(from_bc_ad(year, "BC")))
    if hi >= 1:
        start = max(1, math.ceil(max(lo, 1) / step) * step)
        for year in range(int(start), int(math.floor(hi)) + 1, step):
            out.append(float(year))
    return sorted(set(out))


def draw_calendar_axis(ax, lo: float, hi: float, *, max_ticks: int = 8, label: bool = True, fontsize: float = 7.5):
    """Round cal BC / cal AD ticks on ``ax``'s x axis over ``lo..hi``."""
    ticks = calendar_ticks(lo, hi, max_ticks)
    ax.set_xlim(lo, hi)
    ax.set_xticks(ticks)
    ax.set_xticklabels([tick_label(t) for t in ticks], fontsize=fontsize)
    if label:
        ax.set_xlabel("Calendar date (cal BC / cal AD)", fontsize=8)


@dataclass(frozen=True)
class FigureHeading:
    """What a figure says about where its numbers come from."""

    site: str
    version: str
    record_revision: int | None
    run: str
    curves: tuple[str, ...] = ()
    synthetic: bool = False
    converged: bool | None = None
    caution: str = ""
    method: str = ""

    @property
    def not_converged(self) -> bool:
        return self.converged is False

    def title(self, what: str) -> str:
        head = "NOT CONVERGED: " if self.not_converged else ""
        revision = f", record revision {self.record_revision}" if self.record_revision is not None else ""
        return f"{head}{what}\n{self.site}, {self.version}{revision}, run {self.run}"

    def notes(self) -> list[tuple[str, bool]]:
        """Notes under the figure as (text, is_warning)."""
        out = [(f"Calibration curve: {', '.join(self.curves) or 'none named'}.", False)]
        if self.synthetic:
            out.append((SYNTHETIC_WARNING, True))
        if self.not_converged:
            out.append(("The run has NOT converged: continue it before using these results.", True))
        if self.method:
            out.append((self.method, False))
        if self.caution:
            out.append((self.caution, True))
        return out


def draw_heading(fig: Figure, heading: FigureHeading, what: str, *, top_in: float, height_in: float,
                 width_chars: int = 130) -> None:
    """The title at the top (``top_in`` inches reserved) of a figure ``height_in`` inches high."""
    colour = COLOURS["warning"] if heading.not_converged else COLOURS["ink"]
    fig.text(0.02, 1 - 0.12 / height_in, heading.title(what), ha="left", va="top", fontsize=10.5,
             color=colour, weight="bold", linespacing=1.35, gid="figure-title")


def draw_notes(fig: Figure, heading: FigureHeading, *, height_in: float, width_chars: int = 135) -> float:
    """The notes at the foot; returns the inches they take."""
    y = 0.1
    lines = []
    for text, warn in reversed(heading.notes()):
        for line in reversed(textwrap.wrap(text, width_chars)):
            lines.append((line, warn))
    for line, warn in lines:
        fig.text(0.02, y / height_in, line, fontsize=7, ha="left", va="bottom",
                 color=COLOURS["warning"] if warn else COLOURS["ink"], weight="bold" if warn else "normal")
        y += 0.14
    return y + 0.05


def notes_height(heading: FigureHeading, width_chars: int = 135) -> float:
    n = sum(len(textwrap.wrap(text, width_chars)) for text, _ in heading.notes())
    return 0.15 + 0.14 * n


def render(fig: Figure, fmt: str, dpi: int = 110) -> bytes:
    """SVG (text kept as text, reproducible) or PNG bytes of ``fig``."""
    if fmt not in ("svg", "png"):
        raise ValueError("fmt must be 'svg' or 'png'")
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "tellstack"}):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata={"Date": None} if fmt == "svg" else None)
    return buf.getvalue()
