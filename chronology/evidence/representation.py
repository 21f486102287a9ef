"""The stored (and served) representation of each evidence object.

``RecordState.data`` holds exactly these dicts, so a read at a past revision
returns what a read returned then.  Like relationships, evidence stores the
ids of the contexts and samples it refers to; their labels and codes are
joined in at read time from the state at the same revision (a label may be
corrected later).
"""

from __future__ import annotations

from chronology.engine.calendar_scales import to_bc_ad

__all__ = [
    "KINDS",
    "sample_data",
    "determination_data",
    "calendar_date_data",
    "terminus_data",
    "calendar_year",
    "DATA_OF",
]

#: RecordState kinds of the evidence objects.
KINDS = ("sample", "determination", "calendar_date", "terminus")


def calendar_year(t: float | None) -> str | None:
    """An astronomical year as a historical one: ``"41 BC"`` or ``"AD 120"`` (no year 0)."""
    if t is None:
        return None
    year, era = to_bc_ad(t)
    return f"{year} BC" if era == "BC" else f"AD {year}"


def sample_data(sample) -> dict:
    return {
        "id": sample.id,
        "uid": str(sample.uid),
        "context_id": sample.context_id,
        "code": sample.code,
        "material": sample.material,
        "short_lived": sample.short_lived,
        "notes": sample.notes,
        "created_revision": sample.created_revision,
    }


def determination_data(det) -> dict:
    return {
        "id": det.id,
        "uid": str(det.uid),
        "sample_id": det.sample_id,
        "lab_code": det.lab_code,
        "measured": det.measured,
        "cra": det.cra,
        "cra_sigma": det.cra_sigma,
        "f14c": det.f14c,
        "f14c_sigma": det.f14c_sigma,
        "delta13c": det.delta13c,
        "curve_id": det.curve_id,
        "curve": det.curve.name,
        "delta_r": det.delta_r,
        "delta_r_sigma": det.delta_r_sigma,
        "marine_fraction": det.marine_fraction,
        "marine_fraction_sigma": det.marine_fraction_sigma,
        "marine_curve_id": det.marine_curve_id,
        "marine_curve": det.marine_curve.name if det.marine_curve_id else None,
        "notes": det.notes,
        "created_revision": det.created_revision,
    }


def _calendar_text(kind: str, mean, sd, start, end) -> str:
    if kind == "normal":
        return f"{calendar_year(mean)} ± {sd:g}"
    return f"{calendar_year(start)} – {calendar_year(end)}"


def calendar_date_data(cd) -> dict:
    return {
        "id": cd.id,
        "uid": str(cd.uid),
        "sample_id": cd.sample_id,
        "context_id": cd.context_id,
        "kind": cd.kind,
        "mean": cd.mean,
        "sd": cd.sd,
        "start": cd.start,
        "end": cd.end,
        "method": cd.method,
        "notes": cd.notes,
        "text": _calendar_text(cd.kind, cd.mean, cd.sd, cd.start, cd.end),
        "created_revision": cd.created_revision,
    }


def terminus_data(term) -> dict:
    bound = "not earlier than" if term.kind == "post_quem" else "not later than"
    return {
        "id": term.id,
        "uid": str(term.uid),
        "context_id": term.context_id,
        "kind": term.kind,
        "year": term.year,
        "year_end": term.year_end,
        "find": term.find,
        "notes": term.notes,
        "text": f"{bound} {calendar_year(term.year)}",
        "created_revision": term.created_revision,
    }


DATA_OF = {
    "sample": sample_data,
    "determination": determination_data,
    "calendar_date": calendar_date_data,
    "terminus": terminus_data,
}
