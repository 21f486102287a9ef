"""Dating evidence as log-likelihood arrays on one calendar grid.

Every kind of evidence — a radiocarbon determination, a terminus post quem
(a coin's issue date, a felling date for heartwood-only timber), a terminus
ante quem, a documentary or scientific calendar date given as a normal or a
uniform range — becomes a :class:`Likelihood`: a log-likelihood array on the
model's :class:`~chronology.engine.grid.CalendarGrid` plus a label and its
parameters.  The model compiler can therefore treat all evidence alike and
only needs to know how the evidence relates to an event (equal, before,
after).  ``-inf`` marks impossible years; termini are hard step functions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .calibration import CurveOnGrid, ReservoirOffset, curve_on_grid, log_likelihood
from .curves import Curve
from .errors import CalibrationError, EvidenceError
from .grid import CalendarGrid

__all__ = [
    "Likelihood",
    "radiocarbon_likelihood",
    "terminus_post_quem",
    "terminus_ante_quem",
    "normal_date",
    "uniform_date",
    "fixed_date",
]

_KINDS = ("radiocarbon", "tpq", "taq", "normal", "uniform", "fixed")


@dataclass(frozen=True, eq=False)
class Likelihood:
    """A log-likelihood over the years of ``grid``.

    Attributes
    ----------
    kind : str
        One of ``radiocarbon``, ``tpq``, ``taq``, ``normal``, ``uniform``, ``fixed``.
    log_values : ndarray, shape (grid.n,)
        Log-likelihood at each grid year; ``-inf`` where impossible.
    label : str
        What the evidence is (a laboratory code, a coin's catalogue entry…).
    grid : CalendarGrid
    params : dict
        The plain-data parameters it was built from, for records and display.
    """

    kind: str
    log_values: np.ndarray = field(repr=False)
    label: str
    grid: CalendarGrid
    params: dict = field(default_factory=dict)

    def __post_init__(self):
        if self.kind not in _KINDS:
            raise EvidenceError(f"unknown evidence kind {self.kind!r}", code="invalid-evidence")
        values = np.asarray(self.log_values, dtype=float)
        if values.shape != (self.grid.n,):
            raise EvidenceError("log_values must have one value per grid year",
                                code="invalid-evidence")
        if not np.isfinite(values).any():
            raise EvidenceError(f"{self.kind} evidence {self.label!r} allows no year on the grid",
                                code="evidence-outside-grid",
                                details={"kind": self.kind, "label": self.label,
                                         "grid": self.grid.as_dict(), **self.params})
        values.setflags(write=False)
        object.__setattr__(self, "log_values", values)

    def density(self) -> np.ndarray:
        """The normalised density per year (``sum * step == 1``)."""
        v = np.exp(self.log_values - self.log_values.max())
        return v / (v.sum() * self.grid.step)


def _finite(name: str, value: float) -> float:
    value = float(value)
    if not math.isfinite(value):
        raise EvidenceError(f"{name} must be a finite number", code="invalid-evidence",
                            details={"field": name})
    return value


def radiocarbon_likelihood(grid: CalendarGrid, cra: float, sigma: float,
                           curve: Curve | CurveOnGrid, *, offset: ReservoirOffset | None = None,
                           label: str = "", k: float = 6.0) -> Likelihood:
    """A radiocarbon determination as a log-likelihood on ``grid``.

    Parameters
    ----------
    grid : CalendarGrid
    cra, sigma : float
        Conventional radiocarbon age and 1σ error.
    curve : Curve or CurveOnGrid
        A ``CurveOnGrid`` must already be on ``grid``; a ``Curve`` is
        interpolated onto it.
    offset : ReservoirOffset, optional
    label : str
    k : float
        The determination must come within ``k`` combined sigma of the curve
        somewhere on the grid.

    Raises
    ------
    CalibrationError
        ``outside-curve`` when it does not; ``grid-mismatch`` for a
        ``CurveOnGrid`` on another grid.

    References
    ----------
    Christen, J.A. & Pérez E., S. 2009. Radiocarbon 51(3): 1047-1059.
    """
    if isinstance(curve, Curve):
        curve = curve_on_grid(curve, grid)
    elif curve.grid != grid:
        raise CalibrationError("the curve is on a different grid", code="grid-mismatch")
    values = log_likelihood(cra, sigma, curve, offset)
    offset = offset or ReservoirOffset()
    var = sigma ** 2 + curve.variance + offset.sigma ** 2
    if np.min((cra - curve.mu - offset.delta_r) ** 2 / var) > k * k:
        raise CalibrationError(f"determination {label or cra!r} lies outside the curve on the grid",
                               code="outside-curve",
                               details={"label": label, "cra": float(cra), "curve": curve.name})
    return Likelihood("radiocarbon", values, label, grid,
                      {"cra": float(cra), "sigma": float(sigma), "curve": curve.label,
                       "delta_r": offset.delta_r, "delta_r_sigma": offset.sigma})


def terminus_post_quem(grid: CalendarGrid, year: float, *, label: str = "") -> Likelihood:
    """Not earlier than ``year``: 0 from ``year`` on, ``-inf`` before (a step function).

    ``year`` is astronomical; every cell reaching past it is allowed (the grid
    year equal to it too).  The model holds the exact year inside its cell as
    a hard bound on the event (``Evidence.bound``).
    """
    year = _finite("year", year)
    values = np.where(grid.years + grid.step / 2 > year, 0.0, -np.inf)
    values[grid.years == year] = 0.0
    return Likelihood("tpq", values, label, grid, {"year": year})


def terminus_ante_quem(grid: CalendarGrid, year: float, *, label: str = "") -> Likelihood:
    """Not later than ``year``: 0 up to ``year``, ``-inf`` after (a step function); see :func:`terminus_post_quem`."""
    year = _finite("year", year)
    values = np.where(grid.years - grid.step / 2 < year, 0.0, -np.inf)
    values[grid.years == year] = 0.0
    return Likelihood("taq", values, label, grid, {"year": year})


def normal_date(grid: CalendarGrid, mean: float, sd: float, *, label: str = "") -> Likelihood:
    """A calendar date ``mean ± sd`` (1σ) as a normal log-density on ``grid``.

    Raises
    ------
    EvidenceError
        ``invalid-evidence`` for ``sd <= 0``; ``evidence-outside-grid`` when
        ``mean ± 6 sd`` misses the grid.
    """
    mean, sd = _finite("mean", mean), _finite("sd", sd)
    if not sd > 0:
        raise EvidenceError("sd must be positive", code="invalid-evidence", details={"sd": sd})
    if mean + 6 * sd < grid.start or mean - 6 * sd > grid.end:
        raise EvidenceError(f"date {label!r} lies beyond the grid", code="evidence-outside-grid",
                            details={"mean": mean, "sd": sd, "grid": grid.as_dict()})
    z = (grid.years - mean) / sd
    values = -0.5 * z * z - math.log(sd) - 0.5 * math.log(2.0 * math.pi)
    return Likelihood("normal", values, label, grid, {"mean": mean, "sd": sd})


def uniform_date(grid: CalendarGrid, start: float, end: float, *, label: str = "") -> Likelihood:
    """A calendar date anywhere in ``[start, end]`` with equal weight (e.g. a coin's issue period).

    Raises
    ------
    EvidenceError
        ``invalid-evidence`` unless ``start < end``; ``evidence-outside-grid``
        when no grid year falls in the range.
    """
    start, end = _finite("start", start), _finite("end", end)
    if not end > start:
        raise EvidenceError("a uniform range needs start < end (use fixed_date for one year)",
                            code="invalid-evidence", details={"start": start, "end": end})
    years = grid.years
    values = np.where((years >= start) & (years <= end), -math.log(end - start), -np.inf)
    return Likelihood("uniform", values, label, grid, {"start": start, "end": end})


def fixed_date(grid: CalendarGrid, year: float, *, label: str = "") -> Likelihood:
    """A date known to the year: all weight on the grid year nearest ``year``."""
    year = _finite("year", year)
    i = int(round(grid.index_of(year)))
    if not 0 <= i < grid.n:
        raise EvidenceError(f"year {year} lies beyond the grid", code="evidence-outside-grid",
                            details={"year": year, "grid": grid.as_dict()})
    values = np.full(grid.n, -np.inf)
    values[i] = 0.0
    return Likelihood("fixed", values, label, grid, {"year": year})
