"""Calendar scales: astronomical years, cal BC/AD and cal BP.

The engine computes in astronomical years ``t`` (1 BC = 0, 2 BC = −1), which
increase toward the present and have a year 0, so differences are plain
subtraction.  The historical BC/AD scale has **no year 0**: 1 BC is followed
by AD 1.  Hence ``t = y`` for AD y and ``t = 1 − y`` for y BC, and
``cal BP = 1950 − t`` (Stuiver & Polach 1977), so 500 BC is 2449 cal BP.

A grid value ``t`` is the middle of its cell ``[t − step/2, t + step/2)``
(the convention of ``model.py``); at a 1-year step it stands for the year
numbered ``t``.  Labels round a fractional ``t`` to the nearest whole year.
Conversions are for display only: store ``t``.
"""

from __future__ import annotations

import math

from .grid import BP_ORIGIN

__all__ = [
    "to_bc_ad",
    "from_bc_ad",
    "to_cal_bp",
    "from_cal_bp",
    "format_year",
    "format_range",
    "round_range_outward",
]

_ERAS = ("BC", "AD")


def _whole_year(t: float) -> int:
    if not math.isfinite(t):
        raise ValueError("year must be finite")
    # Round half up, so that labels do not flicker between neighbouring years.
    return int(math.floor(t + 0.5))


def to_bc_ad(t: float) -> tuple[int, str]:
    """Astronomical year to ``(year, era)`` on the BC/AD scale.

    Parameters
    ----------
    t : float
        Astronomical year; fractions round to the nearest whole year.

    Returns
    -------
    (int, str)
        A positive year number and ``"BC"`` or ``"AD"``.

    Examples
    --------
    >>> to_bc_ad(0)
    (1, 'BC')
    >>> to_bc_ad(1)
    (1, 'AD')
    """
    year = _whole_year(t)
    return (year, "AD") if year >= 1 else (1 - year, "BC")


def from_bc_ad(year: int, era: str) -> int:
    """``(year, era)`` on the BC/AD scale to an astronomical year.

    Raises
    ------
    ValueError
        For year 0 (which does not exist on this scale), a negative year, or an
        era other than ``"BC"`` / ``"AD"``.
    """
    era = era.strip().upper()
    if era not in _ERAS:
        raise ValueError(f"era must be BC or AD, not {era!r}")
    if int(year) != year or year < 1:
        raise ValueError("BC/AD years are whole numbers from 1; there is no year 0")
    return int(year) if era == "AD" else 1 - int(year)


def to_cal_bp(t):
    """Astronomical year(s) to cal BP (years before AD 1950)."""
    return BP_ORIGIN - t


def from_cal_bp(cal_bp):
    """cal BP to astronomical year(s)."""
    return BP_ORIGIN - cal_bp


def format_year(t: float, scale: str = "bc-ad") -> str:
    """A calibrated year as text: ``"352 cal BC"``, ``"cal AD 41"`` or ``"2301 cal BP"``.

    Parameters
    ----------
    t : float
        Astronomical year.
    scale : {"bc-ad", "bp"}
        Which calendar scale to write.
    """
    if scale == "bp":
        return f"{_whole_year(to_cal_bp(t))} cal BP"
    if scale != "bc-ad":
        raise ValueError("scale must be 'bc-ad' or 'bp'")
    year, era = to_bc_ad(t)
    return f"{year} cal BC" if era == "BC" else f"cal AD {year}"


def format_range(start: float, end: float, scale: str = "bc-ad") -> str:
    """A calendar range as text, earliest first: ``"352–297 cal BC"``,
    ``"cal AD 41–120"`` or ``"40 cal BC – cal AD 15"``; a range within one
    year is that year, written once (``"cal AD 118"``)."""
    if end < start:
        start, end = end, start
    if _whole_year(start) == _whole_year(end):
        return format_year(start, scale)
    if scale == "bp":
        return f"{_whole_year(to_cal_bp(start))}–{_whole_year(to_cal_bp(end))} cal BP"
    (y0, e0), (y1, e1) = to_bc_ad(start), to_bc_ad(end)
    if e0 == e1 == "BC":
        return f"{y0}–{y1} cal BC"
    if e0 == e1 == "AD":
        return f"cal AD {y0}–{y1}"
    return f"{format_year(start)} – {format_year(end)}"


def round_range_outward(start: float, end: float, resolution: int = 10) -> tuple[int, int]:
    """Round a range outward to a multiple of ``resolution`` on the BC/AD labels.

    For display only.  Rounding happens on the printed year numbers, so 352 BC
    becomes 360 BC (not 361 BC, as rounding astronomical years would give).
    Millard (2014) recommends 10 years, or 5 when the error is under 25
    (from memory).

    Returns
    -------
    (int, int)
        Astronomical years of the rounded start and end.

    References
    ----------
    Millard, A.R. 2014. Conventions for reporting radiocarbon determinations.
        Radiocarbon 56(2): 555-559.
    """
    if resolution < 1 or int(resolution) != resolution:
        raise ValueError("resolution must be a positive whole number of years")
    if end < start:
        raise ValueError("start must not be later than end")
    return (_round_label(start, resolution, earlier=True),
            _round_label(end, resolution, earlier=False))


def _round_label(t: float, res: int, *, earlier: bool) -> int:
    year, era = to_bc_ad(t)
    # Earlier means a larger BC number or a smaller AD number.
    grow = (era == "BC") == earlier
    rounded = math.ceil(year / res) * res if grow else math.floor(year / res) * res
    if rounded < 1:
        # Rounding an AD year down past AD 1 crosses into BC (or vice versa).
        return 1 - res if era == "AD" else res
    return from_bc_ad(rounded, era)
