"""Highest-density regions of a density given on a grid (Hyndman 1996).

The HPD region of mass ``m`` is ``{t : p(t) >= f_m}`` where ``f_m`` is the
largest threshold whose region still holds at least ``m`` of the probability.
On a grid: sort the cells by density, accumulate their probability to the
target, and return each run of consecutive cells at or above the threshold
as one range with its own probability.  A multimodal density gives several
disjoint ranges; their probabilities add up to (at least) ``m``, exceeding it
by at most the probability of the cells at the threshold.

A range runs from the grid value (cell middle) of its first cell to that of
its last cell, so it is exact to within one grid step.  Round outward for
display only.

References
----------
Hyndman, R.J. 1996. Computing and graphing highest density regions.
    The American Statistician 50(2): 120-126.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

__all__ = ["HPDRange", "hpd_regions", "hpd_regions_batch", "STANDARD_MASSES"]

#: The usual reporting levels: the normal 1σ and 2σ masses, rounded.
STANDARD_MASSES = (0.683, 0.954)


@dataclass(frozen=True, slots=True)
class HPDRange:
    """One contiguous part of an HPD region: astronomical years and its probability."""

    start: float
    end: float
    probability: float

    def as_dict(self) -> dict:
        return {"start": self.start, "end": self.end, "probability": self.probability}


def _check_mass(mass: float) -> float:
    mass = float(mass)
    if not 0.0 < mass <= 1.0:
        raise ValueError("mass must lie in (0, 1]")
    return mass


def _cell_widths(years: np.ndarray) -> np.ndarray:
    # Each point stands for the cell between the midpoints to its neighbours.
    edges = np.concatenate(([years[0]], 0.5 * (years[1:] + years[:-1]), [years[-1]]))
    widths = np.diff(edges)
    widths[0] *= 2.0
    widths[-1] *= 2.0
    return widths


def _runs(mask: np.ndarray):
    """(row, first column, last column) of each run of True, rows in order."""
    padded = np.zeros((mask.shape[0], mask.shape[1] + 2), dtype=np.int8)
    padded[:, 1:-1] = mask
    step = np.diff(padded, axis=1)
    r, c = np.nonzero(step)
    # Changes alternate up, down within each row, and rows come in order.
    return r[0::2], c[0::2], c[1::2] - 1


def hpd_regions(years: np.ndarray, density: np.ndarray, mass: float) -> list[HPDRange]:
    """The highest-density region of ``density`` holding ``mass`` of its probability.

    Parameters
    ----------
    years : ndarray, shape (n,)
        Strictly increasing grid values (a regular grid is usual; irregular
        spacing is weighted by cell width).
    density : ndarray, shape (n,)
        Non-negative density values; need not be normalised.
    mass : float
        Target probability in (0, 1], e.g. 0.683 or 0.954.

    Returns
    -------
    list of HPDRange
        Disjoint ranges, earliest first, each with its probability.

    Raises
    ------
    ValueError
        On mismatched shapes, non-increasing years, negative or non-finite
        density, or a density that is zero everywhere.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(-50.0, 51.0)
    >>> [(r.start, r.end) for r in hpd_regions(t, np.exp(-t**2 / 200), 0.683)]
    [(-10.0, 10.0)]

    References
    ----------
    Hyndman, R.J. 1996. The American Statistician 50(2): 120-126.
    """
    mass = _check_mass(mass)
    years = np.asarray(years, dtype=float)
    density = np.asarray(density, dtype=float)
    if years.ndim != 1 or years.shape != density.shape or years.size < 2:
        raise ValueError("years and density must be 1-D arrays of the same length >= 2")
    if not np.all(np.diff(years) > 0):
        raise ValueError("years must be strictly increasing")
    if not np.all(np.isfinite(density)) or np.any(density < 0):
        raise ValueError("density must be finite and non-negative")
    weights = density * _cell_widths(years)
    total = weights.sum()
    if not total > 0:
        raise ValueError("density is zero everywhere")
    order = np.argsort(-density, kind="stable")
    cum = np.cumsum(weights[order]) / total
    k = min(int(np.searchsorted(cum, mass * (1 - 1e-12))), int(np.count_nonzero(density)) - 1)
    threshold = density[order[k]]
    mask = (density >= threshold) & (density > 0)
    prob = np.concatenate(([0.0], np.cumsum(weights) / total))
    _, first, last = _runs(mask[None, :])
    return [HPDRange(float(years[a]), float(years[b]), float(prob[b + 1] - prob[a]))
            for a, b in zip(first, last)]


def hpd_regions_batch(density: np.ndarray, masses: Sequence[float], first_years: np.ndarray,
                      step: float, *, normalised: bool = False,
                      cumulative: np.ndarray | None = None) -> dict[float, list[list[HPDRange]]]:
    """HPD regions of many densities on regular grids at once.

    The same method as :func:`hpd_regions`, vectorised over rows: one sort
    per row serves every mass.

    Parameters
    ----------
    density : ndarray, shape (m, w)
        One non-negative density per row, on cells ``step`` apart; zero
        padding at either end is allowed.  Every row needs a positive value.
    masses : sequence of float
        Target probabilities in (0, 1].
    first_years : ndarray, shape (m,)
        Year of each row's first column.
    step : float
        Grid spacing, shared by all rows.
    normalised : bool
        True when each row already sums to 1 (cell probabilities), which
        saves a pass.
    cumulative : ndarray, shape (m, w), optional
        ``np.cumsum(density, axis=1)`` of the normalised rows, when the
        caller has it already (e.g. for medians).

    Returns
    -------
    dict
        ``{mass: [ranges of row 0, ranges of row 1, ...]}``.

    References
    ----------
    Hyndman, R.J. 1996. The American Statistician 50(2): 120-126.
    """
    p = np.asarray(density, dtype=float)
    if p.ndim != 2:
        raise ValueError("density must be 2-D (one row per density)")
    m = p.shape[0]
    starts = np.asarray(first_years, dtype=float).reshape(m)
    if not normalised:
        total = p.sum(axis=1)
        if np.any(~(total > 0)):
            raise ValueError("every row needs a positive density")
        p = p / total[:, None]
        cumulative = None
    prob = np.cumsum(p, axis=1) if cumulative is None else cumulative
    desc = np.sort(p, axis=1)[:, ::-1]
    cum = np.cumsum(desc, axis=1)
    positive = np.count_nonzero(p, axis=1)
    rows = np.arange(m)
    out: dict[float, list[list[HPDRange]]] = {}
    for mass in masses:
        mass = _check_mass(mass)
        k = np.minimum(np.argmax(cum >= mass * (1 - 1e-12), axis=1), positive - 1)
        # argmax is 0 when no column reaches the mass (rounding); take the last positive.
        k = np.where(cum[:, -1] >= mass * (1 - 1e-12), k, positive - 1)
        threshold = desc[rows, k]
        mask = (p >= threshold[:, None]) & (p > 0)
        r, a, b = _runs(mask)
        before = np.where(a > 0, prob[r, np.maximum(a - 1, 0)], 0.0)
        pr = prob[r, b] - before
        ya = starts[r] + step * a
        yb = starts[r] + step * b
        per_row: list[list[HPDRange]] = [[] for _ in range(m)]
        for ri, s, e, q in zip(r.tolist(), ya.tolist(), yb.tolist(), pr.tolist()):
            per_row[ri].append(HPDRange(s, e, q))
        out[mass] = per_row
    return out
