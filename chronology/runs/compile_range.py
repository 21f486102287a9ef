"""The overall range ``L..U`` of a model and its calendar grid.

The range is ``ModelSpec.range`` when the version sets one; else the extent
of the bounded evidence (radiocarbon likelihoods within about 6σ of their
peak, calendar dates, termini) padded on each side by half its width (at
least :data:`MIN_RANGE_PAD` years), kept inside every curve used.  The grid
step follows the range's width (1 year up to 1500 years, then 2, 5, 10).
"""

from __future__ import annotations

import math
from typing import Iterable

from chronology.engine.curves import Curve
from chronology.engine.grid import CalendarGrid

from .compile_evidence import Term
from .model_inputs import EvidenceSet, ModelRefused, ModelSpec

__all__ = ["MIN_RANGE_PAD", "choose_grid"]

#: Least padding of the derived overall range on each side, in years.
MIN_RANGE_PAD = 200.0
# Support of a likelihood when deriving the range: within 6 sigma of its peak.
_SUPPORT_DROP = 18.0


def _curve_extent(curves: Iterable[Curve]) -> tuple[float, float] | None:
    curves = list(curves)
    if not curves:
        return None
    return max(c.oldest_year for c in curves), min(c.youngest_year for c in curves)


def _radiocarbon_support(term: Term, curve: Curve) -> tuple[float, float]:
    # on the curve's own extent at 5-year spacing: cheap, and shows an event outside every curve
    lo, hi = curve.oldest_year, curve.youngest_year
    step = 5.0 if hi - lo > 50 else 1.0
    grid = CalendarGrid.spanning(lo + step, hi - step, step)
    ll, _ = term.build(grid, lo, hi)
    years = grid.years[ll >= ll.max() - _SUPPORT_DROP]
    return float(years.min()), float(years.max())


def _auto_step(span: float) -> float:
    for limit, step in ((1500, 1.0), (3000, 2.0), (15000, 5.0), (60000, 10.0)):
        if span <= limit:
            return step
    return 20.0


def choose_grid(reading: ModelSpec, terms: list[Term], evidence: EvidenceSet) -> tuple[CalendarGrid, float, float]:
    used_curves = [evidence.curves[t.curve] for t in terms if t.curve is not None]
    extent = _curve_extent(used_curves)
    if reading.range is not None:
        lo, hi = reading.range
        if not hi > lo:
            raise ModelRefused("invalid-range", "the overall range needs lo < hi", range=[lo, hi])
    else:
        supports = []
        for t in terms:
            if t.use == "excluded":
                continue
            supports.append(t.support if t.support is not None else _radiocarbon_support(t, evidence.curves[t.curve]))
        if not supports:
            raise ModelRefused("no-evidence", "the version uses no dating evidence", status=422)
        lo, hi = min(s[0] for s in supports), max(s[1] for s in supports)
        pad = max(0.5 * (hi - lo), MIN_RANGE_PAD)
        lo, hi = lo - pad, hi + pad
        if extent is not None:
            lo, hi = max(lo, extent[0] + 1), min(hi, extent[1] - 1)
    if extent is not None and (lo < extent[0] or hi > extent[1]):
        raise ModelRefused("range-outside-curve", "the overall range runs beyond the calibration curve",
                           range=[lo, hi], curve_extent=list(extent))
    step = reading.grid_step or _auto_step(hi - lo)
    start = math.floor(lo / step) * step
    if extent is not None and start < extent[0]:
        start += step
    end = math.ceil(hi / step) * step
    if extent is not None and end > extent[1]:
        end -= step
    grid = CalendarGrid.spanning(start, end, step)
    return grid, grid.start, grid.end
