"""From a committed interpretation to the engine's chronological model.

Two layers:

* :func:`build_model` is plain data in, plain data out: the record at the
  version's revision (engine ``ContextData``/``RelationshipData``), the
  version's content normalised to :class:`ModelSpec`, the dating evidence as
  :class:`EvidenceSet` and the calibration curves.  It never touches the
  database, so it is tested directly.
* :func:`compile_version` reads those from the database (record snapshot at
  the version's revision, evidence as it stood then) and calls it.

What the translation does:

1. The order: the record is compiled under the version's
   :class:`~chronology.engine.temporal_graph.OrderPolicy` (accepted and
   rejected uncertain relationships, set-aside relationships, extra
   orderings) and the order among the contexts the model uses is the order
   the *whole* record induces on them (``induced_order``), so dated contexts
   far apart in the sequence are ordered through the undated ones between.
   Contexts the record merges into one node (``same as`` or accepted
   equalities) become one event.
2. The evidence: each usage ``{evidence: "<kind>:<id>", use, outlier_prior}``
   becomes one likelihood on the calendar grid.  A sample with several
   radiocarbon determinations is combined first (Ward & Wilson 1978) so the
   curve error is counted once; an inconsistent set is refused.
3. Outliers (Christen 1994): the outlier component of a term is the same
   evidence with its error inflated by :data:`OUTLIER_SIGMA_FACTOR` — a
   normal shift ``δ ~ N(0, (k² − 1) σ²)`` integrated out, in radiocarbon
   years for a determination (the curve's own error is not inflated) and
   calendar years for a normal calendar date — so the term is a
   mixture of the precise likelihood and a broad normal one.  Termini,
   uniform and fixed dates have no error to inflate; their outlier component
   is flat over the overall range.  The factor 10 is our choice (common
   practice is "broad compared with the error"), archived in every model.
4. The overall range ``L..U``: ``ModelSpec.range`` when given (version
   documents do not carry one yet), else the extent of the bounded evidence
   (radiocarbon likelihoods within about 6σ of their peak, calendar dates,
   termini) padded on each side by half its width (at least
   :data:`MIN_RANGE_PAD` years), kept inside every curve used.  The grid
   step follows the range's width (1 year up to 1500 years, then 2, 5, 10).
5. Refusals are :class:`ModelRefused` with a stable code and the details:
   409 for order conflicts (``cycle``, ``model-cycle``,
   ``equal-contexts-in-two-phases``, ``version-not-committed``), 422 for
   the evidence (``no-evidence``, ``outside-curve``,
   ``evidence-outside-grid``, ``empty-support``,
   ``inconsistent-determinations``, ``evidence-used-twice``,
   ``unknown-evidence``, ``unsupported-evidence`` ...).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

from chronology.engine.calibration import ReservoirOffset, curve_on_grid, log_likelihood
from chronology.engine.checks import check_order
from chronology.engine.combination import combine_determinations
from chronology.engine.curves import Curve
from chronology.engine.errors import EngineError
from chronology.engine.evidence_likelihoods import (
    fixed_date,
    normal_date,
    radiocarbon_likelihood,
    terminus_ante_quem,
    terminus_post_quem,
    uniform_date,
)
from chronology.engine.grid import CalendarGrid
from chronology.engine.induced import induced_classes, induced_order
from chronology.engine.model import Model
from chronology.engine.labels import label_list
from chronology.engine.legacy_names import read_content
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, beginning_key, compile_model
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.temporal_graph import OrderPolicy, compile_order
from chronology.runs.questions import compile_questions

__all__ = [
    "OUTLIER_SIGMA_FACTOR",
    "MIN_RANGE_PAD",
    "ModelRefused",
    "Determination",
    "Sample",
    "CalendarDate",
    "Terminus",
    "EvidenceSet",
    "PhaseSpec",
    "Usage",
    "ModelSpec",
    "CompiledModel",
    "build_model",
    "spec_from_content",
    "compile_version",
]

#: The outlier component's error is this many times the evidence's own (Christen 1994 mixture).
OUTLIER_SIGMA_FACTOR = 10.0
#: Least padding of the derived overall range on each side, in years.
MIN_RANGE_PAD = 200.0
# Support of a likelihood when deriving the range: within 6 sigma of its peak.
_SUPPORT_DROP = 18.0
USES = ("included", "excluded", "residual", "intrusive")
ARRANGEMENTS = ("sequential", "contiguous", "overlapping")
_KIND_ALIASES = {"sample": "sample", "determination": "determination", "calendar_date": "calendar",
                 "terminus": "terminus"}


class ModelRefused(Exception):
    """The version cannot become a model; ``status`` is 409 (order conflict) or 422 (evidence)."""

    def __init__(self, code: str, message: str, *, status: int = 422, **details):
        super().__init__(message)
        self.code, self.message, self.status, self.details = code, message, status, details

    def as_dict(self) -> dict:
        return {"code": self.code, "message": self.message, **self.details}

    @classmethod
    def from_engine(cls, exc: EngineError) -> "ModelRefused":
        order_codes = {"cycle", "model-cycle", "contradiction", "order-error"}
        details = {k: v for k, v in exc.details.items() if k not in ("code", "message", "status")}
        return cls(exc.code, exc.message, status=409 if exc.code in order_codes else 422, **details)


# ---------------------------------------------------------------------------
# plain inputs
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Determination:
    """A radiocarbon determination; ``curve`` names an entry of ``EvidenceSet.curves``."""

    id: int
    lab_code: str
    cra: float
    sigma: float
    curve: str
    sample_id: int | None = None
    context_id: int | None = None
    delta_r: float = 0.0
    delta_r_sigma: float = 0.0


@dataclass(frozen=True)
class Sample:
    id: int
    context_id: int
    label: str = ""


@dataclass(frozen=True)
class CalendarDate:
    """A calendar date on a context: ``normal`` (mean ± sd), ``uniform`` (start..end) or ``fixed`` (year)."""

    id: int
    context_id: int
    form: str
    label: str = ""
    mean: float | None = None
    sd: float | None = None
    start: float | None = None
    end: float | None = None
    year: float | None = None


@dataclass(frozen=True)
class Terminus:
    """A terminus post quem (``tpq``) or ante quem (``taq``) for a context, astronomical year."""

    id: int
    context_id: int
    kind: str
    year: float
    label: str = ""


@dataclass
class EvidenceSet:
    samples: dict[int, Sample] = field(default_factory=dict)
    determinations: dict[int, Determination] = field(default_factory=dict)
    calendar: dict[int, CalendarDate] = field(default_factory=dict)
    termini: dict[int, Terminus] = field(default_factory=dict)
    curves: dict[str, Curve] = field(default_factory=dict)
    unsupported: dict[int, str] = field(default_factory=dict)

    def sample_determinations(self, sample_id: int) -> list[Determination]:
        return sorted((d for d in self.determinations.values() if d.sample_id == sample_id), key=lambda d: d.id)


@dataclass(frozen=True)
class PhaseSpec:
    key: str
    label: str
    members: tuple[int, ...]
    arrangement_next: str | None = None


@dataclass(frozen=True)
class Usage:
    evidence: str
    use: str = "included"
    outlier_prior: float = 0.0
    context: int | None = None


@dataclass
class ModelSpec:
    """A version's content, normalised (see :func:`spec_from_content`)."""

    phases: list[PhaseSpec] = field(default_factory=list)
    usages: list[Usage] = field(default_factory=list)
    policy: OrderPolicy = field(default_factory=OrderPolicy)
    undated: tuple = ()
    questions: list[dict] = field(default_factory=list)
    boundary_order: tuple = ()
    range: tuple[float, float] | None = None
    grid_step: float | None = None
    prior: str = "span-uniform"
    notes: tuple = ()


@dataclass(frozen=True, eq=False)
class CompiledModel:
    """The model and what it was built from, for the run record."""

    model: Model
    curves: tuple[dict, ...]
    notes: tuple[str, ...]
    evidence: tuple[dict, ...]
    question_labels: dict = field(default_factory=dict)
    record_revision: int | None = None

    @property
    def model_hash(self) -> str:
        return self.model.spec_hash()


# ---------------------------------------------------------------------------
# content normalisation
# ---------------------------------------------------------------------------
def _arrangement(phase: dict) -> tuple[str | None, float | None]:
    to_next = phase.get("to_next")
    if not to_next:
        return None, None
    return to_next.get("arrangement"), to_next.get("min_gap")


def spec_from_content(content: dict, relationships: list[RelationshipData], context_ids: set[int]) -> ModelSpec:
    """Normalise a validated version document (``chronology.interpretations.content``) to a :class:`ModelSpec`.

    The order policy is the interpretation's own (``content.order_policy``):
    every equality and uncertain relationship decided, defaults included.
    """
    from chronology.interpretations.content import order_policy

    content = read_content(content or {})
    members: dict[str, list[int]] = {}
    for a in content.get("assignments") or ():
        members.setdefault(a["phase"], []).append(int(a["context"]))
    phases, boundary_order, notes = [], [], []
    raw_phases = list(content.get("phases") or ())
    for j, p in enumerate(raw_phases):
        arrangement, gap = _arrangement(p)
        if arrangement not in ARRANGEMENTS and arrangement is not None:
            raise ModelRefused("invalid-input", f"unknown arrangement {arrangement!r}", phase=p["key"])
        if gap:
            notes.append(f"phase {p['key']}: a minimum gap of {gap:g} years to the next phase is not modelled "
                         "(only the order of the boundaries is)")
        if arrangement == "overlapping" and j + 1 < len(raw_phases):
            # overlapping phases keep independent boundaries; their starts are in order
            boundary_order.append((beginning_key(p["key"]), beginning_key(raw_phases[j + 1]["key"]), False))
        phases.append(PhaseSpec(str(p["key"]), str(p.get("name") or p["key"]), tuple(members.get(p["key"], ())),
                                arrangement))
    usages = [Usage(str(u["evidence"]), str(u.get("use") or "included"), float(u.get("outlier_prior") or 0.0))
              for u in content.get("evidence") or ()]
    for u in usages:
        if u.use not in USES:
            raise ModelRefused("invalid-input", f"unknown evidence use {u.use!r}", evidence=u.evidence)
    policy = order_policy(content, {r.id: r for r in relationships}, contexts=set(context_ids))
    return ModelSpec(
        phases=phases,
        usages=usages,
        policy=policy,
        undated=tuple(int(c) for c in content.get("estimate") or ()),
        questions=[dict(q) for q in content.get("questions") or ()],
        boundary_order=tuple(boundary_order),
        notes=tuple(notes),
    )


# ---------------------------------------------------------------------------
# evidence to likelihoods
# ---------------------------------------------------------------------------
@dataclass
class _Term:
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
    kind = _KIND_ALIASES.get(kind.strip().lower())
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


def _radiocarbon_term(key, label, context, usage, cra, sigma, curve_name, curve: Curve, offset, detail) -> _Term:
    def build(grid, lo, hi):
        on_grid = curve_on_grid(curve, grid)
        ll = radiocarbon_likelihood(grid, cra, sigma, on_grid, offset=offset, label=label).log_values
        out = log_likelihood(cra, sigma * OUTLIER_SIGMA_FACTOR, on_grid, offset) if usage.outlier_prior > 0 else None
        return ll, out
    return _Term(key, label, "radiocarbon", context, usage.use, usage.outlier_prior, build, None, curve_name,
                 {"cra": cra, "sigma": sigma, "curve": curve.name, "curve_checksum": curve.checksum, **detail})


def _terms(reading: ModelSpec, evidence: EvidenceSet, known_contexts: set) -> list[_Term]:
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


def _calendar_term(key: str, d: CalendarDate, usage: Usage) -> _Term:
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
    return _Term(key, label, form, d.context_id, usage.use, usage.outlier_prior, build, support, None, detail)


def _terminus_term(key: str, t: Terminus, usage: Usage) -> _Term:
    kind = {"post_quem": "tpq", "ante_quem": "taq"}.get(t.kind, t.kind)
    if kind not in ("tpq", "taq"):
        raise ModelRefused("invalid-evidence", f"unknown terminus kind {t.kind!r}", evidence=key)
    label = t.label or f"{kind.upper()} {t.year:g}"
    fn = terminus_post_quem if kind == "tpq" else terminus_ante_quem

    def build(grid, lo, hi):
        ll = fn(grid, t.year, label=label).log_values
        return ll, (_flat(grid, lo, hi) if usage.outlier_prior > 0 else None)
    return _Term(key, label, kind, t.context_id, usage.use, usage.outlier_prior, build, (t.year, t.year), None,
                 {"year": t.year})


def _curve_extent(curves: Iterable[Curve]) -> tuple[float, float] | None:
    curves = list(curves)
    if not curves:
        return None
    return max(c.oldest_year for c in curves), min(c.youngest_year for c in curves)


def _radiocarbon_support(term: _Term, curve: Curve) -> tuple[float, float]:
    # on the curve's own extent at 5-year spacing: cheap, and shows an event outside every curve
    lo, hi = curve.oldest_year, curve.youngest_year
    step = 5.0 if hi - lo > 50 else 1.0
    grid = CalendarGrid.spanning(lo + step, hi - step, step)
    ll, _ = term.build(grid, lo, hi)
    years = grid.years[ll >= ll.max() - _SUPPORT_DROP]
    return float(years.min()), float(years.max())


def _auto_step(span: float) -> float:
    for limit, step in ((1500, 1.0), (3000, 2.0), (15000, 5.0), (60000, 10.0)):
        if span <= limit:
            return step
    return 20.0


def _choose_grid(reading: ModelSpec, terms: list[_Term], evidence: EvidenceSet) -> tuple[CalendarGrid, float, float]:
    used_curves = [evidence.curves[t.curve] for t in terms if t.curve is not None]
    extent = _curve_extent(used_curves)
    if reading.range is not None:
        lo, hi = reading.range
        if not hi > lo:
            raise ModelRefused("invalid-range", "the overall range needs lo < hi", range=[lo, hi])
    else:
        supports = []
        for t in terms:
            if t.use == "excluded":
                continue
            supports.append(t.support if t.support is not None else _radiocarbon_support(t, evidence.curves[t.curve]))
        if not supports:
            raise ModelRefused("no-evidence", "the version uses no dating evidence", status=422)
        lo, hi = min(s[0] for s in supports), max(s[1] for s in supports)
        pad = max(0.5 * (hi - lo), MIN_RANGE_PAD)
        lo, hi = lo - pad, hi + pad
        if extent is not None:
            lo, hi = max(lo, extent[0] + 1), min(hi, extent[1] - 1)
    if extent is not None and (lo < extent[0] or hi > extent[1]):
        raise ModelRefused("range-outside-curve", "the overall range runs beyond the calibration curve",
                           range=[lo, hi], curve_extent=list(extent))
    step = reading.grid_step or _auto_step(hi - lo)
    start = math.floor(lo / step) * step
    if extent is not None and start < extent[0]:
        start += step
    end = math.ceil(hi / step) * step
    if extent is not None and end > extent[1]:
        end -= step
    grid = CalendarGrid.spanning(start, end, step)
    return grid, grid.start, grid.end


def build_model(
    contexts: list[ContextData],
    relationships: list[RelationshipData],
    reading: ModelSpec,
    evidence: EvidenceSet,
) -> CompiledModel:
    """Compile one reading of the record and its evidence into a model.

    Raises
    ------
    ModelRefused
        With the engine's code (``cycle``, ``model-cycle``, ``no-evidence``,
        ``outside-curve``, ``empty-support`` ...) or our own
        (``unknown-evidence``, ``inconsistent-determinations``,
        ``unknown-context``, ``equal-contexts-in-two-phases``) and a status
        of 409 for order conflicts, 422 otherwise.
    """
    try:
        return _build(contexts, relationships, reading, evidence)
    except EngineError as exc:
        raise ModelRefused.from_engine(exc) from exc


def _build(contexts, relationships, reading: ModelSpec, evidence: EvidenceSet) -> CompiledModel:
    labels = {c.id: c.label for c in contexts}
    known = set(labels)
    notes: list[str] = list(reading.notes)
    terms = _terms(reading, evidence, known)
    if not any(t.use != "excluded" for t in terms):
        raise ModelRefused("no-evidence", "the version uses no dating evidence (every item is excluded or none "
                           "is named)", status=422)
    # Events are the dated contexts and the undated ones the version asks to
    # estimate; other phased contexts still order them through the induced
    # order, but carry no event of their own.
    chosen = set(reading.undated)
    chosen.update(t.context for t in terms)
    phased = {c for p in reading.phases for c in p.members}
    unknown = sorted(c for c in chosen | phased if c not in known)
    if unknown:
        raise ModelRefused("unknown-context", "the version names contexts not in the record at its revision",
                           contexts=unknown)
    graph = compile_order(contexts, relationships, reading.policy)
    report = check_order(graph)
    if not report.acyclic:
        # name the relationships that close the cycle, not only that there is one
        report.raise_for_errors()
        issue = report.issues[0] if report.issues else None
        if issue is not None:
            raise ModelRefused("cycle", issue.message, status=409, cycle=[s.as_dict() for s in issue.path],
                               contexts=list(issue.contexts))
    pairs = induced_order(graph, sorted(chosen))
    rep: dict[int, int] = {c: c for c in chosen}
    for group in induced_classes(graph, sorted(chosen)):
        head = min(group)
        for c in group:
            rep[c] = head
        notes.append("contexts " + ", ".join(labels[c] for c in sorted(group)) + " are one event (equal under this interpretation)")
    order = sorted({(rep[a], rep[b], s) for a, b, s in pairs if rep[a] != rep[b]})
    event_labels = {}
    for c in chosen:
        event_labels.setdefault(rep[c], [])
        event_labels[rep[c]].append(labels[c])
    event_labels = {k: label_list(v) for k, v in event_labels.items()}

    phase_of: dict[int, str] = {}
    phases = []
    for p in reading.phases:
        members = []
        for c in p.members:
            if c not in chosen:
                continue
            r = rep[c]
            if phase_of.get(r, p.key) != p.key:
                raise ModelRefused("equal-contexts-in-two-phases",
                                   f"{event_labels[r]} is one event but is assigned to phases {phase_of[r]} and {p.key}",
                                   status=409, context=r, phases=[phase_of[r], p.key])
            if r not in phase_of:
                phase_of[r] = p.key
                members.append(r)
        phases.append(PhaseInput(p.key, tuple(members), p.arrangement_next, p.label))

    grid, lo, hi = _choose_grid(reading, terms, evidence)
    inputs, table = [], []
    for t in terms:
        row = {"key": t.key, "label": t.label, "kind": t.kind, "context": t.context,
               "context_label": labels[t.context], "event": f"ctx:{rep[t.context]}", "use": t.use,
               "outlier_prior": t.outlier_prior, **t.detail}
        table.append(row)
        if t.use == "excluded":
            inputs.append(EvidenceInput(t.key, rep[t.context], np.zeros(grid.n), "excluded", label=t.label,
                                        kind=t.kind))
            continue
        ll, out = t.build(grid, lo, hi)
        inputs.append(EvidenceInput(t.key, rep[t.context], ll, t.use, t.outlier_prior if out is not None else 0.0,
                                    out, t.label, t.kind))
    questions, question_labels = compile_questions(reading, rep, terms, event_labels)
    model = compile_model(
        grid, phases=phases, order=order, evidence=inputs, range_lo=lo, range_hi=hi,
        undated=sorted({rep[c] for c in reading.undated}), questions=questions,
        context_labels=event_labels, prior=reading.prior, boundary_order=reading.boundary_order,
    )
    curves = []
    for name in sorted({t.curve for t in terms if t.curve is not None and t.use != "excluded"}):
        info = evidence.curves[name].describe()
        curves.append({"key": name, **info})
    if any(c.get("synthetic") for c in curves):
        notes.append("a SYNTHETIC calibration curve was used: the dates are for demonstration only")
    notes.append(f"outlier component: the evidence's error times {OUTLIER_SIGMA_FACTOR:g} (Christen 1994 mixture); "
                 "flat over the range for termini, uniform and fixed dates")
    return CompiledModel(model, tuple(curves), tuple(notes), tuple(table), question_labels)


# ---------------------------------------------------------------------------
# the database side
# ---------------------------------------------------------------------------
def compile_version(version) -> CompiledModel:
    """Compile a committed interpretation version from the database.

    Raises
    ------
    ModelRefused
        ``version-not-committed`` for a draft, or any refusal of :func:`build_model`.
    """
    from chronology.runs import sources
    from projects.record.reads import snapshot

    project, revision, content = sources.version_parts(version)
    contexts, relationships = snapshot(project, revision)
    evidence = sources.evidence_at(project, revision)
    try:
        reading = spec_from_content(content, relationships, {c.id for c in contexts})
    except EngineError as exc:
        raise ModelRefused.from_engine(exc) from exc
    return dataclasses.replace(build_model(contexts, relationships, reading, evidence), record_revision=revision)
