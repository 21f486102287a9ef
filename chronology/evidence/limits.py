"""Bounds on the work one calibration request or one curve import may ask for.

Every number here comes from a setting with an inline default, and each check
raises ``RecordInvalid`` naming the field, the reason and the limit, so the
API answers 400 with its error body instead of growing a worker's memory:

* grid steps come from a fixed set (``TELLSTACK_CALIBRATION_STEPS``), so the
  interpolated curves kept per process cannot multiply with arbitrary floats;
* a grid holds at most ``TELLSTACK_MAX_GRID_POINTS`` years;
* one-sigma errors are at most ``TELLSTACK_MAX_ERROR_YEARS`` and reservoir
  offsets at most ``TELLSTACK_MAX_OFFSET_YEARS`` in size;
* an imported curve spans at most ``TELLSTACK_CURVE_MAX_SPAN_YEARS`` with at
  most ``TELLSTACK_CURVE_MAX_ROWS`` rows and no gap between rows (nor a
  ``max_step``) above ``TELLSTACK_CURVE_MAX_GAP_YEARS``;
* a calibration of more than ``TELLSTACK_CALIBRATE_INLINE_VALUES``
  determinations runs as a job; more than ``TELLSTACK_CALIBRATE_MAX_VALUES``
  are refused, as is a job whose densities would exceed
  ``TELLSTACK_CALIBRATE_MAX_DENSITY_CELLS`` values.

The defaults are common practice, not taken from a source: published curves
cover about the last 55,000 years at 5- to 20-year spacing, and radiocarbon
errors are tens to a few hundred years.
"""

from __future__ import annotations

import math

from django.conf import settings

from projects.record.errors import RecordInvalid

__all__ = [
    "allowed_steps",
    "grid_step",
    "check_grid_points",
    "check_error",
    "check_offset",
    "check_curve_extent",
    "check_curve_max_step",
    "inline_values",
    "check_value_count",
    "check_density_cells",
]

_DEFAULT_STEPS = (0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0)


def _setting(name: str, default):
    return getattr(settings, name, default)


def allowed_steps() -> tuple[float, ...]:
    """The grid steps (years) a calibration may use."""
    return tuple(float(s) for s in _setting("TELLSTACK_CALIBRATION_STEPS", _DEFAULT_STEPS))


def grid_step(value, field: str = "step") -> float | None:
    """``value`` as a grid step from the allowed set; ``None`` for the default.

    Raises ``RecordInvalid`` (``invalid-number`` or ``step-not-allowed``, with the allowed steps).
    """
    if value is None or value == "":
        return None
    if isinstance(value, bool):
        raise RecordInvalid("step must be a number of years", field=field, code="invalid-number")
    try:
        step = float(value)
    except (TypeError, ValueError):
        raise RecordInvalid("step must be a number of years", field=field, code="invalid-number") from None
    allowed = allowed_steps()
    if step not in allowed:
        shown = ", ".join(f"{s:g}" for s in allowed)
        raise RecordInvalid(f"step must be one of {shown} years", field=field, code="step-not-allowed",
                            allowed=list(allowed))
    return step


def check_grid_points(span_years: float, step: float, field: str = "step") -> None:
    """Refuse a grid of more than ``TELLSTACK_MAX_GRID_POINTS`` points."""
    limit = int(_setting("TELLSTACK_MAX_GRID_POINTS", 250_000))
    points = span_years / step + 1
    if not points <= limit:
        raise RecordInvalid(f"a grid over {span_years:g} years at {step:g}-year steps would hold more than "
                            f"{limit} points; use a larger step", field=field, code="grid-too-large", limit=limit)


def check_error(value: float | None, field: str) -> float | None:
    """A one-sigma error no larger than ``TELLSTACK_MAX_ERROR_YEARS``."""
    limit = float(_setting("TELLSTACK_MAX_ERROR_YEARS", 10_000))
    if value is not None and not (math.isfinite(value) and value <= limit):
        raise RecordInvalid(f"the error {field} is larger than the limit of {limit:g} years (found {value:g})",
                            field=field, code="error-too-large", limit=limit)
    return value


def check_offset(value: float | None, field: str) -> float | None:
    """A reservoir offset no larger in size than ``TELLSTACK_MAX_OFFSET_YEARS``."""
    limit = float(_setting("TELLSTACK_MAX_OFFSET_YEARS", 10_000))
    if value is not None and not (math.isfinite(value) and abs(value) <= limit):
        raise RecordInvalid(f"{field} must lie within ±{limit:g} years (found {value:g})", field=field,
                            code="out-of-range", limit=limit)
    return value


def _max_gap() -> float:
    return float(_setting("TELLSTACK_CURVE_MAX_GAP_YEARS", 1_000))


def check_curve_max_step(max_step: float | None) -> None:
    """The import's ``max_step`` may not allow gaps wider than ``TELLSTACK_CURVE_MAX_GAP_YEARS``."""
    limit = _max_gap()
    if max_step is not None and not max_step <= limit:
        raise RecordInvalid(f"max_step must be at most {limit:g} years", field="max_step", code="out-of-range",
                            limit=limit)


def check_curve_extent(cal_bp) -> None:
    """Refuse a curve too long, too finely or too coarsely tabulated for the service to hold.

    ``cal_bp`` is the curve's calendar ages, sorted.
    """
    rows_limit = int(_setting("TELLSTACK_CURVE_MAX_ROWS", 200_000))
    if len(cal_bp) > rows_limit:
        raise RecordInvalid(f"the curve has {len(cal_bp)} rows; at most {rows_limit} are accepted", field="table",
                            code="curve-too-many-rows", limit=rows_limit)
    span_limit = float(_setting("TELLSTACK_CURVE_MAX_SPAN_YEARS", 100_000))
    span = float(cal_bp[-1]) - float(cal_bp[0])
    if not span <= span_limit:
        raise RecordInvalid(f"the curve spans {span:g} years; at most {span_limit:g} are accepted", field="table",
                            code="curve-span-too-large", limit=span_limit)
    gap_limit = _max_gap()
    gaps = [b - a for a, b in zip(cal_bp[:-1], cal_bp[1:])]
    widest = max(gaps) if gaps else 0.0
    if widest > gap_limit:
        raise RecordInvalid(f"the curve has a gap of {widest:g} years between rows; at most {gap_limit:g} is "
                            "accepted", field="table", code="curve-gap", limit=gap_limit, gap=widest)


def inline_values() -> int:
    """How many determinations a calibration answers in the request; more run as a job."""
    return int(_setting("TELLSTACK_CALIBRATE_INLINE_VALUES", 100))


def check_value_count(count: int, field: str = "values") -> None:
    """Refuse a calibration of more than ``TELLSTACK_CALIBRATE_MAX_VALUES`` determinations."""
    limit = int(_setting("TELLSTACK_CALIBRATE_MAX_VALUES", 2_000))
    if count > limit:
        raise RecordInvalid(f"at most {limit} determinations are calibrated in one request (found {count})",
                            field=field, code="too-many-values", limit=limit)


def check_density_cells(cells: int) -> None:
    """Refuse densities of more than ``TELLSTACK_CALIBRATE_MAX_DENSITY_CELLS`` values in one answer."""
    limit = int(_setting("TELLSTACK_CALIBRATE_MAX_DENSITY_CELLS", 2_000_000))
    if cells > limit:
        raise RecordInvalid(f"the densities would hold {cells} values, more than the limit of {limit}; ask for "
                            "fewer determinations, a larger step or no density", field="density",
                            code="density-too-large", limit=limit)
