"""Benchmark of simulation-based calibration (Talts et al. 2018) on a three-phase model.

Three phases in sequence with four members each, range 1000 years, the
synthetic curve, 25-year errors; each replicate is one chain keeping 99 draws
thinned by 10 after 500 warm-up sweeps.  Prints exactly ``{"suite": "calibration-check",
"replicates", "seconds", "parameters": [{"name", "p_value"}]}``: the
chi-square p-value of the rank histogram (5 bins) of every boundary and
member; ``seconds`` is the whole check after the kernel is compiled (or
loaded from its cache).  Correctness is
asserted by ``tests/engine/test_calibration_check.py``; this reports time.
"""

from __future__ import annotations

import time

from chronology.engine.calibration_check import SiteDesign, calibration_check
from chronology.engine.sampler import warm_up
from chronology.engine.synthetic_curve import synthetic_curve

__all__ = ["run", "QUICK"]

QUICK = {"replicates": 20}


def run(*, replicates: int = 200, entropy: int = 2018) -> dict:
    """``{"suite": "calibration-check", "replicates", "seconds", "parameters": [{"name", "p_value"}]}``."""
    warm_up()
    t0 = time.perf_counter()
    result = calibration_check(SiteDesign((4, 4, 4), "sequential"), replicates=replicates, curve=synthetic_curve(),
                               entropy=entropy)
    return {
        "suite": "calibration-check",
        "replicates": result.replicates,
        "seconds": round(time.perf_counter() - t0, 2),
        "parameters": [{"name": k, "p_value": round(float(p), 4)} for k, p in result.p_values.items()],
    }
