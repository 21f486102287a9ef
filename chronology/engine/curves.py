"""Calibration curves: parsing, validation, checksums and grid interpolation.

Curves are published as plain comma-separated tables, one row per calendar
age, with the columns *calendar age BP*, *radiocarbon age BP* and *one-sigma
error of the radiocarbon age*; further columns are kept but not used.  Lines
starting with ``#`` are comments anywhere; other non-numeric lines are
accepted as a header only before the first data row.  Comment lines of the
form ``# name: …``, ``# citation: …``, ``# licence: …`` and
``# synthetic: yes`` supply metadata when it is not given to the parser.

A curve is immutable reference data.  Its checksum is the SHA-256 of a
canonical text of its numbers only (calendar-age ascending, ``repr`` of each
float), so the same table gives the same checksum whatever its comments,
spacing, row order or label.

Interpolation onto a :class:`~chronology.engine.grid.CalendarGrid` is linear,
as is common practice for published curves at 5-year and coarser spacing.
"""

from __future__ import annotations

import hashlib
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .csv_cells import neutralise_fragments
from .errors import CalibrationError
from .grid import BP_ORIGIN, CalendarGrid

__all__ = [
    "Curve",
    "parse_curve",
    "load_curve",
    "curve_to_csv",
    "interpolate",
    "curve_grid",
]

_META = re.compile(r"^#\s*(name|citation|licence|license|synthetic)\s*:\s*(.*)$", re.I)
_MIN_ROWS = 2


@dataclass(frozen=True, eq=False)
class Curve:
    """A calibration curve: one row per calendar age.

    Attributes
    ----------
    name, citation, licence : str
        Identification of the curve and the terms it may be used under.
    cal_bp : ndarray
        Calendar ages BP, strictly increasing (stored youngest first).
    c14_bp : ndarray
        Radiocarbon age BP of the curve at each calendar age.
    sigma : ndarray
        One-sigma error of ``c14_bp``, all > 0.
    extra : tuple of ndarray
        Further columns of the table, in order, unused by the engine.
    synthetic : bool
        True for generated test curves that must not date real samples.
    checksum : str
        SHA-256 (hex) of the canonical numeric content; computed.
    """

    name: str
    citation: str
    licence: str
    cal_bp: np.ndarray
    c14_bp: np.ndarray
    sigma: np.ndarray
    extra: tuple = ()
    synthetic: bool = False
    checksum: str = field(init=False)

    def __post_init__(self):
        for attr in ("cal_bp", "c14_bp", "sigma"):
            arr = np.array(getattr(self, attr), dtype=float)
            arr.setflags(write=False)
            object.__setattr__(self, attr, arr)
        object.__setattr__(self, "checksum", _checksum(self.cal_bp, self.c14_bp, self.sigma))

    @property
    def n_rows(self) -> int:
        return int(self.cal_bp.size)

    @property
    def oldest_year(self) -> float:
        """Earliest astronomical year the curve covers."""
        return BP_ORIGIN - float(self.cal_bp[-1])

    @property
    def youngest_year(self) -> float:
        """Latest astronomical year the curve covers."""
        return BP_ORIGIN - float(self.cal_bp[0])

    def describe(self) -> dict:
        """Plain-data provenance of the curve, for run records."""
        return {
            "name": self.name,
            "citation": self.citation,
            "licence": self.licence,
            "synthetic": self.synthetic,
            "checksum": self.checksum,
            "rows": self.n_rows,
            "cal_bp_range": [float(self.cal_bp[0]), float(self.cal_bp[-1])],
        }


def _checksum(cal_bp, c14_bp, sigma) -> str:
    order = np.argsort(cal_bp, kind="stable")
    lines = ["cal_bp,c14_bp,sigma"]
    lines += [f"{float(a)!r},{float(b)!r},{float(c)!r}"
              for a, b, c in zip(cal_bp[order], c14_bp[order], sigma[order])]
    return hashlib.sha256(("\n".join(lines) + "\n").encode("ascii")).hexdigest()


def _fail(code: str, line: int | None, problem: str, **details) -> CalibrationError:
    where = f"line {line}: " if line is not None else ""
    return CalibrationError(f"curve table {where}{problem}", code=code,
                            details={"line": line, "problem": problem, **details})


def _split(text: str) -> list[str]:
    return [p.strip() for p in text.split(",")] if "," in text else text.split()


def _to_float(token: str) -> float | None:
    try:
        return float(token)
    except ValueError:
        return None


def _read_rows(text: str):
    """Yield (line_number, values) for data rows; collect metadata and header."""
    meta: dict[str, str] = {}
    rows: list[tuple[int, list[float]]] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line:
            continue
        if line.startswith("#"):
            m = _META.match(line)
            if m:
                key = "licence" if m.group(1).lower() == "license" else m.group(1).lower()
                meta.setdefault(key, m.group(2).strip())
            continue
        tokens = _split(line)
        values = [_to_float(t) for t in tokens]
        if values and values[0] is None and not rows:
            continue  # a column header before the data
        if len(tokens) < 3:
            raise _fail("curve-bad-row", number,
                        f"expected at least 3 columns (cal BP, 14C BP, sigma), found {len(tokens)}")
        bad = [i for i, v in enumerate(values) if v is None]
        if bad:
            col = bad[0] + 1
            raise _fail("curve-bad-row", number,
                        f"column {col} is not a number: {tokens[col - 1]!r}", column=col)
        if not all(math.isfinite(v) for v in values):
            raise _fail("curve-bad-row", number, "values must be finite numbers")
        rows.append((number, values))
    return meta, rows


def parse_curve(text: str, *, name: str | None = None, citation: str | None = None,
                licence: str | None = None, synthetic: bool | None = None,
                max_step: float | None = None, min_rows: int = _MIN_ROWS) -> Curve:
    """Parse and validate a calibration curve table.

    Parameters
    ----------
    text : str
        The table (see the module docstring for the layout).
    name, citation, licence : str, optional
        Metadata; taken from ``# name:`` etc. comment lines when not given.
    synthetic : bool, optional
        Marks a generated test curve; defaults to the ``# synthetic:`` comment
        or to the name containing ``SYNTHETIC``.
    max_step : float, optional
        Largest allowed gap in calendar age between neighbouring rows.
    min_rows : int
        Fewest data rows accepted (>= 2).

    Returns
    -------
    Curve

    Raises
    ------
    CalibrationError
        With ``details["line"]`` (1-based line of the table, or None) and
        ``details["problem"]``; codes ``curve-bad-row`` (too few columns, a
        non-number), ``curve-not-monotonic`` (calendar ages not strictly
        increasing or decreasing), ``curve-bad-sigma`` (sigma <= 0),
        ``curve-gap`` (step > ``max_step``), ``curve-too-short``,
        ``curve-no-name``.
    """
    if min_rows < 2:
        raise ValueError("min_rows must be at least 2")
    if max_step is not None and not max_step > 0:
        raise ValueError("max_step must be positive")
    meta, rows = _read_rows(text)
    if len(rows) < min_rows:
        raise _fail("curve-too-short", None, f"{len(rows)} data rows, at least {min_rows} needed",
                    rows=len(rows))
    lines = [n for n, _ in rows]
    width = min(len(v) for _, v in rows)
    data = np.array([v[:width] for _, v in rows], dtype=float)
    _check_rows(data, lines, max_step)
    if data[0, 0] > data[-1, 0]:
        data = data[::-1]  # store youngest first
    name = name or meta.get("name")
    if not name:
        raise _fail("curve-no-name", None, "the curve has no name (give one or a '# name:' line)")
    if synthetic is None:
        flag = meta.get("synthetic", "").lower() in {"yes", "true", "1"}
        synthetic = flag or "SYNTHETIC" in name.upper()
    return Curve(
        name=name,
        citation=citation or meta.get("citation", ""),
        licence=licence or meta.get("licence", ""),
        cal_bp=data[:, 0], c14_bp=data[:, 1], sigma=data[:, 2],
        extra=tuple(data[:, j].copy() for j in range(3, width)),
        synthetic=bool(synthetic),
    )


def _check_rows(data: np.ndarray, lines: list[int], max_step: float | None) -> None:
    sig = data[:, 2]
    bad = np.flatnonzero(sig <= 0)
    if bad.size:
        i = int(bad[0])
        raise _fail("curve-bad-sigma", lines[i], f"sigma must be positive, found {sig[i]!r}")
    steps = np.diff(data[:, 0])
    direction = 1.0 if steps[0] > 0 else -1.0
    wrong = np.flatnonzero(steps * direction <= 0)
    if wrong.size:
        i = int(wrong[0]) + 1
        trend = "increasing" if direction > 0 else "decreasing"
        raise _fail("curve-not-monotonic", lines[i],
                    f"calendar age {data[i, 0]!r} breaks the strictly {trend} order "
                    f"after {data[i - 1, 0]!r}")
    if max_step is not None:
        gaps = np.flatnonzero(np.abs(steps) > max_step)
        if gaps.size:
            i = int(gaps[0]) + 1
            raise _fail("curve-gap", lines[i],
                        f"gap of {abs(steps[i - 1])!r} years after {data[i - 1, 0]!r} "
                        f"exceeds the maximum step {max_step!r}", gap=float(abs(steps[i - 1])))


def load_curve(path: str | Path, **options) -> Curve:
    """Read a curve table from a file; see :func:`parse_curve` for ``options``."""
    return parse_curve(Path(path).read_text(encoding="utf-8"), **options)


def curve_to_csv(curve: Curve) -> str:
    """Write ``curve`` as a table :func:`parse_curve` reads back to the same checksum.

    Rows run oldest first, as published tables commonly do; floats are written
    with ``repr`` so that they read back exactly.
    """
    # The comment lines are free text a spreadsheet splits at commas: no fragment may start a formula.
    out = [neutralise_fragments(f"# {key}: {value}")
           for key, value in (("name", curve.name), ("citation", curve.citation), ("licence", curve.licence))]
    if curve.synthetic:
        out.append("# synthetic: yes")
        out.append("# SYNTHETIC curve: not for dating real samples")
    extra_names = [f"column_{j + 4}" for j in range(len(curve.extra))]
    out.append(",".join(["cal_bp", "c14_bp", "sigma", *extra_names]))
    cols = [curve.cal_bp, curve.c14_bp, curve.sigma, *curve.extra]
    for i in range(curve.n_rows - 1, -1, -1):
        out.append(",".join(repr(float(c[i])) for c in cols))
    return "\n".join(out) + "\n"


def curve_grid(curve: Curve, step: float = 1.0) -> CalendarGrid:
    """The regular grid covering the whole curve at ``step`` years (default 1)."""
    first = curve.oldest_year
    n = int(math.floor((curve.youngest_year - first) / step + 1e-9)) + 1
    return CalendarGrid(first, float(step), n)


def interpolate(curve: Curve, grid: CalendarGrid | None = None, *, step: float = 1.0,
                outside: str = "error"):
    """The curve's mean and one-sigma on a calendar grid, by linear interpolation.

    Parameters
    ----------
    curve : Curve
    grid : CalendarGrid, optional
        Astronomical years, any step; by default the whole curve at ``step``.
    step : float
        Grid spacing in years when no grid is given (default 1).
    outside : {"error", "nan"}
        What to do where the grid runs beyond the curve.

    Returns
    -------
    mu, sigma : ndarray
        Radiocarbon age BP and its error at each grid year.

    Raises
    ------
    CalibrationError
        ``grid-outside-curve`` when the grid extends beyond the curve and
        ``outside="error"``.
    """
    if outside not in ("error", "nan"):
        raise ValueError("outside must be 'error' or 'nan'")
    if grid is None:
        grid = curve_grid(curve, step)
    cal_bp = grid.cal_bp
    lo, hi = float(curve.cal_bp[0]), float(curve.cal_bp[-1])
    beyond = (cal_bp < lo - 1e-9) | (cal_bp > hi + 1e-9)
    if outside == "error" and beyond.any():
        raise CalibrationError(
            f"grid {grid.start}..{grid.end} runs beyond curve {curve.name!r} "
            f"({curve.oldest_year}..{curve.youngest_year})",
            code="grid-outside-curve", details={"grid": grid.as_dict(), "curve": curve.name})
    mu = np.interp(cal_bp, curve.cal_bp, curve.c14_bp)
    sigma = np.interp(cal_bp, curve.cal_bp, curve.sigma)
    if beyond.any():
        mu[beyond] = np.nan
        sigma[beyond] = np.nan
    return mu, sigma
