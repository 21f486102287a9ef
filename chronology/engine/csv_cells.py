"""CSV cells a spreadsheet will not run as formulas.

A spreadsheet opening a CSV file treats a cell beginning with ``=``, ``+``,
``-`` or ``@`` as a formula, and tab or carriage return at the start can hide
one; a record label such as ``=HYPERLINK("…")`` would then run on the reader's
machine. Every CSV the service writes passes its text cells through
:func:`neutralise`, which puts a single quote before such a cell, as the OWASP
advice on CSV injection recommends.

Decision on numbers: a cell that is a plain decimal number (``-12``,
``-0.5``, ``+3e-4``) is left as it is, in any column. A number is never a
formula, and rewriting it would turn the negative years, offsets and
coordinates of numeric columns into text. Anything else that starts with a
trigger character is neutralised, including text that only begins like a
number (``-1+2``).

References
----------
OWASP Foundation, "CSV Injection" (community page, owasp.org/www-community/attacks/CSV_Injection).
"""

from __future__ import annotations

import csv
import re

__all__ = ["TRIGGERS", "neutralise", "neutralise_row", "neutralise_fragments", "neutralise_reversibly", "restore", "SafeWriter"]

#: The characters a cell may not start with (OWASP, "CSV Injection").
TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def neutralise(value):
    """``value`` made safe to open in a spreadsheet; non-text values are returned unchanged.

    Examples
    --------
    >>> neutralise('=HYPERLINK("x")')
    '\\'=HYPERLINK("x")'
    >>> neutralise("-12.5")
    '-12.5'
    >>> neutralise("1001")
    '1001'
    """
    if not isinstance(value, str) or not value.startswith(TRIGGERS):
        return value
    if _PLAIN_NUMBER.fullmatch(value):
        return value
    return "'" + value


def neutralise_row(row):
    """Every cell of ``row`` through :func:`neutralise`."""
    return [neutralise(value) for value in row]


def neutralise_fragments(text: str) -> str:
    """A free-text line written outside the CSV quoting (a ``# name:`` comment) made safe.

    A spreadsheet splits such a line at its commas, so each fragment is a cell:
    a fragment whose first non-blank character is a trigger gets the quote.
    """
    pieces = text.split(",")
    out = []
    for piece in pieces:
        stripped = piece.lstrip(" ")
        lead = piece[: len(piece) - len(stripped)]
        out.append(lead + neutralise(stripped))
    return ",".join(out)


class SafeWriter:
    """A :func:`csv.writer` whose rows are neutralised (``writerow`` and ``writerows``)."""

    def __init__(self, stream, **kwargs):
        self._writer = csv.writer(stream, **kwargs)

    def writerow(self, row):
        return self._writer.writerow(neutralise_row(row))

    def writerows(self, rows):
        for row in rows:
            self.writerow(row)


def neutralise_reversibly(value):
    """Like :func:`neutralise`, for files that are also read back (archive packages).

    A cell that :func:`restore` would strip a quote from (one beginning with a
    quote followed by a trigger character or another quote) gets one more
    quote, so ``restore(neutralise_reversibly(v)) == v`` for every text ``v``.
    """
    if isinstance(value, str) and value.startswith("'") and value[1:].startswith((*TRIGGERS, "'")):
        return "'" + value
    return neutralise(value)


def restore(value):
    """The text a cell written by :func:`neutralise_reversibly` held."""
    if isinstance(value, str) and value.startswith("'") and value[1:].startswith((*TRIGGERS, "'")):
        return value[1:]
    return value
