"""Check an assignment of contexts to phases against the stratigraphic order.

A phase order says phase P comes before phase Q.  A context of Q that the
stratigraphy puts earlier than (or equal to) a context of P contradicts it; the
path of recorded relationships that shows this is returned, so the analyst can
see which relationship or which phase assignment to reconsider.  Paths through
contexts without a phase count too: the whole record is used.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import Mapping, Sequence

from .checks import Issue, topological_order
from .errors import OrderError
from .temporal_graph import TemporalGraph, chain_steps, equality_chain, gc_paused

__all__ = ["PhasingReport", "check_phasing", "phase_closure"]


@dataclass(frozen=True)
class PhasingReport:
    """Result of :func:`check_phasing`.

    Attributes
    ----------
    ok : bool
        No contradiction found.
    issues : tuple of Issue
        ``phase-contradiction`` (error) per context lying below or equal to a
        context of an earlier phase, ``phase-order-unsupported`` (error) per
        phase pair whose order the stratigraphy contradicts, and
        ``unphased-context`` (warning) per context without a phase.
    contradicting : tuple of int
        Context ids reported in ``phase-contradiction`` issues (the lower one).
    unsupported_pairs : tuple of (str, str)
        ``(earlier phase, later phase)`` pairs contradicted by the record.
    unphased : tuple of int
    """

    ok: bool
    issues: tuple
    contradicting: tuple
    unsupported_pairs: tuple
    unphased: tuple

    def as_dict(self) -> dict:
        return {
            "ok": self.ok,
            "issues": [i.as_dict() for i in self.issues],
            "contradicting": list(self.contradicting),
            "unsupported_pairs": [list(p) for p in self.unsupported_pairs],
            "unphased": list(self.unphased),
        }


def phase_closure(phases: Sequence) -> tuple[list[str], dict[str, set[str]]]:
    """Phase names and, per phase, the set of phases strictly after it.

    ``phases`` is either a list of names, earliest first, or a sequence of
    ``(earlier, later)`` pairs.  Raises ``OrderError`` (``phase-order-cycle``)
    when the pairs are cyclic.
    """
    items = list(phases)
    if all(isinstance(p, str) for p in items):
        if len(set(items)) != len(items):
            raise OrderError("a phase is listed twice", code="duplicate-phase", details={"phases": items})
        return items, {p: set(items[i + 1:]) for i, p in enumerate(items)}
    names: list[str] = []
    after: dict[str, set[str]] = {}
    for pair in items:
        if isinstance(pair, str) or len(pair) != 2:
            raise OrderError("phase order must be names or (earlier, later) pairs", code="bad-phase-order",
                             details={"item": repr(pair)})
        for p in pair:
            if p not in after:
                after[p] = set()
                names.append(p)
        after[pair[0]].add(pair[1])
    # Closure by repeated depth-first search: phases are few.
    closed: dict[str, set[str]] = {}
    for p in names:
        seen: set[str] = set()
        stack = list(after[p])
        while stack:
            q = stack.pop()
            if q not in seen:
                seen.add(q)
                stack.extend(after[q])
        if p in seen:
            raise OrderError(f"the phase order is cyclic through {p!r}", code="phase-order-cycle",
                             details={"phase": p})
        closed[p] = seen
    return names, closed


def _witness(graph: TemporalGraph, start: int, targets: set[int]) -> list[int]:
    """Edges of a shortest forward path from node ``start`` to a node in ``targets``."""
    el, ee = graph.edge_later, graph.edge_earlier
    back = {start: None}
    queue = deque([start])
    found = None
    while queue and found is None:
        x = queue.popleft()
        for e in graph.succ[x]:
            y = el[e]
            if y not in back:
                back[y] = e
                if y in targets:
                    found = y
                    break
                queue.append(y)
    chain = []
    y = found
    while back[y] is not None:
        e = back[y]
        chain.append(e)
        y = ee[e]
    return chain  # later end first


def check_phasing(
    graph: TemporalGraph,
    phases: Sequence,
    assignment: Mapping[int, str],
) -> PhasingReport:
    """Check contexts' phases against the stratigraphic order.

    Parameters
    ----------
    graph : TemporalGraph
        An acyclic order (run :func:`chronology.engine.checks.check_order` first).
    phases : sequence
        Phase names earliest first, or ``(earlier, later)`` pairs.
    assignment : mapping
        Context id -> phase name.

    Returns
    -------
    PhasingReport

    Raises
    ------
    OrderError
        ``unknown-phase``, ``unknown-context``, ``phase-order-cycle``.
    CycleError
        If the stratigraphic order is not acyclic.

    Notes
    -----
    This is the weak check of a phase order extended to paths: a context ``a``
    of phase P contradicts when some context ``b`` with ``a ⪯ b`` (through any
    chain of relationships or an equality) belongs to a phase before P.  Phase
    sets reachable from each node are propagated as bitsets in reverse
    topological order, O((n + m) p / w) for ``p`` phases; each contradiction is
    then explained by one breadth-first path.
    """
    names, after = phase_closure(phases)
    with gc_paused():
        return _check(graph, names, after, assignment)


def _check(graph, names, after, assignment) -> PhasingReport:
    index = {p: i for i, p in enumerate(names)}
    phase_of_ctx: dict[int, int] = {}
    for cid, phase in assignment.items():
        if phase not in index:
            raise OrderError(f"context {cid} is assigned to unknown phase {phase!r}", code="unknown-phase",
                             details={"context": cid, "phase": phase})
        if cid not in graph.index_of:
            raise OrderError(f"context {cid} is not in this record", code="unknown-context", details={"context": cid})
        phase_of_ctx[graph.index_of[cid]] = index[phase]
    # earlier_than[i]: bitset of phases strictly before phase i.
    earlier_than = [0] * len(names)
    for p, later in after.items():
        for q in later:
            earlier_than[index[q]] |= 1 << index[p]

    n = graph.n_nodes
    here = [0] * n
    for c, i in phase_of_ctx.items():
        here[graph.node_of[c]] |= 1 << i
    above = [0] * n  # phases of contexts strictly later than the node
    el = graph.edge_later
    for v in reversed(topological_order(graph)):
        acc = 0
        for e in graph.succ[v]:
            w = el[e]
            acc |= here[w] | above[w]
        above[v] = acc

    issues: list[Issue] = []
    contradicting: list[int] = []
    pairs: dict[tuple[str, str], Issue] = {}
    for c in sorted(phase_of_ctx):
        i = phase_of_ctx[c]
        v = graph.node_of[c]
        bad = earlier_than[i] & (above[v] | here[v])
        if not bad:
            continue
        lower = graph.contexts[c]
        if earlier_than[i] & here[v]:
            other = next(m for m in graph.members[v] if m in phase_of_ctx and (1 << phase_of_ctx[m]) & earlier_than[i])
            steps = equality_chain(graph, other, c)
            relation = "is the same unit as"
        else:
            targets = {graph.node_of[m] for m, j in phase_of_ctx.items() if (1 << j) & earlier_than[i]}
            chain = _witness(graph, v, targets)
            top = graph.edge_later[chain[0]]
            other = next(m for m in graph.members[top] if m in phase_of_ctx and (1 << phase_of_ctx[m]) & earlier_than[i])
            steps = chain_steps(graph, chain, start=other, end=c)
            relation = "lies below"
        upper = graph.contexts[other]
        p_low, p_up = names[i], names[phase_of_ctx[other]]
        text = " → ".join(s.text() for s in steps)
        issue = Issue(
            "phase-contradiction", "error",
            f"{graph.label(c)} ({p_low}) {relation} {graph.label(other)} ({p_up}), "
            f"but {p_up} is before {p_low}: {text}",
            (lower.id, upper.id),
            tuple(s.id for s in steps if s.recorded),
            tuple(steps),
        )
        issues.append(issue)
        contradicting.append(lower.id)
        pairs.setdefault((p_up, p_low), issue)
    for (p, q), witness in sorted(pairs.items()):
        issues.append(Issue(
            "phase-order-unsupported", "error",
            f"The record contradicts {p} before {q}: {witness.message}",
            witness.contexts, witness.relationships, witness.path,
        ))
    unphased = []
    for c, ctx in enumerate(graph.contexts):
        if c not in phase_of_ctx:
            unphased.append(ctx.id)
            issues.append(Issue("unphased-context", "warning", f"{graph.label(c)} has no phase", (ctx.id,)))
    return PhasingReport(
        ok=not contradicting,
        issues=tuple(issues),
        contradicting=tuple(contradicting),
        unsupported_pairs=tuple(sorted(pairs)),
        unphased=tuple(unphased),
    )
