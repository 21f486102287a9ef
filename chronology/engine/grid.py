"""The calendar grid on which every likelihood and density is evaluated.

Years are astronomical (1 BC = 0, 2 BC = -1) and increase toward the present,
so ``t = 1950 - calBP``.  A grid is regular: ``years = start + step * arange(n)``.
Likelihoods and densities on a grid are 1-D numpy arrays of length ``n``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CalendarGrid", "BP_ORIGIN"]

#: Calendar year (AD) of the zero of the BP scale (Stuiver & Polach 1977).
BP_ORIGIN = 1950


@dataclass(frozen=True, slots=True)
class CalendarGrid:
    """A regular grid of astronomical calendar years.

    Parameters
    ----------
    start : float
        The earliest year on the grid (astronomical numbering).
    step : float
        Spacing in years, > 0.
    n : int
        Number of points, >= 2.
    """

    start: float
    step: float
    n: int

    def __post_init__(self):
        if not self.step > 0:
            raise ValueError("grid step must be positive")
        if self.n < 2:
            raise ValueError("a grid needs at least two points")

    @classmethod
    def spanning(cls, first: float, last: float, step: float = 1.0) -> "CalendarGrid":
        """The grid from ``first`` to at least ``last`` (astronomical years)."""
        if not last > first:
            raise ValueError("last must be later than first")
        n = int(np.ceil((last - first) / step - 1e-9)) + 1
        return cls(float(first), float(step), max(n, 2))

    @property
    def years(self) -> np.ndarray:
        return self.start + self.step * np.arange(self.n, dtype=float)

    @property
    def end(self) -> float:
        return self.start + self.step * (self.n - 1)

    @property
    def cal_bp(self) -> np.ndarray:
        return BP_ORIGIN - self.years

    def index_of(self, year: float) -> float:
        """Fractional index of ``year`` on the grid (may fall outside ``[0, n-1]``)."""
        return (year - self.start) / self.step

    def as_dict(self) -> dict:
        return {"start": self.start, "step": self.step, "n": self.n}
