"""Plain-words labels for outputs: lists of labels and probabilities.

Outputs name things as their readers know them: contexts by label,
determinations by lab code.  A list that is cut says how many items are left
out; probabilities that the Monte Carlo error cannot tell from 0 or 1 are
written as bounds ("> 0.999"), never as "1.000" with an error of 0.
"""

from __future__ import annotations

import math
from typing import Iterable, Sequence

__all__ = ["label_list", "number_words", "format_probability", "sort_labels"]

_WORDS = ("no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten", "eleven", "twelve")


def number_words(n: int) -> str:
    """Small counts in words ("two"), larger ones in digits ("17"), as prose style asks (common practice)."""
    return _WORDS[n] if 0 <= n < len(_WORDS) else str(n)


def sort_labels(labels: Iterable[str]) -> list[str]:
    """Labels in reading order: shorter first, then alphabetically (so "998" comes before "1013")."""
    return sorted({str(x) for x in labels}, key=lambda s: (len(s), s))


def label_list(labels: Sequence[str], *, limit: int | None = None, sort: bool = True, rest: str = "") -> str:
    """Join labels as prose: "1013", "1013 and 2013", "1013, 2013 and 2014".

    With ``limit``, a longer list shows its first ``limit - 1`` labels and says
    how many more there are ("1013, 2013 and two more"); ``rest`` names where
    the full list is (", listed in the model summary").

    Examples
    --------
    >>> label_list(["2013", "1013"])
    '1013 and 2013'
    >>> label_list(["1013", "2013", "2014", "2015"], limit=3)
    '1013, 2013 and two more'
    """
    items = sort_labels(labels) if sort else [str(x) for x in labels]
    if limit is not None and limit < 2:
        raise ValueError("limit must be at least 2")
    if not items:
        return ""
    if limit is not None and len(items) > limit:
        shown, more = items[:limit - 1], len(items) - (limit - 1)
        return f"{', '.join(shown)} and {number_words(more)} more{rest}"
    if len(items) == 1:
        return items[0]
    return f"{', '.join(items[:-1])} and {items[-1]}"


def format_probability(p: float | None, *, digits: int = 3) -> str:
    """A probability to ``digits`` places, or a bound where the draws cannot tell it from 0 or 1.

    A value that would print as 1.000 (or 0.000) is written "> 0.999" (or
    "< 0.001"): every draw, or all but a few, fell one way, so the draws show
    only that the probability lies beyond the last printed digit; its Monte
    Carlo error is then meaningless (an estimate of 1 has an error of 0).

    Examples
    --------
    >>> format_probability(1.0)
    '> 0.999'
    >>> format_probability(0.4567)
    '0.457'
    """
    if p is None or not math.isfinite(p):
        return "not available"
    step = 10.0 ** -digits
    if p > 1.0 - step / 2:
        return f"> {1.0 - step:.{digits}f}"
    if p < step / 2:
        return f"< {step:.{digits}f}"
    return f"{p:.{digits}f}"
