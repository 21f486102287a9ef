"""Build a :class:`~chronology.engine.model.Model` from plain inputs.

Inputs are the phases (in order, each with its arrangement to the next), the
order among the contexts the model uses (already induced by the order
engine), each context's evidence as log-likelihood arrays with a usage flag,
the undated contexts to estimate and the questions.  The compiler adds the
phase boundaries and their constraints, turns residual and intrusive samples
into one-sidedly constrained offset events (Bronk Ramsey 2009b), and refuses
a model that cannot be sampled with a :class:`ModelError`:

``model-cycle``
    the constraints close a cycle (``details['cycle']``);
``no-evidence``
    no evidence is used at all (ask for a prior-only model instead);
``empty-support``
    an event's likelihood has no mass where its order allows it to lie
    (``details['event']``);
``invalid-input``
    malformed input (unknown phase, bad array length, ...).

Event keys: ``ctx:<id>`` for contexts, ``beginning:<phase>`` and
``close:<phase>`` for boundaries, ``changeover:<a>:<b>`` for the boundary two
contiguous phases share, ``sample:<evidence key>`` for residual/intrusive
samples.  Boundary labels read "Beginning of <phase>", "Close of <phase>" and
"Changeover <a> to <b>".
"""

from __future__ import annotations

from collections import defaultdict, deque
from dataclasses import dataclass
from typing import Hashable, Sequence

import numpy as np

from chronology.engine.errors import ModelError
from chronology.engine.grid import CalendarGrid
from chronology.engine.interval_priors import INTERVAL_KINDS, check_parameters
from chronology.engine.model import (
    ARRANGEMENTS,
    PRIORS,
    QUESTION_KINDS,
    Constraint,
    Event,
    Evidence,
    IntervalPrior,
    Model,
    Phase,
    Question,
)

__all__ = [
    "USAGES",
    "PhaseInput",
    "EvidenceInput",
    "QuestionInput",
    "IntervalPriorInput",
    "context_key",
    "beginning_key",
    "close_key",
    "changeover_key",
    "compile_model",
    "feasible_bounds",
    "topological_order",
]

USAGES = ("included", "excluded", "residual", "intrusive")


@dataclass(frozen=True)
class PhaseInput:
    """A phase: key, label, member context ids and arrangement with the next phase."""

    key: str
    members: tuple[Hashable, ...]
    arrangement_next: str | None = None
    label: str = ""


@dataclass(frozen=True, eq=False)
class EvidenceInput:
    """One likelihood term on one context (see :class:`~chronology.engine.model.Evidence`)."""

    key: str
    context: Hashable
    loglik: np.ndarray
    usage: str = "included"
    outlier_prior: float = 0.0
    outlier_loglik: np.ndarray | None = None
    label: str = ""
    kind: str = "radiocarbon"
    bound: float | None = None


@dataclass(frozen=True)
class QuestionInput:
    """``duration`` of phase ``a``; ``gap`` from ``a`` to ``b``; ``precedence`` P(a before b).

    ``a``/``b`` are context ids or event keys (e.g. ``beginning:P1``).
    """

    kind: str
    a: Hashable
    b: Hashable | None = None
    key: str | None = None


@dataclass(frozen=True)
class IntervalPriorInput:
    """A prior density on the ``duration`` of phase ``phase`` or on the ``gap`` after it.

    ``parameters`` by name, e.g. ``{"min": 50, "max": 250}`` (see
    :data:`chronology.engine.interval_priors.DISTRIBUTIONS`).  A gap prior
    needs the phase to be ``sequential`` with the next one.
    """

    phase: str
    kind: str
    distribution: str
    parameters: dict


def context_key(ctx: Hashable) -> str:
    """The event key of context ``ctx``."""
    return f"ctx:{ctx}"


def beginning_key(phase: str) -> str:
    """The event key of the beginning boundary of ``phase``."""
    return f"beginning:{phase}"


def close_key(phase: str) -> str:
    """The event key of the close boundary of ``phase``."""
    return f"close:{phase}"


def changeover_key(phase: str, next_phase: str) -> str:
    """The event key of the boundary contiguous phases ``phase`` and ``next_phase`` share."""
    return f"changeover:{phase}:{next_phase}"


def _fail(code: str, message: str, **details):
    raise ModelError(message, code=code, details=details)


def _check_array(name: str, arr, n: int) -> np.ndarray:
    a = np.asarray(arr, dtype=float)
    if a.shape != (n,):
        _fail("invalid-input", f"{name}: log-likelihood must have the grid's length {n}", evidence=name)
    if np.isnan(a).any() or np.isposinf(a).any():
        _fail("invalid-input", f"{name}: log-likelihood holds NaN or +inf", evidence=name)
    return a


def compile_model(
    grid: CalendarGrid,
    *,
    phases: Sequence[PhaseInput],
    order: Sequence[tuple[Hashable, Hashable, bool]],
    evidence: Sequence[EvidenceInput],
    range_lo: float,
    range_hi: float,
    undated: Sequence[Hashable] = (),
    questions: Sequence[QuestionInput] = (),
    context_labels: dict | None = None,
    prior: str = "span-uniform",
    boundary_order: Sequence[tuple[str, str, bool]] = (),
    prior_only: bool = False,
    interval_priors: Sequence[IntervalPriorInput] = (),
) -> Model:
    """Compile plain inputs into a :class:`Model`.

    Parameters
    ----------
    grid : CalendarGrid
        The grid every log-likelihood array is evaluated on.
    phases : sequence of PhaseInput
        In chronological order; ``arrangement_next`` links a phase with the
        following one: ``sequential`` (``end_j <= start_j+1``), ``contiguous``
        (one shared boundary) or ``overlapping``/``None`` (no link).
    order : sequence of (earlier_ctx, later_ctx, strict)
        The induced order among the contexts.
    evidence : sequence of EvidenceInput
        ``excluded`` terms are recorded but not used.
    range_lo, range_hi : float
        Overall range ``L..U`` (astronomical years); must lie on the grid.
    undated : sequence
        Contexts without evidence to estimate from order only.  Any other
        context named in the phases or the order without usable evidence is
        treated as undated too.
    questions : sequence of QuestionInput
    context_labels : dict, optional
        Display label per context id.
    prior : {"span-uniform", "uniform"}
    boundary_order : sequence of (earlier_key, later_key, strict)
        Extra asserted order between event keys, e.g. for overlapping phases
        (``("beginning:P1", "beginning:P2", False)``).
    prior_only : bool
        Drop every likelihood (a prior-only run); ``no-evidence`` is not raised.
    interval_priors : sequence of IntervalPriorInput
        Prior densities on phase durations and on gaps to the next phase,
        multiplying the boundary prior (:mod:`chronology.engine.priors`).

    Returns
    -------
    Model

    Raises
    ------
    ModelError
        With code ``model-cycle``, ``no-evidence``, ``empty-support`` or ``invalid-input``.
    """
    if prior not in PRIORS:
        _fail("invalid-input", f"unknown prior {prior!r}")
    half = grid.step / 2
    if not (grid.start - half <= range_lo < range_hi <= grid.end + half):
        _fail("invalid-input", "the overall range must lie inside the grid", range=[range_lo, range_hi])
    labels = context_labels or {}
    phase_keys = [p.key for p in phases]
    if len(set(phase_keys)) != len(phase_keys):
        _fail("invalid-input", "phase keys must be unique")
    for p in phases:
        if p.arrangement_next is not None and p.arrangement_next not in ARRANGEMENTS:
            _fail("invalid-input", f"unknown arrangement {p.arrangement_next!r}", phase=p.key)

    # contexts in first-seen order, so the model order is stable
    contexts: dict = {}
    ctx_phase: dict = {}
    for p in phases:
        for c in p.members:
            if c in ctx_phase:
                _fail("invalid-input", f"context {c} is in two phases", context=str(c))
            ctx_phase[c] = p.key
            contexts.setdefault(c, None)
    for a, b, _ in order:
        contexts.setdefault(a, None)
        contexts.setdefault(b, None)
    for c in undated:
        contexts.setdefault(c, None)

    direct: dict = defaultdict(list)
    offsets: list = []
    excluded: list = []
    seen_keys: set = set()
    for ev in evidence:
        if ev.usage not in USAGES:
            _fail("invalid-input", f"unknown usage {ev.usage!r}", evidence=ev.key)
        if ev.key in seen_keys:
            _fail("invalid-input", f"evidence key {ev.key} is used twice", evidence=ev.key)
        seen_keys.add(ev.key)
        if ev.usage == "excluded" or prior_only:
            excluded.append(ev.key)
            continue
        if not 0.0 <= ev.outlier_prior < 1.0:
            _fail("invalid-input", "outlier prior must be in [0, 1)", evidence=ev.key)
        ll = _check_array(ev.key, ev.loglik, grid.n)
        oll = None
        if ev.outlier_loglik is not None and ev.outlier_prior > 0:
            oll = _check_array(ev.key, ev.outlier_loglik, grid.n)
        term = Evidence(ev.key, ll, oll, float(ev.outlier_prior) if oll is not None else 0.0, ev.label, ev.kind,
                        None if ev.bound is None else float(ev.bound))
        contexts.setdefault(ev.context, None)
        if ev.usage == "included":
            direct[ev.context].append(term)
        else:
            offsets.append((ev, term))
    if not prior_only and not direct and not offsets:
        _fail("no-evidence", "the model uses no dating evidence; compile a prior-only model instead")

    events: list[Event] = []
    constraints: list[Constraint] = []
    # boundaries, sharing one where phases are contiguous
    starts: dict = {}
    ends: dict = {}
    for j, p in enumerate(phases):
        if p.key not in starts:
            starts[p.key] = beginning_key(p.key)
            events.append(Event(starts[p.key], "boundary", f"Beginning of {p.label or p.key}", p.key))
        nxt = phases[j + 1] if j + 1 < len(phases) else None
        if nxt is not None and p.arrangement_next == "contiguous":
            shared = changeover_key(p.key, nxt.key)
            ends[p.key] = starts[nxt.key] = shared
            events.append(Event(shared, "boundary", f"Changeover {p.label or p.key} to {nxt.label or nxt.key}",
                                p.key))
        else:
            ends[p.key] = close_key(p.key)
            events.append(Event(ends[p.key], "boundary", f"Close of {p.label or p.key}", p.key))
            if nxt is not None and p.arrangement_next == "sequential":
                constraints.append(Constraint(ends[p.key], beginning_key(nxt.key), False))
        constraints.append(Constraint(starts[p.key], ends[p.key], True))

    for c in contexts:
        terms = tuple(direct.get(c, ()))
        key = context_key(c)
        events.append(Event(key, "dated" if terms else "undated", str(labels.get(c, c)), ctx_phase.get(c), terms))
        if c in ctx_phase:
            ph = ctx_phase[c]
            constraints.append(Constraint(starts[ph], key, False))
            constraints.append(Constraint(key, ends[ph], False))
    for ev, term in offsets:
        key = f"sample:{ev.key}"
        ctx = context_key(ev.context)
        older = ev.usage == "residual"
        events.append(
            Event(key, "dated", ev.label or ev.key, None, (term,), offset_of=ctx,
                  offset_direction="older" if older else "younger")
        )
        constraints.append(Constraint(key, ctx, False) if older else Constraint(ctx, key, False))
    for a, b, strict in order:
        constraints.append(Constraint(context_key(a), context_key(b), bool(strict)))
    keys = {e.key for e in events}
    for a, b, strict in boundary_order:
        if a not in keys or b not in keys:
            _fail("invalid-input", f"unknown event in asserted order {a} -> {b}")
        constraints.append(Constraint(a, b, bool(strict)))

    intervals = _compile_intervals(interval_priors, phases, starts, ends)
    compiled_questions = tuple(_compile_question(q, keys, set(phase_keys), i) for i, q in enumerate(questions))
    model = Model(
        grid=grid,
        events=tuple(events),
        constraints=tuple(_dedupe(constraints)),
        phases=tuple(
            Phase(p.key, p.label or p.key, starts[p.key], ends[p.key],
                  tuple(context_key(c) for c in p.members), p.arrangement_next)
            for p in phases
        ),
        range_lo=float(range_lo),
        range_hi=float(range_hi),
        questions=compiled_questions,
        prior=prior,
        excluded_evidence=tuple(excluded),
        interval_priors=intervals,
    )
    feasible_bounds(model)  # raises on a cycle or an empty support
    return model


def _compile_intervals(inputs, phases, starts: dict, ends: dict) -> tuple[IntervalPrior, ...]:
    position = {p.key: j for j, p in enumerate(phases)}
    out, seen = [], set()
    for ip in inputs:
        if ip.phase not in position:
            _fail("invalid-input", f"interval prior on unknown phase {ip.phase!r}", phase=str(ip.phase))
        if ip.kind not in INTERVAL_KINDS:
            _fail("invalid-input", f"unknown interval kind {ip.kind!r}", phase=ip.phase)
        if (ip.phase, ip.kind) in seen:
            _fail("invalid-input", f"phase {ip.phase} has two {ip.kind} priors", phase=ip.phase)
        seen.add((ip.phase, ip.kind))
        try:
            params = check_parameters(ip.distribution, ip.parameters)
        except ModelError as exc:
            raise ModelError(exc.message, code=exc.code, details={"phase": ip.phase, "kind": ip.kind,
                                                                   **exc.details}) from exc
        j = position[ip.phase]
        if ip.kind == "duration":
            earlier, later = starts[ip.phase], ends[ip.phase]
        else:
            if j + 1 >= len(phases) or phases[j].arrangement_next != "sequential":
                _fail("invalid-input", "a gap prior needs a sequential arrangement with the next phase",
                      phase=ip.phase)
            earlier, later = ends[ip.phase], starts[phases[j + 1].key]
        out.append(IntervalPrior(ip.kind, ip.phase, earlier, later, ip.distribution, params))
    return tuple(out)


def _dedupe(constraints):
    seen = {}
    for c in constraints:
        k = (c.earlier, c.later)
        seen[k] = Constraint(c.earlier, c.later, c.strict or (k in seen and seen[k].strict))
    return list(seen.values())


def _resolve(ref, keys: set) -> str:
    if isinstance(ref, str) and ref in keys:
        return ref
    k = context_key(ref)
    if k not in keys:
        _fail("invalid-input", f"question refers to unknown event {ref}", ref=str(ref))
    return k


def _compile_question(q: QuestionInput, keys: set, phase_keys: set, i: int) -> Question:
    if q.kind not in QUESTION_KINDS:
        _fail("invalid-input", f"unknown question kind {q.kind!r}")
    if q.kind == "duration":
        if q.a not in phase_keys:
            _fail("invalid-input", f"duration of unknown phase {q.a}", phase=str(q.a))
        return Question(q.key or f"duration:{q.a}", "duration", str(q.a), None)
    a, b = _resolve(q.a, keys), _resolve(q.b, keys)
    return Question(q.key or f"{q.kind}:{a}:{b}", q.kind, a, b)


def topological_order(keys: Sequence[str], constraints: Sequence[Constraint]) -> list[int]:
    """Indices of ``keys`` in a topological order (Kahn 1962); raises ``model-cycle``."""
    index = {k: i for i, k in enumerate(keys)}
    succ = [[] for _ in keys]
    indeg = [0] * len(keys)
    for c in constraints:
        if c.earlier not in index or c.later not in index:
            _fail("invalid-input", f"constraint names an unknown event: {c.earlier} -> {c.later}")
        succ[index[c.earlier]].append(index[c.later])
        indeg[index[c.later]] += 1
    queue = deque(i for i, d in enumerate(indeg) if d == 0)
    out = []
    while queue:
        v = queue.popleft()
        out.append(v)
        for w in succ[v]:
            indeg[w] -= 1
            if indeg[w] == 0:
                queue.append(w)
    if len(out) < len(keys):
        _fail("model-cycle", "the order constraints close a cycle", cycle=_find_cycle(keys, succ, indeg))
    return out


def _find_cycle(keys, succ, indeg) -> list[str]:
    # every node left with indegree > 0 has a predecessor that is also left,
    # so walking predecessors must repeat a node: that closes a cycle
    remaining = {i for i, d in enumerate(indeg) if d > 0}
    pred = {i: [] for i in remaining}
    for v in remaining:
        for w in succ[v]:
            if w in remaining:
                pred[w].append(v)
    v = min(remaining)
    path, pos = [], {}
    while v not in pos:
        pos[v] = len(path)
        path.append(v)
        v = pred[v][0]
    cyc = path[pos[v]:] + [v]
    return [keys[i] for i in reversed(cyc)]


def _support_cells(ev: Event):
    total = np.zeros(0)
    for t in ev.evidence:
        ll = t.loglik if t.outlier_loglik is None else np.logaddexp(t.loglik, t.outlier_loglik)
        total = ll if total.size == 0 else total + ll
    return np.isfinite(total) if total.size else None


def feasible_bounds(model: Model) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """Earliest and latest feasible value of every event, and a topological order.

    Propagates ``L``/``U`` and each dated event's likelihood support (cells of
    non-zero likelihood) along the constraints, forward for the earliest and
    backward for the latest value.

    Raises
    ------
    ModelError
        ``model-cycle`` on a cycle, ``empty-support`` when an event has no
        likelihood mass where the order allows it.
    """
    keys = model.event_keys
    topo = topological_order(keys, model.constraints)
    index = {k: i for i, k in enumerate(keys)}
    preds = [[] for _ in keys]
    succs = [[] for _ in keys]
    for c in model.constraints:
        preds[index[c.later]].append(index[c.earlier])
        succs[index[c.earlier]].append(index[c.later])
    g = model.grid
    half = g.step / 2
    years = g.years
    support = [_support_cells(e) for e in model.events]
    lo = np.full(len(keys), model.range_lo)
    hi = np.full(len(keys), model.range_hi)

    def cells_from(mask, a, b):
        # cells overlapping [a, b] that have non-zero likelihood
        return mask & (years + half > a) & (years - half < b)

    for v in topo:
        a = max([model.range_lo] + [lo[p] for p in preds[v]])
        if support[v] is not None:
            ok = cells_from(support[v], a, model.range_hi)
            if not ok.any():
                _fail("empty-support", f"{keys[v]}: its likelihood has no mass where the order allows it",
                      event=keys[v])
            a = max(a, years[np.argmax(ok)] - half)
        lo[v] = a
    for v in reversed(topo):
        b = min([model.range_hi] + [hi[s] for s in succs[v]])
        if support[v] is not None:
            ok = cells_from(support[v], lo[v], b)
            if not ok.any():
                _fail("empty-support", f"{keys[v]}: its likelihood has no mass where the order allows it",
                      event=keys[v])
            b = min(b, years[len(ok) - 1 - np.argmax(ok[::-1])] + half)
        hi[v] = b
        if hi[v] < lo[v]:
            _fail("empty-support", f"{keys[v]}: no date satisfies the order and the range", event=keys[v])
    return lo, hi, topo
