"""The write path of dating evidence: samples, determinations, calendar dates, termini.

Built on the record's own core (``projects.record.changes.record_change``):
each function validates, writes the object, its ``RecordState`` version and
its change-log entry, and bumps the project revision once, in one
transaction; a refused change raises a ``RecordError`` naming the field and
writes nothing.  Client uids make retries idempotent exactly as for
contexts: the same uid with the same values returns the stored object, with
other values it is refused.  Evidence is never edited; a mistake is
retracted with a reason (and entered again).
"""

from __future__ import annotations

import math
import uuid as uuid_module

from django.db import IntegrityError

from chronology.engine.radiocarbon import cra_from_f14c
from projects.models import Context, Project
from projects.record.errors import RecordConflict, RecordInvalid, RecordNotFound
from projects.record.writes import Actor, ChangeSet, WriteResult, parse_uid, record_change

from . import calibrate, limits
from .curves import resolve_curve
from .models import CalendarDate, Determination, Sample, Terminus
from .representation import calendar_date_data, determination_data, sample_data, terminus_data

__all__ = [
    "Actor",
    "WriteResult",
    "add_sample",
    "add_determination",
    "add_calendar_date",
    "add_terminus",
    "retract_evidence",
    "F14C_MAX",
]

#: Largest F14C accepted.  Atmospheric F14C peaked below 2 after the weapons
#: tests (from memory), so higher values are taken to be entry errors.
F14C_MAX = 2.0

_MODELS = {"sample": Sample, "determination": Determination, "calendar_date": CalendarDate, "terminus": Terminus}


# -- value checks ------------------------------------------------------------

def _text(fields: dict, name: str, *, required: bool = False, max_length: int | None = None) -> str:
    value = fields.get(name)
    text = "" if value is None else str(value).strip()
    if required and not text:
        raise RecordInvalid(f"{name.replace('_', ' ')} is required", field=name, code="required")
    if max_length is not None and len(text) > max_length:
        raise RecordInvalid(f"{name} is at most {max_length} characters", field=name, code="too-long")
    return text


def _number(fields: dict, name: str, *, required: bool = False) -> float | None:
    value = fields.get(name)
    if value is None or value == "":
        if required:
            raise RecordInvalid(f"{name} is required", field=name, code="required")
        return None
    if isinstance(value, bool):
        raise RecordInvalid(f"{name} must be a number", field=name, code="invalid-number")
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise RecordInvalid(f"{name} must be a number", field=name, code="invalid-number") from None
    if not math.isfinite(number):
        raise RecordInvalid(f"{name} must be finite", field=name, code="invalid-number")
    return number


def _error(fields: dict, name: str, *, required: bool = False, zero_ok: bool = False) -> float | None:
    """A one-sigma error: positive (or, where allowed, zero)."""
    value = _number(fields, name, required=required)
    if value is None:
        return None
    if value < 0 or (value == 0 and not zero_ok):
        need = "must not be negative" if zero_ok else "must be positive"
        raise RecordInvalid(f"the error {name} {need} (found {value:g})", field=name, code="invalid-error")
    return value


def _choice(fields: dict, name: str, choices) -> str:
    value = fields.get(name) or ""
    if value not in choices:
        raise RecordInvalid(f"{name} must be one of {', '.join(choices)}", field=name, code="invalid-choice")
    return value


def _unknown(fields: dict, allowed: set) -> None:
    extra = sorted(set(fields) - allowed)
    if extra:
        raise RecordInvalid(f"{extra[0]!r} is not an attribute here", field=extra[0], code="unknown-field")


def _context(project: Project, ref, field: str = "context") -> Context:
    """An active context of ``project`` by label (string) or id (integer)."""
    qs = Context.objects.filter(project=project, retracted_revision__isnull=True)
    if isinstance(ref, int) and not isinstance(ref, bool):
        ctx = qs.filter(pk=ref).first()
    elif isinstance(ref, str) and ref.strip():
        ctx = qs.filter(label=ref.strip()).first()
    else:
        raise RecordInvalid("name a context by its number or label", field=field, code="required")
    if ctx is None:
        raise RecordInvalid(f"no context {ref!r} in project {project.code}", field=field, code="unknown-context")
    return ctx


def _sample(project: Project, ref, field: str = "sample") -> Sample:
    """An active sample of ``project`` by code (string) or id (integer)."""
    qs = Sample.objects.filter(project=project, retracted_revision__isnull=True).select_related("context")
    if isinstance(ref, int) and not isinstance(ref, bool):
        sample = qs.filter(pk=ref).first()
    elif isinstance(ref, str) and ref.strip():
        sample = qs.filter(code=ref.strip()).first()
    else:
        raise RecordInvalid("name a sample by its code or id", field=field, code="required")
    if sample is None:
        raise RecordInvalid(f"no sample {ref!r} in project {project.code}", field=field, code="unknown-sample")
    return sample


def _same_or_conflict(existing, cleaned: dict, project: Project, kind: str) -> WriteResult:
    if any(getattr(existing, k) != v for k, v in cleaned.items()):
        raise RecordConflict(f"a different {kind.replace('_', ' ')} was already posted with this uid",
                             field="uid", code="uid-reused", existing_id=existing.id)
    return WriteResult(existing, False, project.revision)


def _write(project: Project, actor: Actor, body) -> WriteResult:
    try:
        with record_change(project, actor) as changes:
            result = body(changes)
    except IntegrityError as exc:  # a concurrent post of the same uid or code
        raise RecordConflict("the evidence was posted concurrently; retry", code="concurrent-write") from exc
    return WriteResult(result.object, result.created, project.revision)


# -- samples -----------------------------------------------------------------

_SAMPLE_FIELDS = {"context", "code", "material", "short_lived", "notes"}


def _add_sample(changes: ChangeSet, fields: dict, uid) -> WriteResult:
    project = changes.project
    _unknown(fields, _SAMPLE_FIELDS)
    uid = parse_uid(uid)
    context = _context(project, fields.get("context"))
    cleaned = {
        "context_id": context.id,
        "code": _text(fields, "code", required=True, max_length=64),
        "material": _text(fields, "material", required=True, max_length=200),
        "short_lived": bool(fields.get("short_lived") or False),
        "notes": _text(fields, "notes"),
    }
    if uid is not None:
        existing = Sample.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            return _same_or_conflict(existing, cleaned, project, "sample")
    if Sample.objects.filter(project=project, code=cleaned["code"], retracted_revision__isnull=True).exists():
        raise RecordConflict(f"sample {cleaned['code']} already exists in project {project.code}",
                             field="code", code="duplicate-code")
    sample = Sample.objects.create(project=project, uid=uid or uuid_module.uuid4(),
                                   created_revision=changes.revision, **cleaned)
    changes.created("sample", sample, sample_data(sample), repr_=f"sample {sample.code} from {context.label}")
    return WriteResult(sample, True, changes.revision)


def add_sample(project: Project, actor: Actor, *, uid=None, **fields) -> WriteResult:
    """Record a sample taken from a context.

    ``fields``: ``context`` (label or id), ``code`` (unique among the
    project's active samples), ``material``, ``short_lived``, ``notes``.
    """
    return _write(project, actor, lambda changes: _add_sample(changes, fields, uid))


# -- determinations ----------------------------------------------------------

_DETERMINATION_FIELDS = {
    "sample", "lab_code", "cra", "cra_sigma", "f14c", "f14c_sigma", "delta13c", "curve", "delta_r",
    "delta_r_sigma", "marine_fraction", "marine_fraction_sigma", "marine_curve", "notes",
}


def _measurement(fields: dict) -> dict:
    cra, f14c = _number(fields, "cra"), _number(fields, "f14c")
    if f14c is not None:
        if cra is not None:
            raise RecordInvalid("give either a radiocarbon age or an F14C value, not both", field="cra",
                                code="ambiguous-measurement")
        if not 0 < f14c <= F14C_MAX:
            raise RecordInvalid(f"F14C must lie in (0, {F14C_MAX:g}] (found {f14c:g})", field="f14c",
                                code="out-of-range")
        f_sigma = _error(fields, "f14c_sigma", required=True)
        if fields.get("cra_sigma") not in (None, ""):
            raise RecordInvalid("the age error is derived from the F14C error; do not give both", field="cra_sigma",
                                code="ambiguous-measurement")
        age, age_sigma = cra_from_f14c(f14c, f_sigma)
        limits.check_error(float(age_sigma), "f14c_sigma")
        return {"measured": "f14c", "f14c": f14c, "f14c_sigma": f_sigma, "cra": float(age),
                "cra_sigma": float(age_sigma)}
    if cra is None:
        raise RecordInvalid("a determination needs a radiocarbon age (cra) or an F14C value", field="cra",
                            code="required")
    if fields.get("f14c_sigma") not in (None, ""):
        raise RecordInvalid("an F14C error without an F14C value", field="f14c", code="required")
    sigma = limits.check_error(_error(fields, "cra_sigma", required=True), "cra_sigma")
    return {"measured": "cra", "cra": cra, "cra_sigma": sigma,
            "f14c": None, "f14c_sigma": None}


def _reservoir(fields: dict, organisation_id) -> dict:
    delta_r = limits.check_offset(_number(fields, "delta_r"), "delta_r")
    delta_r_sigma = limits.check_error(_error(fields, "delta_r_sigma", zero_ok=True), "delta_r_sigma")
    if delta_r_sigma is not None and delta_r is None:
        raise RecordInvalid("an offset error without an offset", field="delta_r", code="required")
    fraction = _number(fields, "marine_fraction")
    fraction_sigma = _error(fields, "marine_fraction_sigma", zero_ok=True)
    marine_ref = fields.get("marine_curve")
    marine = None
    if fraction is not None:
        if not 0.0 <= fraction <= 1.0:
            raise RecordInvalid(f"the marine fraction must lie in 0..1 (found {fraction:g})",
                                field="marine_fraction", code="out-of-range")
        if marine_ref in (None, ""):
            raise RecordInvalid("a marine fraction needs a marine curve", field="marine_curve", code="required")
        marine = resolve_curve(marine_ref, organisation_id, field="marine_curve")
    elif marine_ref not in (None, ""):
        raise RecordInvalid("a marine curve is used only with a marine fraction", field="marine_fraction",
                            code="required")
    elif fraction_sigma is not None:
        raise RecordInvalid("a fraction error without a marine fraction", field="marine_fraction", code="required")
    if fraction_sigma is not None and fraction is not None and fraction_sigma > 1:
        raise RecordInvalid("the marine fraction error must lie in 0..1", field="marine_fraction_sigma",
                            code="out-of-range")
    return {"delta_r": delta_r, "delta_r_sigma": delta_r_sigma, "marine_fraction": fraction,
            "marine_fraction_sigma": fraction_sigma, "marine_curve": marine}


def _add_determination(changes: ChangeSet, fields: dict, uid) -> WriteResult:
    project = changes.project
    _unknown(fields, _DETERMINATION_FIELDS)
    uid = parse_uid(uid)
    sample = _sample(project, fields.get("sample"))
    lab_code = _text(fields, "lab_code", required=True, max_length=64)
    measurement = _measurement(fields)
    delta13c = _number(fields, "delta13c")
    curve = resolve_curve(fields.get("curve"), project.organisation_id)
    reservoir = _reservoir(fields, project.organisation_id)
    cleaned = {"sample_id": sample.id, "lab_code": lab_code, **measurement, "delta13c": delta13c,
               "curve_id": curve.id, **{k: v for k, v in reservoir.items() if k != "marine_curve"},
               "marine_curve_id": reservoir["marine_curve"].id if reservoir["marine_curve"] else None,
               "notes": _text(fields, "notes")}
    if uid is not None:
        existing = Determination.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            return _same_or_conflict(existing, cleaned, project, "determination")
    clash = Determination.objects.filter(organisation_id=project.organisation_id, lab_code=lab_code,
                                         retracted_revision__isnull=True).first()
    if clash is not None:
        same_project = clash.project_id == project.id
        raise RecordConflict(
            f"laboratory code {lab_code} is already recorded"
            + ("" if same_project else " in another project of the organisation"),
            field="lab_code", code="duplicate-lab-code", **({"existing_id": clash.id} if same_project else {}),
        )
    # The curve must reach the age, or the determination cannot be calibrated.
    calibrate.calibrate_measurements([calibrate.Measurement(
        label=lab_code, cra=measurement["cra"], sigma=measurement["cra_sigma"], curve=curve,
        delta_r=reservoir["delta_r"], delta_r_sigma=reservoir["delta_r_sigma"],
        marine_fraction=reservoir["marine_fraction"], marine_fraction_sigma=reservoir["marine_fraction_sigma"],
        marine_curve=reservoir["marine_curve"],
    )], field="f14c" if measurement["measured"] == "f14c" else "cra")
    det = Determination.objects.create(project=project, organisation_id=project.organisation_id,
                                       uid=uid or uuid_module.uuid4(), created_revision=changes.revision,
                                       **cleaned)
    changes.created("determination", det, determination_data(det), repr_=f"{lab_code} on sample {sample.code}")
    return WriteResult(det, True, changes.revision)


def add_determination(project: Project, actor: Actor, *, uid=None, **fields) -> WriteResult:
    """Record a radiocarbon determination on a sample.

    ``fields``: ``sample`` (code or id), ``lab_code`` (unique across the
    organisation among active determinations), either ``cra`` and
    ``cra_sigma`` or ``f14c`` and ``f14c_sigma`` (stored as primary; the age
    is derived, Stuiver & Polach 1977), ``delta13c``, ``curve`` (id or
    name), ``delta_r``/``delta_r_sigma``, ``marine_fraction``/
    ``marine_fraction_sigma`` with ``marine_curve``, ``notes``.  Refused
    with ``outside-curve`` when the curve does not reach the age.
    """
    return _write(project, actor, lambda changes: _add_determination(changes, fields, uid))


# -- calendar dates ----------------------------------------------------------

_CALENDAR_FIELDS = {"sample", "context", "kind", "mean", "sd", "start", "end", "method", "notes"}
#: Calendar dates must fall in this span of astronomical years (common practice: the
#: range of the published curves, 55,000 cal BP to the present).
YEAR_RANGE = (1950.0 - 55000.0, 2100.0)


def _year(fields: dict, name: str, *, required: bool) -> float | None:
    value = _number(fields, name, required=required)
    if value is not None and not YEAR_RANGE[0] <= value <= YEAR_RANGE[1]:
        raise RecordInvalid(f"{name} must lie between {YEAR_RANGE[0]:g} and {YEAR_RANGE[1]:g} (astronomical years)",
                            field=name, code="out-of-range")
    return value


def _add_calendar_date(changes: ChangeSet, fields: dict, uid) -> WriteResult:
    project = changes.project
    _unknown(fields, _CALENDAR_FIELDS)
    uid = parse_uid(uid)
    sample = None
    if fields.get("sample") not in (None, ""):
        sample = _sample(project, fields["sample"])
        context = sample.context
        if fields.get("context") not in (None, "") and _context(project, fields["context"]).id != context.id:
            raise RecordInvalid("the sample was taken from another context", field="context",
                                code="context-mismatch")
    else:
        context = _context(project, fields.get("context"))
    kind = _choice(fields, "kind", CalendarDate.Kind.values)
    cleaned = {"sample_id": sample.id if sample else None, "context_id": context.id, "kind": kind,
               "mean": None, "sd": None, "start": None, "end": None}
    if kind == "normal":
        cleaned["mean"] = _year(fields, "mean", required=True)
        cleaned["sd"] = limits.check_error(_error(fields, "sd", required=True), "sd")
    else:
        cleaned["start"] = _year(fields, "start", required=True)
        cleaned["end"] = _year(fields, "end", required=True)
        if not cleaned["end"] > cleaned["start"]:
            raise RecordInvalid("a range must end after it starts", field="end", code="range-inverted")
    cleaned["method"] = _text(fields, "method", max_length=100)
    cleaned["notes"] = _text(fields, "notes")
    if uid is not None:
        existing = CalendarDate.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            return _same_or_conflict(existing, cleaned, project, "calendar_date")
    cd = CalendarDate.objects.create(project=project, uid=uid or uuid_module.uuid4(),
                                     created_revision=changes.revision, **cleaned)
    data = calendar_date_data(cd)
    owner = f"sample {sample.code}" if sample else f"context {context.label}"
    changes.created("calendar_date", cd, data, repr_=f"calendar date {data['text']} for {owner}")
    return WriteResult(cd, True, changes.revision)


def add_calendar_date(project: Project, actor: Actor, *, uid=None, **fields) -> WriteResult:
    """Record a calendar date (e.g. a tree-ring date) of a sample or a context.

    ``fields``: ``sample`` (code or id) or ``context`` (label or id);
    ``kind`` ``normal`` with ``mean`` and ``sd`` or ``uniform`` with
    ``start`` and ``end`` (astronomical years: 1 BC = 0); ``method``,
    ``notes``.
    """
    return _write(project, actor, lambda changes: _add_calendar_date(changes, fields, uid))


# -- termini -----------------------------------------------------------------

_TERMINUS_FIELDS = {"context", "kind", "year", "year_end", "find", "notes"}


def _add_terminus(changes: ChangeSet, fields: dict, uid) -> WriteResult:
    project = changes.project
    _unknown(fields, _TERMINUS_FIELDS)
    uid = parse_uid(uid)
    context = _context(project, fields.get("context"))
    cleaned = {
        "context_id": context.id,
        "kind": _choice(fields, "kind", Terminus.Kind.values),
        "year": _year(fields, "year", required=True),
        "year_end": _year(fields, "year_end", required=False),
        "find": _text(fields, "find", required=True, max_length=200),
        "notes": _text(fields, "notes"),
    }
    if cleaned["year_end"] is not None and not cleaned["year_end"] > cleaned["year"]:
        raise RecordInvalid("the date range of the find must end after it starts", field="year_end",
                            code="range-inverted")
    if uid is not None:
        existing = Terminus.objects.filter(project=project, uid=uid).first()
        if existing is not None:
            return _same_or_conflict(existing, cleaned, project, "terminus")
    term = Terminus.objects.create(project=project, uid=uid or uuid_module.uuid4(),
                                   created_revision=changes.revision, **cleaned)
    data = terminus_data(term)
    changes.created("terminus", term, data, repr_=f"{context.label} {data['text']} ({term.find})"[:200])
    return WriteResult(term, True, changes.revision)


def add_terminus(project: Project, actor: Actor, *, uid=None, **fields) -> WriteResult:
    """Record a terminus post quem or ante quem for a context from a datable find.

    ``fields``: ``context`` (label or id), ``kind`` (``post_quem`` or
    ``ante_quem``), ``year`` (astronomical), optional ``year_end`` (end of
    the find's date range, e.g. an issue period), ``find``, ``notes``.
    """
    return _write(project, actor, lambda changes: _add_terminus(changes, fields, uid))


# -- retraction --------------------------------------------------------------

def _repr(kind: str, obj) -> str:
    """The log's short text for a retraction; no row ids, which are the database's, not the record's."""
    if kind == "sample":
        return f"sample {obj.code}"
    if kind == "determination":
        return obj.lab_code
    data = _data(kind, obj)
    if kind == "calendar_date":
        owner = f"sample {obj.sample.code}" if obj.sample_id else f"context {obj.context.label}"
        return f"calendar date {data['text']} for {owner}"
    return f"{obj.context.label} {data['text']} ({obj.find})"[:200]


def _retract(changes: ChangeSet, kind: str, obj, reason: str) -> None:
    before = _data(kind, obj)
    obj.retracted_revision = changes.revision
    obj.retraction_reason = reason
    obj.save(update_fields=["retracted_revision", "retraction_reason"])
    changes.retracted(kind, obj, before, repr_=_repr(kind, obj), reason=reason)


def _data(kind: str, obj) -> dict:
    return {"sample": sample_data, "determination": determination_data, "calendar_date": calendar_date_data,
            "terminus": terminus_data}[kind](obj)


def retract_evidence(project: Project, actor: Actor, kind: str, object_id: int, *, reason: str) -> WriteResult:
    """Retract a sample, determination, calendar date or terminus with a reason, in a new revision.

    Retracting a sample retracts, in the same revision, its active
    determinations and calendar dates.  Retracting what is already retracted
    changes nothing.
    """
    if kind not in _MODELS:
        raise RecordInvalid(f"kind must be one of {', '.join(_MODELS)}", field="kind", code="invalid-choice")
    reason = (reason or "").strip()
    if not reason:
        raise RecordInvalid("a retraction needs a reason", field="reason", code="required")
    model = _MODELS[kind]
    with record_change(project, actor) as changes:
        qs = model.objects.select_for_update(of=("self",)).filter(project=changes.project, pk=object_id)
        if kind == "determination":
            qs = qs.select_related("curve", "marine_curve")
        obj = qs.first()
        if obj is None:
            raise RecordNotFound(f"no {kind.replace('_', ' ')} {object_id} in project {project.code}")
        if obj.is_active:
            if kind == "sample":
                linked = f"sample {obj.code} retracted: {reason}"
                for det in Determination.objects.filter(sample=obj, retracted_revision__isnull=True).select_related(
                        "curve", "marine_curve"):
                    _retract(changes, "determination", det, linked)
                for cd in CalendarDate.objects.filter(sample=obj, retracted_revision__isnull=True):
                    _retract(changes, "calendar_date", cd, linked)
            _retract(changes, kind, obj, reason)
    return WriteResult(obj, False, project.revision)


def retract_for_context(changes: ChangeSet, context, reason: str) -> None:
    """Retract, in ``changes``, all active evidence of a context being retracted.

    Connected to ``projects.record.hooks.context_retracting`` (see ``apps.py``).
    """
    linked = f"context {context.label} retracted: {reason}"
    for sample in Sample.objects.filter(context=context, retracted_revision__isnull=True):
        for det in Determination.objects.filter(sample=sample, retracted_revision__isnull=True).select_related(
                "curve", "marine_curve"):
            _retract(changes, "determination", det, linked)
        for cd in CalendarDate.objects.filter(sample=sample, retracted_revision__isnull=True):
            _retract(changes, "calendar_date", cd, linked)
        _retract(changes, "sample", sample, linked)
    for cd in CalendarDate.objects.filter(context=context, retracted_revision__isnull=True):
        _retract(changes, "calendar_date", cd, linked)
    for term in Terminus.objects.filter(context=context, retracted_revision__isnull=True):
        _retract(changes, "terminus", term, linked)
