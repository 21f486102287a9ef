"""What a run is compiled from, read from the database.

The record and the evidence are read at the version's record revision through
``RecordState`` (the exact temporal table), so a run of an old version sees
the evidence exactly as it stood when the version was made.  Curves are
immutable reference data, looked up by id.
"""

from __future__ import annotations

from chronology.engine.calendar_scales import format_year

from .model_inputs import CalendarDate, Determination, EvidenceSet, ModelRefused, Sample, Terminus

__all__ = ["version_parts", "evidence_at", "find_version", "current_reading", "version_label"]


def _state_rows(project, kind: str, revision: int):
    from projects.record.reads import states

    return list(states(project, kind, revision).values_list("data", flat=True))


def evidence_at(project, revision: int) -> EvidenceSet:
    """Samples, determinations, calendar dates, termini and their curves at ``revision``."""
    from chronology.evidence.curves import engine_curve
    from chronology.evidence.models import Curve

    out = EvidenceSet()
    for d in _state_rows(project, "sample", revision):
        out.samples[d["id"]] = Sample(d["id"], d["context_id"], d.get("code") or "")
    curve_ids = set()
    for d in _state_rows(project, "determination", revision):
        sample = out.samples.get(d["sample_id"])
        if d.get("marine_fraction") is not None:
            # a marine mixture needs two curves on one grid; kept out rather than approximated
            out.unsupported[d["id"]] = f"{d['lab_code']}: marine mixtures are not modelled yet"
            continue
        out.determinations[d["id"]] = Determination(
            id=d["id"], lab_code=d["lab_code"], cra=float(d["cra"]), sigma=float(d["cra_sigma"]),
            curve=str(d["curve_id"]), sample_id=d["sample_id"],
            context_id=sample.context_id if sample else None,
            delta_r=float(d.get("delta_r") or 0.0), delta_r_sigma=float(d.get("delta_r_sigma") or 0.0),
        )
        curve_ids.add(d["curve_id"])
    for d in _state_rows(project, "calendar_date", revision):
        label = (d.get("method") or "calendar date") + f" {d.get('text') or ''}".rstrip()
        out.calendar[d["id"]] = CalendarDate(d["id"], d["context_id"], d["kind"], label, d.get("mean"), d.get("sd"),
                                             d.get("start"), d.get("end"))
    for d in _state_rows(project, "terminus", revision):
        kind = "tpq" if d["kind"] == "post_quem" else "taq"
        label = f"{kind.upper()} {format_year(d['year'])}" + (f" ({d['find']})" if d.get("find") else "")
        out.termini[d["id"]] = Terminus(d["id"], d["context_id"], kind, float(d["year"]), label)
    for curve in Curve.objects.filter(pk__in=curve_ids).select_related("table"):
        out.curves[str(curve.pk)] = engine_curve(curve)
    return out


# ---------------------------------------------------------------------------
# interpretation versions
# ---------------------------------------------------------------------------
def is_committed(version) -> bool:
    from chronology.interpretations.models import Status

    return version.status != Status.DRAFT


def version_label(version) -> str:
    return f"{version.interpretation.name} v{version.number}"


def version_parts(version) -> tuple[object, int, dict]:
    """(project, record revision, content document) of a committed version."""
    if not is_committed(version):
        raise ModelRefused("version-not-committed", "only a committed interpretation version can be modelled",
                           status=409, version=version.pk)
    return version.project, int(version.record_revision), version.content


def find_version(project, version_id):
    """The version ``version_id`` of ``project``, or None."""
    from chronology.interpretations.models import Version

    try:
        ident = int(version_id)
    except (TypeError, ValueError):
        return None
    return Version.objects.select_related("interpretation", "project").filter(project=project, pk=ident).first()


def current_reading(project):
    """The project's current reading, else its latest approved version, else its latest committed one."""
    from chronology.interpretations.models import Reading, Status, Version

    reading = Reading.objects.select_related("version").filter(project=project).first()
    if reading is not None:
        return reading.version
    qs = Version.objects.filter(project=project).select_related("interpretation")
    return (qs.filter(status=Status.APPROVED).order_by("-pk").first()
            or qs.exclude(status=Status.DRAFT).order_by("-pk").first())
