"""Dating evidence to likelihood terms on the calendar grid.

Each usage ``{evidence: "<kind>:<id>", use, outlier_prior}`` becomes one
:class:`Term` whose ``build(grid, lo, hi)`` gives its log-likelihood and, under
the outlier model (Christen 1994), the log-likelihood of its outlier
component: the same evidence with its error inflated by
:data:`OUTLIER_SIGMA_FACTOR`, or flat over the overall range for termini,
uniform and fixed dates.  Several determinations on one sample are combined
first (Ward & Wilson 1978).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from chronology.engine.calibration import ReservoirOffset, curve_on_grid, log_likelihood
from chronology.engine.combination import combine_determinations
from chronology.engine.curves import Curve
from chronology.engine.evidence_likelihoods import (
    fixed_date,
    normal_date,
    radiocarbon_likelihood,
    terminus_ante_quem,
    terminus_post_quem,
    uniform_date,
)
from chronology.engine.grid import CalendarGrid

from .model_inputs import CalendarDate, EvidenceSet, ModelRefused, ModelSpec, Terminus, Usage

__all__ = ["OUTLIER_SIGMA_FACTOR", "KIND_ALIASES", "Term", "evidence_terms"]

#: The outlier component's error is this many times the evidence's own (Christen 1994 mixture).
OUTLIER_SIGMA_FACTOR = 10.0
KIND_ALIASES = {"sample": "sample", "determination": "determination", "calendar_date": "calendar",
                "terminus": "terminus"}


@dataclass
class Term:
    key: str
    label: str
    kind: str
    context: int
    use: str
    outlier_prior: float
    # how to build it on a grid: returns (loglik, outlier_loglik or None)
    build: object
    support: tuple[float, float] | None
    curve: str | None
    detail: dict


def _parse_ref(ref: str) -> tuple[str, int]:
    kind, _, ident = ref.partition(":")
    kind = KIND_ALIASES.get(kind.strip().lower())
    try:
        number = int(ident)
    except ValueError:
        number = None
    if kind is None or number is None:
        raise ModelRefused("invalid-evidence-reference", f"evidence reference {ref!r} is not '<kind>:<id>'",
                           evidence=ref)
    return kind, number


def _flat(grid: CalendarGrid, lo: float, hi: float) -> np.ndarray:
    return np.full(grid.n, -math.log(max(hi - lo, grid.step)))


def _radiocarbon_term(key, label, context, usage, cra, sigma, curve_name, curve: Curve, offset, detail) -> Term:
    def build(grid, lo, hi):
        on_grid = curve_on_grid(curve, grid)
        ll = radiocarbon_likelihood(grid, cra, sigma, on_grid, offset=offset, label=label).log_values
        out = log_likelihood(cra, sigma * OUTLIER_SIGMA_FACTOR, on_grid, offset) if usage.outlier_prior > 0 else None
        return ll, out
    return Term(key, label, "radiocarbon", context, usage.use, usage.outlier_prior, build, None, curve_name,
                 {"cra": cra, "sigma": sigma, "curve": curve.name, "curve_checksum": curve.checksum, **detail})


def evidence_terms(reading: ModelSpec, evidence: EvidenceSet, known_contexts: set) -> list[Term]:
    terms = []
    seen = set()
    used_labs: set = set()
    for usage in reading.usages:
        kind, number = _parse_ref(usage.evidence)
        key = f"{kind}:{number}"
        if key in seen:
            raise ModelRefused("invalid-input", f"evidence {key} is used twice", evidence=key)
        seen.add(key)
        if kind in ("sample", "determination"):
            if kind == "sample":
                sample = evidence.samples.get(number)
                if sample is None:
                    raise ModelRefused("unknown-evidence", f"no sample {number} at this revision", evidence=key)
                dets = evidence.sample_determinations(number)
                if not dets:
                    raise ModelRefused("no-determinations", f"sample {sample.label or number} has no determination",
                                       evidence=key)
                context = usage.context or sample.context_id
                label = sample.label or "+".join(d.lab_code for d in dets)
            else:
                det = evidence.determinations.get(number)
                if number in evidence.unsupported:
                    raise ModelRefused("unsupported-evidence", evidence.unsupported[number], evidence=key)
                if det is None:
                    raise ModelRefused("unknown-evidence", f"no determination {number} at this revision", evidence=key)
                dets = [det]
                sample = evidence.samples.get(det.sample_id) if det.sample_id is not None else None
                context = usage.context or (sample.context_id if sample else det.context_id)
                label = det.lab_code
            curve_names = {d.curve for d in dets}
            offsets = {(d.delta_r, d.delta_r_sigma) for d in dets}
            if len(curve_names) != 1 or len(offsets) != 1:
                raise ModelRefused("incompatible-determinations",
                                   f"{label}: determinations on one sample must share a curve and reservoir offset "
                                   "to be combined", evidence=key)
            curve_name = curve_names.pop()
            curve = evidence.curves.get(curve_name)
            if curve is None:
                raise ModelRefused("unknown-curve", f"{label}: curve {curve_name!r} is not stored", evidence=key)
            delta_r, delta_sigma = offsets.pop()
            offset = ReservoirOffset(delta_r, delta_sigma) if (delta_r or delta_sigma) else None
            detail = {"lab_codes": [d.lab_code for d in dets]}
            if len(dets) > 1:
                comb = combine_determinations([d.cra for d in dets], [d.sigma for d in dets],
                                              labels=[d.lab_code for d in dets])
                if not comb.consistent:
                    raise ModelRefused("inconsistent-determinations", comb.verdict, evidence=key,
                                       combination=comb.as_dict())
                cra, sigma = comb.mean, comb.sigma
                detail["combination"] = comb.as_dict()
            else:
                cra, sigma = dets[0].cra, dets[0].sigma
            terms.append(_radiocarbon_term(key, label, context, usage, float(cra), float(sigma), curve_name, curve,
                                           offset, detail))
        elif kind == "calendar":
            d = evidence.calendar.get(number)
            if d is None:
                raise ModelRefused("unknown-evidence", f"no calendar date {number} at this revision", evidence=key)
            terms.append(_calendar_term(key, d, usage))
        else:
            t = evidence.termini.get(number)
            if t is None:
                raise ModelRefused("unknown-evidence", f"no terminus {number} at this revision", evidence=key)
            terms.append(_terminus_term(key, t, usage))
        if terms[-1].kind == "radiocarbon":
            for lab in terms[-1].detail["lab_codes"]:
                if lab in used_labs:
                    raise ModelRefused("evidence-used-twice", f"{lab} is used twice (on its own and in its sample's "
                                       "combination)", evidence=key, lab_code=lab)
                used_labs.add(lab)
        if terms[-1].context not in known_contexts:
            raise ModelRefused("unknown-context", f"{key}: its context {terms[-1].context} is not in the record "
                               "at this revision", evidence=key, context=terms[-1].context)
    return terms


def _calendar_term(key: str, d: CalendarDate, usage: Usage) -> Term:
    label = d.label or key
    form = d.form
    if form == "normal":
        def build(grid, lo, hi):
            ll = normal_date(grid, d.mean, d.sd, label=label).log_values
            out = None
            if usage.outlier_prior > 0:
                out = normal_date(grid, d.mean, d.sd * OUTLIER_SIGMA_FACTOR, label=label).log_values
            return ll, out
        support = (d.mean - 6 * d.sd, d.mean + 6 * d.sd)
        detail = {"mean": d.mean, "sd": d.sd}
    elif form == "uniform":
        def build(grid, lo, hi):
            ll = uniform_date(grid, d.start, d.end, label=label).log_values
            return ll, (_flat(grid, lo, hi) if usage.outlier_prior > 0 else None)
        support = (d.start, d.end)
        detail = {"start": d.start, "end": d.end}
    elif form == "fixed":
        def build(grid, lo, hi):
            ll = fixed_date(grid, d.year, label=label).log_values
            return ll, (_flat(grid, lo, hi) if usage.outlier_prior > 0 else None)
        support = (d.year, d.year)
        detail = {"year": d.year}
    else:
        raise ModelRefused("invalid-evidence", f"unknown calendar date form {form!r}", evidence=key)
    return Term(key, label, form, d.context_id, usage.use, usage.outlier_prior, build, support, None, detail)


def _terminus_term(key: str, t: Terminus, usage: Usage) -> Term:
    kind = {"post_quem": "tpq", "ante_quem": "taq"}.get(t.kind, t.kind)
    if kind not in ("tpq", "taq"):
        raise ModelRefused("invalid-evidence", f"unknown terminus kind {t.kind!r}", evidence=key)
    label = t.label or f"{kind.upper()} {t.year:g}"
    fn = terminus_post_quem if kind == "tpq" else terminus_ante_quem

    def build(grid, lo, hi):
        ll = fn(grid, t.year, label=label).log_values
        return ll, (_flat(grid, lo, hi) if usage.outlier_prior > 0 else None)
    return Term(key, label, kind, t.context_id, usage.use, usage.outlier_prior, build, (t.year, t.year), None,
                 {"year": t.year})
