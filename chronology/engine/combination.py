"""Combining several radiocarbon determinations on one sample (Ward & Wilson 1978).

Determinations on the same sample (the same death event) are combined before
calibration, so the curve error is counted once.  The error-weighted mean is
``ȳ = Σ(y_i/σ_i²) / Σ(1/σ_i²)`` with ``σ_ȳ = (Σ 1/σ_i²)^(−1/2)``; the
statistic ``T = Σ (y_i − ȳ)² / σ_i²`` follows χ² with ``n − 1`` degrees of
freedom when the determinations agree.  A failed test is reported with the
combined values still shown, and ``consistent`` False, so that callers flag
the set rather than silently combine it.

References
----------
Ward, G.K. & Wilson, S.R. 1978. Procedures for comparing and combining
    radiocarbon age determinations: a critique. Archaeometry 20(1): 19-31.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
from scipy import stats

from .errors import CalibrationError

__all__ = ["Combination", "combine_determinations"]


@dataclass(frozen=True, slots=True)
class Combination:
    """The weighted mean of ``n`` determinations and its consistency test.

    ``critical`` is the χ² quantile at ``1 − alpha`` for ``df`` degrees of
    freedom; ``consistent`` is ``T <= critical``.  ``verdict`` is a sentence
    for display.
    """

    mean: float
    sigma: float
    n: int
    statistic: float
    df: int
    alpha: float
    critical: float
    p_value: float
    consistent: bool
    verdict: str
    labels: tuple[str, ...] = ()

    def as_dict(self) -> dict:
        return {"mean": self.mean, "sigma": self.sigma, "n": self.n, "T": self.statistic,
                "df": self.df, "alpha": self.alpha, "critical": self.critical,
                "p_value": self.p_value, "consistent": self.consistent,
                "verdict": self.verdict, "labels": list(self.labels)}


def combine_determinations(ages: Sequence[float], sigmas: Sequence[float], *,
                           labels: Sequence[str] | None = None,
                           alpha: float = 0.05) -> Combination:
    """Weighted mean of determinations on one sample, with the χ² consistency test.

    Parameters
    ----------
    ages, sigmas : sequence of float
        At least two CRAs (or F14C values) and their 1σ errors (> 0).
    labels : sequence of str, optional
        Laboratory codes, echoed in the result and the verdict.
    alpha : float
        Significance level of the test (default 0.05).

    Returns
    -------
    Combination

    Raises
    ------
    CalibrationError
        ``invalid-combination`` for fewer than two determinations, a
        non-positive error or mismatched lengths.

    Examples
    --------
    >>> c = combine_determinations([2450, 2410], [30, 35])
    >>> round(c.mean), round(c.sigma), round(c.statistic, 2), c.consistent
    (2433, 23, 0.75, True)

    References
    ----------
    Ward, G.K. & Wilson, S.R. 1978. Archaeometry 20(1): 19-31.
    """
    y = np.asarray(ages, dtype=float)
    s = np.asarray(sigmas, dtype=float)
    labels = tuple(labels) if labels is not None else ()
    if y.ndim != 1 or y.shape != s.shape or y.size < 2:
        raise CalibrationError("combining needs at least two ages with one error each",
                               code="invalid-combination", details={"n": int(y.size)})
    if labels and len(labels) != y.size:
        raise CalibrationError("one label per determination", code="invalid-combination")
    if not (np.all(np.isfinite(y)) and np.all(np.isfinite(s)) and np.all(s > 0)):
        raise CalibrationError("ages must be finite and errors positive",
                               code="invalid-combination")
    if not 0.0 < alpha < 1.0:
        raise ValueError("alpha must lie in (0, 1)")
    w = 1.0 / (s * s)
    mean = float(np.sum(w * y) / np.sum(w))
    sigma = float(np.sum(w) ** -0.5)
    statistic = float(np.sum(w * (y - mean) ** 2))
    df = int(y.size - 1)
    critical = float(stats.chi2.ppf(1.0 - alpha, df))
    p_value = float(stats.chi2.sf(statistic, df))
    consistent = statistic <= critical
    which = ", ".join(labels) if labels else f"{y.size} determinations"
    if consistent:
        verdict = (f"{which}: consistent (T = {statistic:.2f} <= {critical:.2f}, "
                   f"χ² {df} df at {100 * alpha:g}%); combined {mean:.0f} ± {sigma:.0f} BP")
    else:
        verdict = (f"{which}: NOT consistent (T = {statistic:.2f} > {critical:.2f}, "
                   f"χ² {df} df at {100 * alpha:g}%); do not combine without review")
    return Combination(mean, sigma, int(y.size), statistic, df, float(alpha), critical,
                       p_value, bool(consistent), verdict, labels)
