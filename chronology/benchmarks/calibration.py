"""Benchmark: calibrate many determinations against a 55,000-year curve at 1-year steps.

Determinations are simulated through the labelled synthetic curve from true
dates spread over 100-50,000 cal BP, with errors growing with age, and are
calibrated with medians and 68.3% / 95.4% HPD ranges included.
"""

from __future__ import annotations

import time

import numpy as np

from chronology.engine.calibration import calibrate_many, curve_on_grid
from chronology.engine.synthetic_curve import synthetic_curve

__all__ = ["run"]


def _simulate(curve, count: int, seed: int):
    rng = np.random.default_rng(seed)
    cal_bp = rng.uniform(100.0, 50000.0, count)
    bp_axis = curve.grid.cal_bp[::-1]
    mu = np.interp(cal_bp, bp_axis, curve.mu[::-1])
    curve_var = np.interp(cal_bp, bp_axis, curve.variance[::-1])
    sigma = np.round(20.0 + 0.004 * mu + rng.uniform(0.0, 15.0, count))
    cra = np.round(mu + rng.standard_normal(count) * np.sqrt(sigma ** 2 + curve_var))
    return cra, sigma


def run(determinations: int = 10000, seed: int = 20241) -> dict:
    """Time the calibration of ``determinations`` simulated determinations.

    Returns
    -------
    dict
        ``{"suite": "calibration", "determinations": n, "seconds": s, "per_second": r}``;
        ``seconds`` covers interpolating the curve onto the grid and calibrating
        (densities, medians and HPD ranges), not simulating the inputs.
    """
    if determinations < 1:
        raise ValueError("determinations must be at least 1")
    curve = synthetic_curve(0.0, 55000.0, 5.0)
    cra, sigma = _simulate(curve_on_grid(curve), determinations, seed)
    start = time.perf_counter()
    on_grid = curve_on_grid(curve, step=1.0)
    results = calibrate_many(cra, sigma, on_grid)
    seconds = time.perf_counter() - start
    if len(results) != determinations or not all(r.hpd for r in results):
        raise RuntimeError("calibration returned incomplete results")
    return {
        "suite": "calibration",
        "determinations": int(determinations),
        "seconds": round(seconds, 4),
        "per_second": round(determinations / seconds, 1),
    }


if __name__ == "__main__":  # pragma: no cover
    print(run())
