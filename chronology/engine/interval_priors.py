"""Informative priors on the length of an interval between two events.

A phase's *duration* (its close minus its beginning) or the *gap* from a
phase's close to the next phase's beginning may carry a density ``f`` of
its own, which multiplies the boundary prior (:mod:`chronology.engine.priors`):

* ``uniform`` on ``[min, max]``;
* ``normal`` with ``mean`` and ``sd``;
* ``lognormal`` with ``median`` (``exp(mu)``) and ``sd_log`` (``sigma``).

An informative prior on phase parameters is the general treatment of Buck,
Cavanagh & Litton (1996), *Bayesian Approach to Interpreting Archaeological
Data*, Wiley (from memory); the three families are the textbook ones.  The
densities are normalised on the whole real line (the uniform on its
interval, the lognormal on ``d > 0``), so that :func:`interval_log_density`
can be checked against scipy; the constant does not matter to the sampler
and the marginal likelihood never needs it (the stepping-stone starts from
draws of the prior itself).

:func:`interval_log_density` is compiled by numba so the sampler kernel
evaluates it directly; it runs unchanged from Python.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from chronology.engine.errors import ModelError

__all__ = [
    "DISTRIBUTIONS",
    "INTERVAL_KINDS",
    "distribution_code",
    "check_parameters",
    "interval_log_density",
    "log_density_ceiling",
    "describe",
]

#: The families and their two parameters, in the order the flat arrays hold them.
DISTRIBUTIONS: dict[str, tuple[str, str]] = {
    "uniform": ("min", "max"),
    "normal": ("mean", "sd"),
    "lognormal": ("median", "sd_log"),
}
#: ``duration``: close minus beginning of a phase; ``gap``: next beginning minus close.
INTERVAL_KINDS = ("duration", "gap")

_CODES = {name: i for i, name in enumerate(DISTRIBUTIONS)}
#: Kernel code of the softened uniform the starting state is found with (not a prior a version can set):
#: flat on ``[min, max]`` with normal tails of scale ``SOFT_TAIL`` times the width outside.
SOFT_UNIFORM = 3
SOFT_TAIL = 0.05


def distribution_code(name: str) -> int:
    """The kernel's integer code of a distribution name (0 uniform, 1 normal, 2 lognormal)."""
    return _CODES[name]


def check_parameters(distribution: str, parameters) -> tuple[float, float]:
    """The two parameters of ``distribution`` as floats, after checking them.

    Parameters
    ----------
    distribution : str
        One of :data:`DISTRIBUTIONS`.
    parameters : mapping
        By name, e.g. ``{"min": 50, "max": 250}``.

    Returns
    -------
    (float, float)

    Raises
    ------
    ModelError
        ``invalid-input`` with ``details['parameter']`` naming the parameter.
    """
    if distribution not in DISTRIBUTIONS:
        raise ModelError(f"unknown interval distribution {distribution!r}", code="invalid-input",
                         details={"parameter": "distribution"})
    first, second = DISTRIBUTIONS[distribution]
    values = []
    for name in (first, second):
        v = parameters.get(name) if hasattr(parameters, "get") else None
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise ModelError(f"{distribution} prior: {name} must be a finite number", code="invalid-input",
                             details={"parameter": name})
        values.append(float(v))
    a, b = values
    bad = None
    if distribution == "uniform" and not (0.0 <= a < b):
        bad = (second if a >= 0 else first, "needs 0 <= min < max")
    elif distribution == "normal" and not b > 0:
        bad = (second, "sd must be positive")
    elif distribution == "lognormal" and not (a > 0 and b > 0):
        bad = (first if a <= 0 else second, "median and sd_log must be positive")
    if bad:
        raise ModelError(f"{distribution} prior: {bad[1]}", code="invalid-input", details={"parameter": bad[0]})
    return a, b


@njit(cache=True, nogil=True)
def interval_log_density(d, code, p1, p2):
    """Log density at length ``d`` of the family ``code`` with parameters ``p1, p2``.

    ``-inf`` outside the support (``[min, max]`` for the uniform, ``d > 0``
    for the lognormal).
    """
    # 0.9189385332046727 is log(2 pi) / 2
    if code == 0:
        if d < p1 or d > p2:
            return -np.inf
        return -np.log(p2 - p1)
    if code == 3:
        w = p2 - p1
        out = p1 - d if d < p1 else (d - p2 if d > p2 else 0.0)
        z = out / (0.05 * w)  # SOFT_TAIL
        return -np.log(w) - 0.5 * z * z
    if code == 1:
        z = (d - p1) / p2
        return -0.5 * z * z - np.log(p2) - 0.9189385332046727
    if d <= 0.0:
        return -np.inf
    z = (np.log(d) - np.log(p1)) / p2
    return -0.5 * z * z - np.log(d) - np.log(p2) - 0.9189385332046727


def log_density_ceiling(code: int, p1: float, p2: float, upper: float) -> float:
    """The largest log density on lengths ``[0, upper]`` (for rejection sampling against it).

    Each family is unimodal, so the maximum on the interval is at the mode
    clipped into it (the lognormal's mode is ``median * exp(-sd_log^2)``).
    """
    if code == 0:
        return float(interval_log_density(min(max(p1, 0.0), upper), code, p1, p2)) if p1 <= upper else -np.inf
    mode = p1 if code == 1 else p1 * math.exp(-p2 * p2)
    at = min(max(mode, 0.0), upper)
    if code == 2 and at <= 0.0:
        return -np.inf
    return float(interval_log_density(at, code, p1, p2))


def describe(distribution: str, a: float, b: float) -> str:
    """A short reading of the prior in words, e.g. ``uniform 50-250 years``."""
    if distribution == "uniform":
        return f"uniform {a:g}-{b:g} years"
    if distribution == "normal":
        return f"normal, mean {a:g}, sd {b:g} years"
    return f"lognormal, median {a:g} years, sd of log {b:g}"

