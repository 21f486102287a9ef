"""Reporting conventions for radiocarbon results (Millard 2014).

Calibrated ranges are quoted rounded outwards: to 5 years when the
determination's error is under 25 years, otherwise to 10 years (the rule
from memory of Millard 2014).  Rounding acts on the printed cal BC / cal AD
numbers (:func:`~chronology.engine.calendar_scales.round_range_outward`).

References
----------
Millard, A.R. 2014. Conventions for reporting radiocarbon determinations.
    Radiocarbon 56(2): 555-559.
"""

from __future__ import annotations

from .calendar_scales import format_range, round_range_outward

__all__ = ["rounding_resolution", "reported_range"]


def rounding_resolution(sigma: float) -> int:
    """Years to round a calibrated range to: 5 when the error is under 25 years, else 10."""
    if not sigma >= 0:
        raise ValueError("the error must be a non-negative number of years")
    return 5 if sigma < 25 else 10


def reported_range(start: float, end: float, sigma: float) -> str:
    """A calibrated range as reported: rounded outwards by :func:`rounding_resolution`, as cal BC/AD text.

    Examples
    --------
    >>> reported_range(-351.0, -297.0, 30)
    '360–290 cal BC'
    """
    lo, hi = round_range_outward(start, end, rounding_resolution(sigma))
    return format_range(lo, hi)
