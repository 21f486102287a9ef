"""A calibration request: stored determinations and ad-hoc values, answered now or as a job.

``measurements`` turns a request's plain data into ``calibrate.Measurement``
objects, checking every value against ``limits`` first, so bad input is
refused before any work. A request of up to ``limits.inline_values()``
determinations is answered at once (``answer``); a larger one is submitted as
a job (``tasks.submit_calibration``) whose result is the same answer, polled
at the project's jobs endpoint. Both paths share one function, so they cannot differ.
"""

from __future__ import annotations

from projects.record import reads
from projects.record.errors import RecordInvalid

from . import calibrate, limits
from .curves import resolve_curve
from .models import Curve

__all__ = ["JOB_KIND", "measurements_at", "measurements", "needs_job", "answer"]

JOB_KIND = "calibration"


def measurements_at(project, revision: int, ids, *, field: str = "determinations") -> list[calibrate.Measurement]:
    """Stored determinations at ``revision`` as calibration input, in the order of ``ids``."""
    ids = [int(i) for i in ids]
    found = {s.object_id: s.data for s in reads.states(project, "determination", revision).filter(object_id__in=ids)}
    missing = [i for i in ids if i not in found]
    if missing:
        raise RecordInvalid(f"no determination {missing[0]} at revision {revision}", field=field,
                            code="unknown-determination", missing=missing)
    curve_ids = {d["curve_id"] for d in found.values()} | {d["marine_curve_id"] for d in found.values()}
    curves = {c.pk: c for c in Curve.objects.filter(pk__in=curve_ids - {None}).select_related("table")}
    out = []
    for i in ids:
        d = found[i]
        out.append(calibrate.Measurement(
            id=i, label=d["lab_code"], cra=d["cra"], sigma=d["cra_sigma"], curve=curves[d["curve_id"]],
            delta_r=d["delta_r"], delta_r_sigma=d["delta_r_sigma"], marine_fraction=d["marine_fraction"],
            marine_fraction_sigma=d["marine_fraction_sigma"], marine_curve=curves.get(d["marine_curve_id"]),
        ))
    return out


def _ad_hoc(project, index: int, item: dict, curves: dict) -> calibrate.Measurement:
    where = f"values[{index}]"

    def curve(ref, name):
        key = (name, repr(ref))
        if key not in curves:
            curves[key] = resolve_curve(ref, project.organisation_id, field=f"{where}.{name}")
        return curves[key]

    marine = None if item.get("marine_curve") in (None, "") else curve(item["marine_curve"], "marine_curve")
    if not item["error"] > 0:
        raise RecordInvalid("the error must be positive", field=f"{where}.error", code="invalid-error")
    limits.check_error(item["error"], f"{where}.error")
    fraction = item.get("marine_fraction")
    if fraction is not None and not 0 <= fraction <= 1:
        raise RecordInvalid("the marine fraction must lie in 0..1", field=f"{where}.marine_fraction",
                            code="out-of-range")
    for name in ("delta_r_sigma", "marine_fraction_sigma"):
        if item.get(name) is not None and item[name] < 0:
            raise RecordInvalid("errors must not be negative", field=f"{where}.{name}", code="invalid-error")
    limits.check_error(item.get("delta_r_sigma"), f"{where}.delta_r_sigma")
    limits.check_offset(item.get("delta_r"), f"{where}.delta_r")
    return calibrate.Measurement(
        label=item.get("label") or f"{item['cra']:g} ± {item['error']:g} BP", cra=item["cra"], sigma=item["error"],
        curve=curve(item["curve"], "curve"), delta_r=item.get("delta_r"), delta_r_sigma=item.get("delta_r_sigma"),
        marine_fraction=fraction, marine_fraction_sigma=item.get("marine_fraction_sigma"), marine_curve=marine,
    )


def measurements(project, params: dict) -> tuple[int, list[calibrate.Measurement]]:
    """The revision read and every measurement of a request, all checked.

    ``params`` holds ``at``, ``determinations`` (ids), ``values`` (ad-hoc
    ``{cra, error, curve, ...}``), ``step`` and ``density``.
    """
    determinations, values = params.get("determinations") or [], params.get("values") or []
    if not determinations and not values:
        raise RecordInvalid("name stored determinations or give values to calibrate", field="determinations",
                            code="required")
    limits.check_value_count(len(determinations) + len(values),
                             field="values" if len(values) >= len(determinations) else "determinations")
    limits.grid_step(params.get("step"))
    revision = reads.resolve_revision(project, params.get("at"))
    found = measurements_at(project, revision, determinations)
    curves: dict = {}
    found += [_ad_hoc(project, index, item, curves) for index, item in enumerate(values)]
    return revision, found


def needs_job(found: list) -> bool:
    """Whether a request of these measurements is too large to answer in the request."""
    return len(found) > limits.inline_values()


def answer(revision: int, found: list[calibrate.Measurement], params: dict) -> dict:
    """The calibrated determinations as served (HPD ranges, medians, curves, cautions)."""
    step = limits.grid_step(params.get("step"))
    density = bool(params.get("density"))
    results = calibrate.calibrate_measurements(found, step, field="values")
    if density:
        limits.check_density_cells(sum(int(date.density.size) for date, _curve in results))
    return {
        "revision": revision,
        "results": [calibrate.summarise(m, date, curve, density=density) for m, (date, curve) in zip(found, results)],
        "caution": calibrate.CAUTION,
    }
