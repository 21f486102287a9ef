"""Does the posterior press against the overall range ``[L, U]``?

Every boundary and event of a model lies inside the overall range, so the
range is part of the prior.  When the data would put an event beyond it, the
posterior piles up at ``L`` or ``U`` and the reported ranges are cut there:
the range, not the evidence, decides them.  :func:`range_pressure` flags each
event with more than :data:`PRESSING_SHARE` of its draws within
:data:`EDGE_FRACTION` of the range's width of either end (common practice:
a check of the draws against the prior's support, no published threshold).
"""

from __future__ import annotations

import numpy as np

__all__ = ["EDGE_FRACTION", "PRESSING_SHARE", "RANGE_WARNING", "range_pressure"]

#: Width of the band at each end of the range, as a fraction of its width.
EDGE_FRACTION = 0.01
#: Share of an event's draws in that band above which the range presses on it.
PRESSING_SHARE = 0.01

RANGE_WARNING = (
    "The posterior presses against the overall range: some events have draws piled at its end, so the range, "
    "not the evidence, cuts their ranges there. Widen the version's overall range and run again."
)


def range_pressure(draws: np.ndarray, event_keys, lo: float, hi: float, *, edge_fraction: float = EDGE_FRACTION,
                   share: float = PRESSING_SHARE) -> list[dict]:
    """Events whose draws crowd an end of ``[lo, hi]``.

    Parameters
    ----------
    draws : numpy.ndarray
        ``(n_draws, n_events)`` draws in model order.
    event_keys : sequence of str
    lo, hi : float
        The overall range.
    edge_fraction, share : float
        Band width (fraction of ``hi - lo``) and the share of draws in it that counts as pressing.

    Returns
    -------
    list of dict
        ``{"event", "end" ("earliest" or "latest"), "share"}``, one per event and end pressed.
    """
    x = np.asarray(draws, dtype=float)
    if x.ndim != 2 or x.shape[1] != len(event_keys):
        raise ValueError("draws must be (n_draws, n_events)")
    if not hi > lo or x.shape[0] == 0:
        return []
    band = edge_fraction * (hi - lo)
    low = np.mean(x <= lo + band, axis=0)
    high = np.mean(x >= hi - band, axis=0)
    out = []
    for k, key in enumerate(event_keys):
        if low[k] > share:
            out.append({"event": key, "end": "earliest", "share": round(float(low[k]), 4)})
        if high[k] > share:
            out.append({"event": key, "end": "latest", "share": round(float(high[k]), 4)})
    return out
