"""Conversions between F14C and the conventional radiocarbon age (CRA).

Conventions of Stuiver & Polach (1977): ages use the Libby half-life of 5568
years, are normalised to a δ13C of −25 ‰, and count years before AD 1950
("BP").  The age is ``CRA = −τ ln F14C`` with the Libby mean life
``τ = 5568 / ln 2`` (≈ 8033, the value usually quoted), and its error is
``σ_CRA = τ σ_F / F``.  F14C, the fraction of modern carbon, is defined in
Reimer, Brown & Reimer (2004); samples formed after the atmospheric weapons
tests have F14C > 1 and therefore a negative CRA, which is why F14C is the
quantity to store and the CRA is derived.

References
----------
Stuiver, M. & Polach, H.A. 1977. Discussion: reporting of 14C data.
    Radiocarbon 19(3): 355-363.
Reimer, P.J., Brown, T.A. & Reimer, R.W. 2004. Discussion: reporting and
    calibration of post-bomb 14C data. Radiocarbon 46(3): 1299-1304.
"""

from __future__ import annotations

import math

import numpy as np

from .errors import CalibrationError

__all__ = [
    "LIBBY_HALF_LIFE",
    "LIBBY_MEAN_LIFE",
    "cra_from_f14c",
    "f14c_from_cra",
]

#: Libby half-life of radiocarbon in years, kept by convention (Stuiver & Polach 1977).
LIBBY_HALF_LIFE = 5568.0

#: Libby mean life ``5568 / ln 2`` ≈ 8032.9 years; quoted as 8033 when rounded.
LIBBY_MEAN_LIFE = LIBBY_HALF_LIFE / math.log(2.0)


def _as_array(value, name: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)):
        raise CalibrationError(f"{name} must be finite", code="invalid-measurement",
                               details={"field": name})
    return arr


def _unwrap(arr: np.ndarray):
    # Scalars in, scalars out; arrays in, arrays out.
    return float(arr) if arr.ndim == 0 else arr


def cra_from_f14c(f14c, sigma_f14c=0.0):
    """Conventional radiocarbon age from F14C.

    Parameters
    ----------
    f14c : float or array_like
        Fraction modern, > 0 (Reimer, Brown & Reimer 2004).
    sigma_f14c : float or array_like, optional
        One-sigma error of ``f14c``, >= 0.

    Returns
    -------
    cra, sigma_cra : float or ndarray
        Age in 14C years BP and its one-sigma error.  F14C > 1 gives a
        negative age (a post-bomb sample).

    Raises
    ------
    CalibrationError
        ``invalid-measurement`` for a non-positive F14C or a negative error.

    Examples
    --------
    >>> round(cra_from_f14c(0.5)[0], 6)
    5568.0

    Notes
    -----
    ``CRA = −τ ln F``, ``σ_CRA = τ σ_F / F`` with ``τ = 5568 / ln 2``; the
    error is the first-order propagation of ``σ_F``.

    References
    ----------
    Stuiver, M. & Polach, H.A. 1977. Radiocarbon 19(3): 355-363.
    """
    f = _as_array(f14c, "f14c")
    s = _as_array(sigma_f14c, "sigma_f14c")
    if np.any(f <= 0):
        raise CalibrationError("F14C must be positive", code="invalid-measurement",
                               details={"field": "f14c"})
    if np.any(s < 0):
        raise CalibrationError("the F14C error must not be negative",
                               code="invalid-measurement", details={"field": "sigma_f14c"})
    cra = -LIBBY_MEAN_LIFE * np.log(f)
    sigma = LIBBY_MEAN_LIFE * s / f
    cra, sigma = np.broadcast_arrays(cra, sigma)
    return _unwrap(cra.copy()), _unwrap(sigma.copy())


def f14c_from_cra(cra, sigma_cra=0.0):
    """F14C from a conventional radiocarbon age; the inverse of :func:`cra_from_f14c`.

    Parameters
    ----------
    cra : float or array_like
        Age in 14C years BP (negative for post-bomb samples).
    sigma_cra : float or array_like, optional
        One-sigma error of the age, >= 0.

    Returns
    -------
    f14c, sigma_f14c : float or ndarray
        ``F = exp(−CRA / τ)`` and ``σ_F = F σ_CRA / τ``.

    References
    ----------
    Stuiver, M. & Polach, H.A. 1977. Radiocarbon 19(3): 355-363.
    Reimer, P.J., Brown, T.A. & Reimer, R.W. 2004. Radiocarbon 46(3): 1299-1304.
    """
    age = _as_array(cra, "cra")
    s = _as_array(sigma_cra, "sigma_cra")
    if np.any(s < 0):
        raise CalibrationError("the age error must not be negative",
                               code="invalid-measurement", details={"field": "sigma_cra"})
    f = np.exp(-age / LIBBY_MEAN_LIFE)
    f, sigma = np.broadcast_arrays(f, f * s / LIBBY_MEAN_LIFE)
    return _unwrap(f.copy()), _unwrap(sigma.copy())
