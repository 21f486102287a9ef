"""Calibration of stored and ad-hoc determinations, their plots and combinations.

Everything numerical is done by the engine: the curve (with a reservoir
offset or a marine mixture) on the calendar grid
(``chronology.engine.calibration``), the HPD ranges (Hyndman 1996), the
combination of determinations on one sample (Ward & Wilson 1978) and the
plot.  This module only turns stored evidence into engine input and engine
output into the plain data the API serves, with the curve's provenance and
the cautions every calibrated result carries.
"""

from __future__ import annotations

from dataclasses import dataclass

from chronology.engine.calendar_scales import format_range, format_year, to_cal_bp
from chronology.engine.calibration import CalibratedDate, ReservoirOffset, calibrate_many, mixed_curve, with_offset
from chronology.engine.combination import combine_determinations
from chronology.engine.errors import CalibrationError
from chronology.engine.hpd import STANDARD_MASSES
from chronology.engine.plots.calibration_plot import CAUTION, SYNTHETIC_WARNING, calibration_plot
from projects.record.errors import RecordInvalid

from . import curves as stored_curves
from . import limits
from .models import Curve

__all__ = [
    "CAUTION",
    "SYNTHETIC_WARNING",
    "Measurement",
    "effective_curve",
    "calibrate_measurements",
    "summarise",
    "plot_measurement",
    "combine_measurements",
]


@dataclass(frozen=True)
class Measurement:
    """One determination ready to calibrate: the age, its curve and reservoir settings."""

    label: str
    cra: float
    sigma: float
    curve: Curve
    delta_r: float | None = None
    delta_r_sigma: float | None = None
    marine_fraction: float | None = None
    marine_fraction_sigma: float | None = None
    marine_curve: Curve | None = None
    id: int | None = None

    @property
    def curve_key(self) -> tuple:
        return (self.curve.pk, self.marine_curve.pk if self.marine_curve else None, self.delta_r or 0.0,
                self.delta_r_sigma or 0.0, self.marine_fraction, self.marine_fraction_sigma or 0.0)


def effective_curve(curve: Curve, *, delta_r=None, delta_r_sigma=None, marine_fraction=None,
                    marine_fraction_sigma=None, marine_curve: Curve | None = None, step=None):
    """The engine curve on the grid a determination is calibrated against.

    Without a marine fraction, ``ΔR ± σ`` shifts ``curve`` itself (a marine
    curve); with one, the terrestrial ``curve`` and ``marine_curve`` (shifted
    by ``ΔR``) are mixed (``chronology.engine.calibration.mixed_curve``).
    """
    offset = ReservoirOffset(float(delta_r or 0.0), float(delta_r_sigma or 0.0))
    if marine_fraction is None:
        return with_offset(stored_curves.curve_on_grid(curve, step), offset)
    if marine_curve is None:
        raise RecordInvalid("a marine fraction needs a marine curve", field="marine_curve", code="required")
    terrestrial = stored_curves.curve_on_grid(curve, step, with_curves=(marine_curve,))
    marine = stored_curves.curve_on_grid(marine_curve, step, with_curves=(curve,))
    return mixed_curve(terrestrial, marine, float(marine_fraction), offset, float(marine_fraction_sigma or 0.0))


def _curve_for(m: Measurement, step):
    return effective_curve(m.curve, delta_r=m.delta_r, delta_r_sigma=m.delta_r_sigma,
                           marine_fraction=m.marine_fraction, marine_fraction_sigma=m.marine_fraction_sigma,
                           marine_curve=m.marine_curve, step=step)


def calibrate_measurements(measurements: list[Measurement], step=None, *, field: str = "cra"):
    """Calibrate each measurement; those sharing a curve set-up are done in one engine call.

    Returns
    -------
    list of (CalibratedDate, CurveOnGrid), in input order.

    Raises
    ------
    RecordInvalid
        ``outside-curve`` naming ``field`` (and the labels) for a
        determination the curve does not reach.
    """
    out: list = [None] * len(measurements)
    groups: dict[tuple, list[int]] = {}
    for index, m in enumerate(measurements):
        # Also for rows stored before the limit existed: a plot of a 1e300-year error is refused, not attempted.
        limits.check_error(float(m.sigma), "cra_sigma" if len(measurements) == 1 else f"{field}[{index}]")
        groups.setdefault(m.curve_key, []).append(index)
    for indices in groups.values():
        first = measurements[indices[0]]
        curve = _curve_for(first, step)
        try:
            dates = calibrate_many([measurements[i].cra for i in indices], [measurements[i].sigma for i in indices],
                                   curve, labels=[measurements[i].label for i in indices], masses=STANDARD_MASSES)
        except CalibrationError as exc:
            if exc.code != "outside-curve":
                raise RecordInvalid(exc.message, field=field, code=exc.code) from None
            labels = exc.details.get("labels", [])
            raise RecordInvalid(
                f"{', '.join(labels) or 'the determination'} lies outside the range of curve {curve.name!r}",
                field=field, code="outside-curve", labels=labels, curve=first.curve.name,
            ) from None
        for i, date in zip(indices, dates):
            out[i] = (date, curve)
    return out


def _year(t: float) -> dict:
    return {"year": t, "bc_ad": format_year(t), "cal_bp": to_cal_bp(t), "cal_bp_text": format_year(t, "bp")}


def _range(r) -> dict:
    return {
        "start": r.start, "end": r.end, "probability": r.probability,
        "bc_ad": format_range(r.start, r.end),
        "cal_bp": [to_cal_bp(r.start), to_cal_bp(r.end)],
        "cal_bp_text": format_range(r.start, r.end, "bp"),
    }


def _provenance(m: Measurement) -> dict:
    curves = [m.curve] + ([m.marine_curve] if m.marine_fraction is not None and m.marine_curve else [])
    return {
        "curves": [{"id": c.id, "name": c.name, "citation": c.citation, "licence": c.licence,
                    "checksum": c.table.checksum, "synthetic": c.synthetic} for c in curves],
        "synthetic": any(c.synthetic for c in curves),
    }


def summarise(m: Measurement, date: CalibratedDate, curve, *, density: bool = False) -> dict:
    """A calibrated determination as served: HPD ranges, median, curve and cautions.

    Years are astronomical (``start``/``end``/``year``), with their cal BC/AD
    and cal BP forms beside them.
    """
    provenance = _provenance(m)
    body = {
        "id": m.id,
        "label": m.label,
        "cra": m.cra,
        "cra_sigma": m.sigma,
        "curve": m.curve.name,
        "citation": m.curve.citation,
        "curve_setup": curve.label,
        "curves": provenance["curves"],
        "synthetic": provenance["synthetic"],
        "warnings": [SYNTHETIC_WARNING] if provenance["synthetic"] else [],
        "caution": CAUTION,
        "median": _year(date.median),
        "hpd": [
            {"level": mass, "label": f"{100 * mass:.1f}%",
             "probability": sum(r.probability for r in date.hpd[mass]),
             "ranges": [_range(r) for r in date.hpd[mass]]}
            for mass in sorted(date.hpd)
        ],
        "truncated": date.truncated,
    }
    if date.truncated:
        body["warnings"].append("The density reaches the end of the curve; part of it may lie beyond.")
    if density:
        body["density"] = {"first_year": date.first_year, "step": date.step,
                           "values": [float(v) for v in date.density]}
    return body


def plot_measurement(m: Measurement, step=None, *, title: str | None = None):
    """SVG and PNG of ``m`` calibrated, drawn against its curve (engine ``calibration_plot``)."""
    (date, curve), = calibrate_measurements([m], step)
    return calibration_plot(date, curve, title=title)


def combine_measurements(measurements: list[Measurement], step=None, *, density: bool = False) -> dict:
    """The Ward & Wilson (1978) combination of determinations on one sample.

    The combined age is calibrated only when the set passes the test and all
    of it is to be read against the same curve set-up; otherwise the answer
    says why not.
    """
    if len(measurements) < 2:
        raise RecordInvalid("combining needs at least two determinations on the sample", field="sample",
                            code="too-few-determinations", found=len(measurements))
    combination = combine_determinations([m.cra for m in measurements], [m.sigma for m in measurements],
                                         labels=[m.label for m in measurements])
    body = {
        "method": "Ward & Wilson (1978): error-weighted mean and chi-squared test at 5%",
        "determinations": [{"id": m.id, "lab_code": m.label, "cra": m.cra, "cra_sigma": m.sigma}
                           for m in measurements],
        "test": combination.as_dict(),
        "calibration": None,
        "caution": CAUTION,
    }
    setups = {m.curve_key for m in measurements}
    if not combination.consistent:
        body["note"] = "The determinations are not consistent; they are not combined. Review them."
    elif len(setups) > 1:
        body["note"] = "The determinations name different curves or reservoir settings; the mean is not calibrated."
    else:
        first = measurements[0]
        combined = Measurement(
            label="combined " + ", ".join(m.label for m in measurements), cra=combination.mean,
            sigma=combination.sigma, curve=first.curve, delta_r=first.delta_r, delta_r_sigma=first.delta_r_sigma,
            marine_fraction=first.marine_fraction, marine_fraction_sigma=first.marine_fraction_sigma,
            marine_curve=first.marine_curve,
        )
        (date, curve), = calibrate_measurements([combined], step)
        body["calibration"] = summarise(combined, date, curve, density=density)
    return body
