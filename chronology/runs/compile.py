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
4. The overall range ``L..U`` (:mod:`~chronology.runs.compile_range`).
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

import numpy as np

from chronology.engine.checks import check_order
from chronology.engine.errors import EngineError
from chronology.engine.induced import induced_classes, induced_order
from chronology.engine.labels import label_list
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.temporal_graph import compile_order

from . import sources
from .compile_content import ARRANGEMENTS, USES, spec_from_content
from .compile_evidence import OUTLIER_SIGMA_FACTOR, evidence_terms
from .compile_questions import compile_questions
from .compile_range import MIN_RANGE_PAD, choose_grid
from .model_inputs import (
    CalendarDate,
    CompiledModel,
    Determination,
    EvidenceSet,
    ModelRefused,
    ModelSpec,
    PhaseSpec,
    Sample,
    Terminus,
    Usage,
)

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
    "USES",
    "ARRANGEMENTS",
]


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
    terms = evidence_terms(reading, evidence, known)
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

    grid, lo, hi = choose_grid(reading, terms, evidence)
    if reading.range is not None:
        notes.append(f"overall range set by the version: {lo:g} to {hi:g} (astronomical years)")
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
        bound = t.detail.get("year") if t.kind in ("tpq", "taq") else None
        inputs.append(EvidenceInput(t.key, rep[t.context], ll, t.use, t.outlier_prior if out is not None else 0.0,
                                    out, t.label, t.kind, bound))
    questions, question_labels = compile_questions(reading, rep, terms, event_labels)
    model = compile_model(
        grid, phases=phases, order=order, evidence=inputs, range_lo=lo, range_hi=hi,
        undated=sorted({rep[c] for c in reading.undated}), questions=questions,
        context_labels=event_labels, prior=reading.prior, boundary_order=reading.boundary_order,
        interval_priors=reading.interval_priors,
    )
    curves = []
    for name in sorted({t.curve for t in terms if t.curve is not None and t.use != "excluded"}):
        info = evidence.curves[name].describe()
        curves.append({"key": name, **info})
    if any(c.get("synthetic") for c in curves):
        notes.append("a SYNTHETIC calibration curve was used: the dates are for demonstration only")
    notes.append(f"outlier component: the evidence's error times {OUTLIER_SIGMA_FACTOR:g} (Christen 1994 mixture); "
                 "flat over the range for termini, uniform and fixed dates")
    return CompiledModel(model, tuple(curves), tuple(notes), tuple(table), question_labels,
                         context_events={c: f"ctx:{rep[c]}" for c in chosen})


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
    from projects.record.reads import snapshot

    project, revision, content = sources.version_parts(version)
    contexts, relationships = snapshot(project, revision)
    evidence = sources.evidence_at(project, revision)
    try:
        reading = spec_from_content(content, relationships, {c.id for c in contexts})
    except EngineError as exc:
        raise ModelRefused.from_engine(exc) from exc
    return dataclasses.replace(build_model(contexts, relationships, reading, evidence), record_revision=revision)
