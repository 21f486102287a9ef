"""Random numbers inside the kernel: xoshiro256** (Blackman & Vigna 2021).

The state is four uint64 values owned by one chain, so the same seed gives the
same draws whatever thread runs the chain.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["uniform", "standard_normal"]


@njit(cache=True, nogil=True)
def _rotl(x, k):
    return (x << np.uint64(k)) | (x >> np.uint64(64 - k))


@njit(cache=True, nogil=True)
def uniform(s):
    result = _rotl(s[1] * np.uint64(5), 7) * np.uint64(9)
    t = s[1] << np.uint64(17)
    s[2] ^= s[0]
    s[3] ^= s[1]
    s[1] ^= s[2]
    s[0] ^= s[3]
    s[2] ^= t
    s[3] = _rotl(s[3], 45)
    # 53 random bits, shifted half a unit so the value is never 0 or 1
    return (float(result >> np.uint64(11)) + 0.5) * (1.0 / 9007199254740992.0)



@njit(cache=True, nogil=True)
def standard_normal(s):
    """One standard normal draw by the Box-Muller transform (Box & Muller 1958)."""
    return np.sqrt(-2.0 * np.log(uniform(s))) * np.cos(2.0 * np.pi * uniform(s))
