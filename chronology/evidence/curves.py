"""Calibration curves as stored data: import, visibility and engine views.

``import_curve`` reads a plain comma-separated table with the engine's
parser (``chronology.engine.curves.parse_curve``), stores its rows once per
checksum and names the curve for one organisation or for all.  The engine
objects built from stored rows (``engine_curve``) and their interpolation
onto a calendar grid (``curve_on_grid``) are cached per process in one cache
bounded by bytes (``curve_cache.shared``): a curve never changes once stored,
so its checksum is a safe cache key, and grid steps come from a fixed set
(``limits.grid_step``).
"""

from __future__ import annotations

from django.conf import settings
from django.db import IntegrityError, transaction

from chronology.engine import calibration as engine_calibration
from chronology.engine.curves import Curve as EngineCurve
from chronology.engine.curves import parse_curve
from chronology.engine.errors import CalibrationError
from chronology.engine.grid import CalendarGrid
from projects.models import Organisation, Role
from projects.models.tenancy import Membership
from projects.record.errors import RecordConflict, RecordInvalid

from . import limits
from .curve_cache import shared as _cache
from .models import Curve, CurveTable

__all__ = [
    "import_curve",
    "may_import",
    "resolve_curve",
    "engine_curve",
    "curve_on_grid",
    "default_step",
    "curve_summary",
]



def default_step() -> float:
    """Grid step in years for calibration (``TELLSTACK_CALIBRATION_STEP``, default 1)."""
    return float(getattr(settings, "TELLSTACK_CALIBRATION_STEP", 1.0))


def may_import(user, organisation: Organisation | None) -> bool:
    """Superusers and staff import global curves; an organisation's managers import its own."""
    if user is None or not user.is_authenticated:
        return False
    if user.is_superuser or user.is_staff:
        return True
    if organisation is None:
        return False
    role = Membership.objects.filter(user=user, organisation=organisation).values_list("role", flat=True).first()
    return Role.rank(role) >= Role.rank(Role.MANAGER)


def _required(value, field: str) -> str:
    text = str(value or "").strip()
    if not text:
        raise RecordInvalid(f"a curve needs a {field}", field=field, code="required")
    return text


def _parse(text: str, max_step, **meta) -> EngineCurve:
    if not isinstance(text, str) or not text.strip():
        raise RecordInvalid("the curve table is empty", field="table", code="required")
    if max_step is not None:
        try:
            max_step = float(max_step)
        except (TypeError, ValueError):
            raise RecordInvalid("max_step must be a number", field="max_step", code="invalid-number") from None
        if not max_step > 0:
            raise RecordInvalid("max_step must be positive", field="max_step", code="not-positive")
        limits.check_curve_max_step(max_step)
    try:
        parsed = parse_curve(text, max_step=max_step, **meta)
    except CalibrationError as exc:
        if exc.code == "curve-no-name":
            raise RecordInvalid("a curve needs a name (give one or a '# name:' line)", field="name",
                                code="required") from None
        details = {k: v for k, v in exc.details.items() if k in ("line", "problem", "column", "gap", "rows")}
        raise RecordInvalid(exc.message, field="table", code=exc.code, **details) from None
    limits.check_curve_extent(parsed.cal_bp)
    return parsed


def import_curve(text: str, *, name: str = "", citation: str = "", licence: str = "",
                 organisation: Organisation | None = None, max_step=None, user=None,
                 synthetic: bool | None = None) -> tuple[Curve, bool]:
    """Store a calibration curve from its table text.

    Name, citation and licence come from the arguments or, failing that, from
    the table's ``# name:``-style comment lines; all three are required.  The
    rows are stored once per checksum.  Importing the same table under the
    same name again returns the stored curve (``created`` False); another
    table under a name already used in that scope is refused.

    Returns
    -------
    (Curve, bool)
        The curve and whether it was created now.

    Raises
    ------
    RecordInvalid
        ``field="table"`` with the engine's code, ``line`` and ``problem``
        for a malformed table; ``required`` for missing metadata.
    RecordConflict
        ``curve-name-taken`` for another table under an existing name.
    """
    parsed = _parse(text, max_step, name=(name or "").strip() or None, citation=(citation or "").strip() or None,
                    licence=(licence or "").strip() or None, synthetic=synthetic)
    name = _required(parsed.name, "name")
    citation = _required(parsed.citation, "citation")
    licence = _required(parsed.licence, "licence")
    if len(name) > 100:
        raise RecordInvalid("curve names are at most 100 characters", field="name", code="too-long")
    synthetic = parsed.synthetic
    checksum = parsed.checksum
    existing = Curve.objects.filter(organisation=organisation, name=name).select_related("table").first()
    if existing is not None:
        if existing.table.checksum != checksum:
            raise RecordConflict(f"a different table is already stored as curve {name!r}", field="name",
                                 code="curve-name-taken", existing_id=existing.id)
        return existing, False
    try:
        with transaction.atomic():
            table = CurveTable.objects.filter(checksum=checksum).first()
            if table is None:
                table = CurveTable.objects.create(
                    checksum=checksum, n_rows=parsed.n_rows,
                    cal_bp_min=float(parsed.cal_bp[0]), cal_bp_max=float(parsed.cal_bp[-1]),
                    rows={"cal_bp": parsed.cal_bp.tolist(), "c14_bp": parsed.c14_bp.tolist(),
                          "sigma": parsed.sigma.tolist()},
                )
            curve = Curve.objects.create(
                organisation=organisation, name=name, citation=citation, licence=licence,
                synthetic=bool(synthetic), table=table,
                created_by=user if getattr(user, "is_authenticated", False) else None,
            )
    except IntegrityError as exc:  # the same import ran concurrently
        raise RecordConflict("the curve was imported concurrently; retry", code="concurrent-write") from exc
    return curve, True


def resolve_curve(ref, organisation_id, field: str = "curve") -> Curve:
    """A curve the organisation may use, by id (integer) or name (string).

    A name used both globally and by the organisation means the
    organisation's own curve.
    """
    visible = Curve.objects.visible_to_organisation(organisation_id).select_related("table")
    curve = None
    if isinstance(ref, bool) or ref is None or ref == "":
        raise RecordInvalid("name a calibration curve by its id or name", field=field, code="required")
    if isinstance(ref, int):
        curve = visible.filter(pk=ref).first()
    elif isinstance(ref, str):
        text = ref.strip()
        if text.isdigit():
            curve = visible.filter(pk=int(text)).first()
        if curve is None:
            candidates = sorted(visible.filter(name=text), key=lambda c: c.organisation_id is None)
            curve = candidates[0] if candidates else None
    if curve is None:
        raise RecordInvalid(f"no calibration curve {ref!r} is available", field=field, code="unknown-curve")
    return curve


def engine_curve(curve: Curve) -> EngineCurve:
    """The engine's view of a stored curve (cached per process by checksum and name)."""
    key = ("engine", curve.table.checksum, curve.name, curve.synthetic)
    hit = _cache.get(key)
    if hit is not None:
        return hit
    rows = curve.table.rows
    built = EngineCurve(name=curve.name, citation=curve.citation, licence=curve.licence,
                        cal_bp=rows["cal_bp"], c14_bp=rows["c14_bp"], sigma=rows["sigma"],
                        synthetic=curve.synthetic)
    return _cache.put(key, built)


def _common_grid(curves: list[EngineCurve], step: float) -> CalendarGrid:
    first = max(c.oldest_year for c in curves)
    last = min(c.youngest_year for c in curves)
    if not last > first:
        raise RecordInvalid("the curves do not overlap in time", field="marine_curve", code="curves-disjoint")
    n = int((last - first) / step + 1e-9) + 1
    return CalendarGrid(first, step, max(n, 2))


def curve_on_grid(curve: Curve, step: float | None = None, *, with_curves: tuple[Curve, ...] = ()):
    """``curve`` interpolated onto a regular grid at ``step`` years (cached per process).

    ``step`` must be one of ``limits.allowed_steps()``; ``None`` means the default.

    With ``with_curves``, the grid is the span all of them cover, so that they
    can be mixed; otherwise the curve's whole extent.
    """
    step = default_step() if step is None else limits.grid_step(step)
    models_ = (curve, *with_curves)
    key = ("grid", tuple(c.table.checksum for c in models_), curve.name, step)
    hit = _cache.get(key)
    if hit is not None:
        return hit
    engines = [engine_curve(c) for c in models_]
    grid = _common_grid(engines, step) if with_curves else None
    limits.check_grid_points(engines[0].youngest_year - engines[0].oldest_year, step)
    on_grid = engine_calibration.curve_on_grid(engines[0], grid, step=step)
    return _cache.put(key, on_grid)


def forget() -> None:
    """Empty the per-process caches (tests)."""
    _cache.clear()


def curve_summary(curve: Curve) -> dict:
    """The public description of a stored curve (no rows)."""
    table = curve.table
    return {
        "id": curve.id,
        "name": curve.name,
        "citation": curve.citation,
        "licence": curve.licence,
        "synthetic": curve.synthetic,
        "organisation": curve.organisation.slug if curve.organisation_id else None,
        "checksum": table.checksum,
        "rows": table.n_rows,
        "cal_bp_range": [table.cal_bp_min, table.cal_bp_max],
        "created_at": curve.created_at.isoformat() if curve.created_at else None,
    }
