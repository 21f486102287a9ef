"""Radiocarbon calibration: the likelihood of a determination on a calendar grid.

For a determination ``y ± σ`` (a CRA, 1σ) and a curve with mean ``μ(t)`` and
error ``σ_c(t)`` on the grid, after a reservoir offset ``ΔR ± σ_ΔR``::

    L(t) = N(y; μ(t) + ΔR, sqrt(σ² + σ_c(t)² + σ_ΔR²))

The laboratory and curve variances add (Christen & Pérez 2009); adding
``σ_ΔR²`` as a further independent variance is the usual treatment of an
offset (from memory).  The ``t``-dependent normaliser is kept and the work is
done in log space.  With a uniform prior the calibrated density is
``L(t) / Σ L``, summarised by its median and HPD ranges (Hyndman 1996).

Mixed material (e.g. a partly marine diet) uses a mixture of two curves::

    μ = (1 − p) μ_terr + p (μ_marine + ΔR)
    σ_mix² = (1 − p)² σ_terr² + p² (σ_marine² + σ_ΔR²) + σ_p² (μ_marine + ΔR − μ_terr)²

(from memory): the two curve errors and ΔR are treated as independent, and an
uncertain fraction ``p ± σ_p`` enters by first-order (delta-method)
propagation.

Many determinations are calibrated at once: each is windowed to the grid
cells where it lies within ``k`` combined sigma of the curve (default 6),
found with block envelopes of the curve, and the windows are evaluated in
chunks of a 2-D array, so memory grows with the windows, not with
``determinations × grid``.

References
----------
Christen, J.A. & Pérez E., S. 2009. A new robust statistical model for
    radiocarbon data. Radiocarbon 51(3): 1047-1059.
Hyndman, R.J. 1996. Computing and graphing highest density regions.
    The American Statistician 50(2): 120-126.
Stuiver, M. & Polach, H.A. 1977. Discussion: reporting of 14C data.
    Radiocarbon 19(3): 355-363.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from .curves import Curve, curve_grid, interpolate
from .errors import CalibrationError
from .grid import CalendarGrid
from .hpd import STANDARD_MASSES, HPDRange, hpd_regions_batch

__all__ = [
    "ReservoirOffset",
    "CurveOnGrid",
    "CalibratedDate",
    "curve_on_grid",
    "with_offset",
    "mixed_curve",
    "log_likelihood",
    "calibrate",
    "calibrate_many",
]

_LOG_2PI = math.log(2.0 * math.pi)
_BLOCK = 64
_GROUP = 16
_CELLS_PER_CHUNK = 1 << 20


@dataclass(frozen=True, slots=True)
class ReservoirOffset:
    """A local reservoir offset ``ΔR ± σ_ΔR`` in 14C years, added to the curve."""

    delta_r: float = 0.0
    sigma: float = 0.0

    def __post_init__(self):
        if not (math.isfinite(self.delta_r) and math.isfinite(self.sigma)) or self.sigma < 0:
            raise CalibrationError("reservoir offset must be finite with a non-negative error",
                                   code="invalid-offset",
                                   details={"delta_r": self.delta_r, "sigma": self.sigma})


@dataclass(frozen=True, eq=False)
class CurveOnGrid:
    """A curve's mean and variance on a calendar grid, ready for calibration.

    ``variance`` already includes any reservoir or mixture terms; ``label``
    records what was done (curve name, offset, mixture) for display.
    """

    grid: CalendarGrid
    mu: np.ndarray
    variance: np.ndarray
    name: str
    checksums: tuple[str, ...]
    synthetic: bool
    label: str
    _blocks: tuple = field(init=False, repr=False)

    def __post_init__(self):
        if self.mu.shape != (self.grid.n,) or self.variance.shape != (self.grid.n,):
            raise ValueError("mu and variance must match the grid")
        if not (np.all(np.isfinite(self.mu)) and np.all(self.variance > 0)):
            raise CalibrationError("curve values on the grid must be finite with positive variance",
                                   code="invalid-curve")
        object.__setattr__(self, "_blocks", _block_envelopes(self.mu, np.sqrt(self.variance)))

    @property
    def sigma(self) -> np.ndarray:
        return np.sqrt(self.variance)


def _block_envelopes(mu: np.ndarray, sd: np.ndarray):
    """Per-block (min μ, max μ, max σc) for blocks of ``_BLOCK`` cells and of
    ``_BLOCK * _GROUP`` cells; edge padding repeats real values, so bounds hold."""
    fine = _envelope(mu, mu, sd, _BLOCK)
    coarse = _envelope(fine[0], fine[1], fine[2], _GROUP)
    return fine, coarse


def _envelope(low, high, sd, size):
    nb = -(-low.size // size)
    pad = (0, nb * size - low.size)
    return (np.pad(low, pad, mode="edge").reshape(nb, size).min(axis=1),
            np.pad(high, pad, mode="edge").reshape(nb, size).max(axis=1),
            np.pad(sd, pad, mode="edge").reshape(nb, size).max(axis=1))


def curve_on_grid(curve: Curve, grid: CalendarGrid | None = None, step: float = 1.0) -> CurveOnGrid:
    """Interpolate ``curve`` onto ``grid`` (default: its whole extent at ``step`` years).

    Raises
    ------
    CalibrationError
        ``grid-outside-curve`` when the grid runs beyond the curve.
    """
    grid = grid or curve_grid(curve, step)
    mu, sigma = interpolate(curve, grid)
    return CurveOnGrid(grid, mu, sigma * sigma, curve.name, (curve.checksum,),
                       curve.synthetic, curve.name)


def with_offset(curve: CurveOnGrid, offset: ReservoirOffset) -> CurveOnGrid:
    """The curve shifted by ``ΔR`` with ``σ_ΔR²`` added to its variance (from memory)."""
    if offset.delta_r == 0 and offset.sigma == 0:
        return curve
    label = f"{curve.label} with ΔR {offset.delta_r:g} ± {offset.sigma:g}"
    return CurveOnGrid(curve.grid, curve.mu + offset.delta_r, curve.variance + offset.sigma ** 2,
                       curve.name, curve.checksums, curve.synthetic, label)


def mixed_curve(terrestrial: CurveOnGrid, marine: CurveOnGrid, fraction: float,
                offset: ReservoirOffset | None = None, fraction_sigma: float = 0.0) -> CurveOnGrid:
    """A mixture of a terrestrial and a marine curve for material of mixed carbon source.

    Parameters
    ----------
    terrestrial, marine : CurveOnGrid
        Both on the same grid.
    fraction : float
        Marine fraction ``p`` in [0, 1].
    offset : ReservoirOffset, optional
        Local ``ΔR ± σ_ΔR`` applied to the marine curve.
    fraction_sigma : float
        One-sigma uncertainty of ``p`` (>= 0).

    Returns
    -------
    CurveOnGrid
        ``μ = (1−p)μ_t + p(μ_m+ΔR)``, variance
        ``(1−p)²σ_t² + p²(σ_m²+σ_ΔR²) + σ_p²(μ_m+ΔR−μ_t)²``; the variance
        combination (independent errors, delta method for ``σ_p``) is from
        memory.
    """
    if terrestrial.grid != marine.grid:
        raise CalibrationError("the two curves must be on the same grid", code="grid-mismatch")
    if not 0.0 <= fraction <= 1.0 or not fraction_sigma >= 0:
        raise CalibrationError("marine fraction must lie in [0, 1] with a non-negative error",
                               code="invalid-mixture",
                               details={"fraction": fraction, "fraction_sigma": fraction_sigma})
    offset = offset or ReservoirOffset()
    p = float(fraction)
    marine_mu = marine.mu + offset.delta_r
    mu = (1.0 - p) * terrestrial.mu + p * marine_mu
    var = ((1.0 - p) ** 2 * terrestrial.variance + p * p * (marine.variance + offset.sigma ** 2)
           + fraction_sigma ** 2 * (marine_mu - terrestrial.mu) ** 2)
    label = (f"{terrestrial.name} / {marine.name} mixture, marine {100 * p:g}%"
             f" ± {100 * fraction_sigma:g}%, ΔR {offset.delta_r:g} ± {offset.sigma:g}")
    # A tiny floor keeps p = 0 or 1 with a zero-error curve point valid.
    return CurveOnGrid(terrestrial.grid, mu, np.maximum(var, 1e-12),
                       f"{terrestrial.name} + {marine.name}",
                       terrestrial.checksums + marine.checksums,
                       terrestrial.synthetic or marine.synthetic, label)


@dataclass(frozen=True, eq=False)
class CalibratedDate:
    """The calibrated density of one determination and its summaries.

    ``density`` covers only the window ``first_year, first_year + step, …``
    where the likelihood is non-negligible; it is per calendar year
    (``density.sum() * step == 1``).  ``hpd`` maps each mass to its ranges.
    ``truncated`` is True when the window reaches the end of the grid, so
    part of the probability may lie beyond the curve.
    """

    label: str
    cra: float
    sigma: float
    curve_label: str
    synthetic: bool
    first_year: float
    step: float
    density: np.ndarray = field(repr=False)
    median: float = math.nan
    hpd: dict[float, list[HPDRange]] = field(default_factory=dict)
    truncated: bool = False

    @property
    def years(self) -> np.ndarray:
        return self.first_year + self.step * np.arange(self.density.size, dtype=float)

    def density_on(self, grid: CalendarGrid) -> np.ndarray:
        """The density placed on the full ``grid`` (zero outside the window)."""
        out = np.zeros(grid.n)
        i0 = int(round(grid.index_of(self.first_year)))
        lo, hi = max(i0, 0), min(i0 + self.density.size, grid.n)
        if hi > lo:
            out[lo:hi] = self.density[lo - i0:hi - i0]
        return out

    def as_dict(self) -> dict:
        return {
            "label": self.label, "cra": self.cra, "sigma": self.sigma,
            "curve": self.curve_label, "synthetic": self.synthetic,
            "median": self.median, "truncated": self.truncated,
            "hpd": {f"{m:g}": [r.as_dict() for r in rs] for m, rs in self.hpd.items()},
        }


def _check_determinations(cras, sigmas) -> tuple[np.ndarray, np.ndarray]:
    y = np.atleast_1d(np.asarray(cras, dtype=float))
    s = np.atleast_1d(np.asarray(sigmas, dtype=float))
    if y.ndim != 1 or y.shape != s.shape:
        raise CalibrationError("ages and errors must be 1-D of the same length",
                               code="invalid-determination")
    bad = np.flatnonzero(~np.isfinite(y) | ~np.isfinite(s) | ~(s > 0))
    if bad.size:
        i = int(bad[0])
        raise CalibrationError(f"determination {i} needs a finite age and a positive error",
                               code="invalid-determination",
                               details={"index": i, "cra": float(y[i]), "sigma": float(s[i])})
    return y, s


def log_likelihood(cra: float, sigma: float, curve: CurveOnGrid,
                   offset: ReservoirOffset | None = None) -> np.ndarray:
    """Log-likelihood of one determination at every year of the curve's grid.

    Parameters
    ----------
    cra, sigma : float
        Conventional radiocarbon age and its 1σ error (14C yr BP).
    curve : CurveOnGrid
    offset : ReservoirOffset, optional

    Returns
    -------
    ndarray, shape (grid.n,)
        ``log N(y; μ(t)+ΔR, sqrt(σ²+σ_c(t)²+σ_ΔR²))`` including the
        ``t``-dependent normaliser.

    References
    ----------
    Christen, J.A. & Pérez E., S. 2009. Radiocarbon 51(3): 1047-1059.
    """
    y, s = _check_determinations(cra, sigma)
    if offset is not None:
        curve = with_offset(curve, offset)
    var = s[0] ** 2 + curve.variance
    return -0.5 * (_LOG_2PI + np.log(var) + (y[0] - curve.mu) ** 2 / var)


def calibrate(cra: float, sigma: float, curve: CurveOnGrid, *,
              offset: ReservoirOffset | None = None, label: str = "",
              masses: Sequence[float] = STANDARD_MASSES, k: float = 6.0) -> CalibratedDate:
    """Calibrate one determination; see :func:`calibrate_many`.

    Examples
    --------
    >>> from chronology.engine.synthetic_curve import synthetic_curve
    >>> c = curve_on_grid(synthetic_curve(0, 5000))
    >>> calibrate(2450, 30, c).hpd[0.954][0].start < -400
    True
    """
    return calibrate_many([cra], [sigma], curve, offset=offset, labels=[label],
                          masses=masses, k=k)[0]


def calibrate_many(cras, sigmas, curve: CurveOnGrid, *, offset: ReservoirOffset | None = None,
                   labels: Sequence[str] | None = None,
                   masses: Sequence[float] = STANDARD_MASSES, k: float = 6.0,
                   on_outside: str = "raise") -> list[CalibratedDate | None]:
    """Calibrate many determinations against one curve, vectorised.

    Parameters
    ----------
    cras, sigmas : array_like, shape (m,)
        Conventional radiocarbon ages and 1σ errors.
    curve : CurveOnGrid
    offset : ReservoirOffset, optional
        Applied to every determination.
    labels : sequence of str, optional
        E.g. laboratory codes.
    masses : sequence of float
        HPD levels (default 68.3% and 95.4%).
    k : float
        Half-width of each window in combined sigma (default 6; beyond it
        the likelihood is below ``exp(−18)`` of its peak).
    on_outside : {"raise", "none"}
        For determinations that do not meet the curve anywhere on the grid.

    Returns
    -------
    list of CalibratedDate (or None where skipped), in input order.

    Raises
    ------
    CalibrationError
        ``outside-curve`` (with ``details["indices"]``) for determinations
        beyond the curve's range, ``invalid-determination`` for bad input.

    Notes
    -----
    Windows come from per-block envelopes of the curve (min and max of
    ``μ``, max of ``σ_c``), tested first on blocks of 1024 cells, then on
    blocks of 64 inside the coarse range: about ``O(m · (n / 1024 + w / 64))``.
    The densities and HPD ranges cost ``O(Σ w log w)``, ``w`` being window
    lengths; temporaries are held to about a million cells per chunk.

    References
    ----------
    Christen, J.A. & Pérez E., S. 2009. Radiocarbon 51(3): 1047-1059.
    Hyndman, R.J. 1996. The American Statistician 50(2): 120-126.
    """
    y, s = _check_determinations(cras, sigmas)
    if on_outside not in ("raise", "none"):
        raise ValueError("on_outside must be 'raise' or 'none'")
    if not k > 0:
        raise ValueError("k must be positive")
    m = y.size
    labels = list(labels) if labels is not None else [""] * m
    if len(labels) != m:
        raise ValueError("one label per determination")
    if offset is not None:
        curve = with_offset(curve, offset)
    lo, hi = _windows(y, s, curve, k)
    outside = np.flatnonzero(hi < lo)
    if outside.size and on_outside == "raise":
        raise _outside_error(outside.tolist(), labels, curve)
    results: list[CalibratedDate | None] = [None] * m
    inside = np.flatnonzero(hi >= lo)
    order = inside[np.argsort((hi - lo)[inside], kind="stable")]
    widths = (hi - lo + 1)[order]
    missed: list[int] = []
    start = 0
    while start < order.size:
        # Rows are sorted by width, so a chunk's last row is its widest.
        stop = min(order.size, start + max(1, _CELLS_PER_CHUNK // int(widths[start])))
        while stop - start > 1 and (stop - start) * int(widths[stop - 1]) > 2 * _CELLS_PER_CHUNK:
            stop = start + (stop - start) // 2
        missed += _calibrate_chunk(order[start:stop], y, s, lo, hi, curve, k, masses, labels,
                                   results)
        start = stop
    if missed and on_outside == "raise":
        raise _outside_error(sorted(missed), labels, curve)
    return results


def _outside_error(indices: list[int], labels, curve: CurveOnGrid) -> CalibrationError:
    return CalibrationError(
        f"{len(indices)} determination(s) lie outside the range of curve {curve.name!r}",
        code="outside-curve",
        details={"indices": indices, "labels": [labels[i] for i in indices],
                 "curve": curve.name})


def _hits(y, s, mu_min, mu_max, sd_max, k):
    # σc <= the block's largest σc, so this test keeps every cell that matters.
    reach = k * np.sqrt(s * s + sd_max * sd_max)
    return (y - reach <= mu_max) & (y + reach >= mu_min)


def _first_last(hit):
    return (hit.any(axis=1), np.argmax(hit, axis=1),
            hit.shape[1] - 1 - np.argmax(hit[:, ::-1], axis=1))


def _windows(y, s, curve: CurveOnGrid, k: float):
    """Inclusive grid index windows; ``hi < lo`` where the curve is never met.

    Two passes: blocks of ``_BLOCK * _GROUP`` cells first, then the
    ``_BLOCK``-cell blocks inside the coarse range only.
    """
    fine, coarse = curve._blocks
    n = curve.grid.n
    nb = fine[0].size
    m = y.size
    lo = np.zeros(m, dtype=np.int64)
    hi = np.full(m, -1, dtype=np.int64)
    rows_per_pass = 4096
    for a in range(0, m, rows_per_pass):
        b = min(m, a + rows_per_pass)
        ya, sa = y[a:b, None], s[a:b, None]
        c_any, c_first, c_last = _first_last(_hits(ya, sa, *(e[None, :] for e in coarse), k))
        start = c_first * _GROUP
        stop = np.minimum((c_last + 1) * _GROUP, nb)
        span = int((stop - start).max())
        idx = start[:, None] + np.arange(span)[None, :]
        valid = idx < stop[:, None]
        idx = np.minimum(idx, nb - 1)
        hit = _hits(ya, sa, fine[0][idx], fine[1][idx], fine[2][idx], k) & valid
        f_any, f_first, f_last = _first_last(hit)
        ok = c_any & f_any
        lo[a:b] = np.where(ok, (start + f_first) * _BLOCK, 0)
        hi[a:b] = np.where(ok, np.minimum((start + f_last + 1) * _BLOCK - 1, n - 1), -1)
    return lo, hi


def _calibrate_chunk(rows, y, s, lo, hi, curve: CurveOnGrid, k, masses, labels,
                     results) -> list[int]:
    """Fill ``results`` for ``rows``; return the rows that met the curve nowhere."""
    grid = curve.grid
    n = grid.n
    w = int((hi[rows] - lo[rows]).max()) + 1
    idx = lo[rows, None] + np.arange(w)[None, :]
    valid = idx <= hi[rows, None]
    idx = np.minimum(idx, n - 1)
    var = curve.variance[idx] + (s[rows] ** 2)[:, None]
    z2 = (y[rows, None] - curve.mu[idx]) ** 2 / var
    near = valid & (z2 <= k * k)
    has = near.any(axis=1)
    # The block test is a superset: a row may still miss every cell.
    missed = rows[~has].tolist()
    if missed:
        rows, var, z2, near = rows[has], var[has], z2[has], near[has]
        if rows.size == 0:
            return missed
    # The constant log(2π) cancels on normalising.
    loglik = np.where(near, -0.5 * (np.log(var) + z2), -np.inf)
    prob = np.exp(loglik - loglik.max(axis=1)[:, None])
    prob /= prob.sum(axis=1)[:, None]  # probability per cell
    cdf = np.cumsum(prob, axis=1)
    first = np.argmax(near, axis=1)
    last = w - 1 - np.argmax(near[:, ::-1], axis=1)
    first_years = grid.start + grid.step * lo[rows]
    regions = hpd_regions_batch(prob, masses, first_years, grid.step, normalised=True,
                                cumulative=cdf)
    medians = _medians(prob, cdf, grid.step, first_years)
    dens = prob
    dens /= grid.step  # density per year
    truncated = (lo[rows] + first == 0) | (lo[rows] + last == n - 1)
    # One compact buffer per chunk without the padding; each date keeps a view of it.
    cols = np.arange(w)[None, :]
    keep = (cols >= first[:, None]) & (cols <= last[:, None])
    compact = dens[keep]
    compact.setflags(write=False)
    pieces = np.split(compact, np.cumsum(last - first + 1)[:-1])
    for j, i in enumerate(rows.tolist()):
        results[i] = CalibratedDate(
            label=labels[i], cra=float(y[i]), sigma=float(s[i]), curve_label=curve.label,
            synthetic=curve.synthetic, first_year=float(first_years[j] + grid.step * first[j]),
            step=grid.step, density=pieces[j], median=float(medians[j]),
            hpd={mass: regions[mass][j] for mass in regions}, truncated=bool(truncated[j]))
    return missed


def _medians(prob: np.ndarray, cdf: np.ndarray, step: float, first_years: np.ndarray) -> np.ndarray:
    # Cell j spans [t_j - step/2, t_j + step/2]; interpolate the CDF inside the cell.
    j = np.minimum(np.argmax(cdf >= 0.5, axis=1), prob.shape[1] - 1)
    rows = np.arange(prob.shape[0])
    before = np.where(j > 0, cdf[rows, np.maximum(j - 1, 0)], 0.0)
    cell = prob[rows, j]
    frac = np.where(cell > 0, (0.5 - before) / np.where(cell > 0, cell, 1.0), 0.5)
    return first_years + step * (j - 0.5 + frac)
