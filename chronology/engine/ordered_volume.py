"""Volume of ordered beginnings under caps: the normaliser of overlapping phases' prior.

Overlapping phases (or chains of linked phases) whose beginnings are asserted
in order each have a span ``S_j`` and so a room ``a_j = R - S_j`` for their
beginning ``y_j`` (measured from ``L``).  The set of admissible beginnings is

    ``{0 <= y_1 <= y_2 <= ... <= y_m,  y_j <= a_j}``

and, since ``y_j <= y_k <= a_k`` for every ``k >= j``, it is the same as the
set with non-decreasing caps ``c_j = min_{k >= j} a_k``.  Its volume is
Steck's (1971) determinant ``det[c_i^(j-i+1) / (j-i+1)!]`` (entries ``1`` on
the subdiagonal, ``0`` below it).  The matrix is upper Hessenberg with unit
subdiagonal, so expanding along the last column gives the recursion

    ``V_0 = 1,  V_k = sum_{i=1..k} (-1)^(k-i) c_i^(k-i+1) / (k-i+1)! V_(i-1)``

which :func:`log_ordered_volume` evaluates in ``O(m^2)`` on caps scaled to
``[0, 1]`` (so the alternating sum stays well conditioned for the handful of
phases a site has).  With one phase the volume is ``a_1 = R - S_1``, the
one-phase factor of Nicholls & Jones (2001).

References
----------
Steck, G. P. (1971). Rectangle probabilities for uniform order statistics and
the probability that the empirical distribution function lies between two
distribution functions. *Annals of Mathematical Statistics* 42(1), 1-11.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["log_ordered_volume", "log_ordered_volume_of_rooms"]


@njit(cache=True, nogil=True)
def log_ordered_volume(rooms, scale):
    """Log volume of ``{0 <= y_1 <= ... <= y_m, y_j <= rooms[j]}``; ``-inf`` if empty.

    Parameters
    ----------
    rooms : numpy.ndarray
        ``a_j`` in the order of the asserted beginnings (any positive values).
    scale : float
        A positive length (the overall range width) the caps are divided by
        before the recursion; the result is in the caller's units.

    Returns
    -------
    float
    """
    m = rooms.shape[0]
    c = np.empty(m)
    low = np.inf
    for j in range(m - 1, -1, -1):
        if rooms[j] < low:
            low = rooms[j]
        if not (low > 0.0):
            return -np.inf
        c[j] = low / scale
    v = np.empty(m + 1)
    v[0] = 1.0
    for k in range(1, m + 1):
        total = 0.0
        for i in range(1, k + 1):
            d = k - i + 1
            term = 1.0
            for r in range(1, d + 1):
                term *= c[i - 1] / r
            if (k - i) % 2 == 1:
                term = -term
            total += term * v[i - 1]
        v[k] = total
    if not (v[m] > 0.0):
        return -np.inf
    return np.log(v[m]) + m * np.log(scale)


def log_ordered_volume_of_rooms(rooms, scale: float | None = None) -> float:
    """:func:`log_ordered_volume` for a Python sequence (``scale`` defaults to the largest room)."""
    a = np.asarray(rooms, dtype=float)
    if a.size == 0:
        return 0.0
    s = float(scale) if scale else float(max(np.max(a), 1e-300))
    return float(log_ordered_volume(a, s))
