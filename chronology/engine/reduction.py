"""Transitive reduction of an acyclic temporal order.

The reduction of a DAG is unique (Aho, Garey & Ullman 1972): it keeps exactly
the edges not implied by a longer path.  This is what the stratigraphic
sequence diagram shows; the other recorded relationships are redundant (they
add no order information) but stay in the record as independent evidence, so
each one is listed with the path of direct relationships that implies it.

Reachability is held as Python-int bitsets indexed by topological position.
A node's set is freed as soon as its last predecessor has used it, which keeps
the live sets to the "width" of the sequence rather than to all nodes.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from .checks import topological_order
from .temporal_graph import TemporalGraph, chain_steps, gc_paused

__all__ = ["RedundantRelationship", "Reduction", "reduce_order", "reduced_edge_mask"]


@dataclass(frozen=True)
class RedundantRelationship:
    """A relationship whose order is implied by a path of direct ones.

    ``id`` is the relationship id (or an interpretive reference when
    ``recorded`` is False); ``edge`` the index of the removed edge; ``path`` the
    direct relationships implying it, later end first.
    """

    id: int | str
    edge: int
    path: tuple
    recorded: bool = True

    def as_dict(self) -> dict:
        return {"id": self.id, "edge": self.edge, "recorded": self.recorded,
                "path": [s.as_dict() for s in self.path]}


@dataclass(frozen=True)
class Reduction:
    """Result of :func:`reduce_order`.

    Attributes
    ----------
    direct : tuple of bool
        Per edge of the graph, True when it is in the reduction.
    direct_edges : tuple of int
        Indices of the kept edges, ascending.
    redundant : tuple of RedundantRelationship
        One entry per supporting relationship of every removed edge.
    """

    direct: tuple
    direct_edges: tuple
    redundant: tuple

    def as_dict(self, graph: TemporalGraph) -> dict:
        return {
            "direct": [
                {
                    "earlier": graph.node_context_ids(graph.edge_earlier[e]),
                    "later": graph.node_context_ids(graph.edge_later[e]),
                    "strict": graph.edge_strict[e],
                    "relationships": list(graph.edge_relationships[e]),
                }
                for e in self.direct_edges
            ],
            "redundant": [r.as_dict() for r in self.redundant],
        }


def reduced_edge_mask(graph: TemporalGraph) -> list[bool]:
    """Per edge, whether it belongs to the transitive reduction.

    Raises ``CycleError`` if the order is not acyclic.  O(n·m/w) word operations
    in the worst case, usually far less because sets are freed early.
    """
    order = topological_order(graph)
    n = graph.n_nodes
    pos = [0] * n
    for i, v in enumerate(order):
        pos[v] = i
    el = graph.edge_later
    succ, pred = graph.succ, graph.pred
    keep = [False] * graph.n_edges
    reach: list[int | None] = [None] * n
    waiting = [len(p) for p in pred]
    for v in reversed(order):
        out = succ[v]
        if not out:
            reach[v] = 1 << pos[v]
            continue
        # Closest successors first: a later-positioned successor can never
        # reach an earlier-positioned one.
        if len(out) > 1:
            out = sorted(out, key=lambda e: pos[el[e]])
        acc = 0
        for e in out:
            w = el[e]
            if not (acc >> pos[w]) & 1:
                keep[e] = True
                acc |= reach[w]
            waiting[w] -= 1
            if waiting[w] == 0:
                reach[w] = None
        reach[v] = acc | (1 << pos[v])
        if waiting[v] == 0:
            reach[v] = None
    return keep


def _direct_path(graph: TemporalGraph, keep: list[bool], pos: list[int], e0: int,
                 direct_into: dict[int, int]) -> list[int]:
    """Edges of a shortest path of direct edges from the earlier to the later end of ``e0``.

    Most redundant relationships skip one unit, so a path of two direct edges
    is looked up first (``direct_into`` maps ``earlier * n + later`` of each
    kept edge to its index); otherwise a BFS over kept edges, pruned to
    topological positions before the target.  Returned later end first, for
    :func:`chain_steps`.
    """
    src, dst = graph.edge_earlier[e0], graph.edge_later[e0]
    el = graph.edge_later
    n = graph.n_nodes
    for e in graph.succ[src]:
        if keep[e]:
            second = direct_into.get(el[e] * n + dst)
            if second is not None:
                return [second, e]
    limit = pos[dst]
    back = {src: None}
    queue = deque([src])
    while queue:
        x = queue.popleft()
        for e in graph.succ[x]:
            if not keep[e]:
                continue
            y = el[e]
            if y in back or pos[y] > limit:
                continue
            back[y] = e
            if y == dst:
                queue.clear()
                break
            queue.append(y)
    chain = []
    y = dst
    while back[y] is not None:
        e = back[y]
        chain.append(e)
        y = graph.edge_earlier[e]
    return chain


def reduce_order(graph: TemporalGraph, *, explain: bool = True) -> Reduction:
    """Transitive reduction of an acyclic order, with explanations.

    Parameters
    ----------
    graph : TemporalGraph
        Must be acyclic (see :func:`chronology.engine.checks.is_acyclic`).
    explain : bool
        When True (default) every redundant relationship carries the path of
        direct relationships implying it.

    Returns
    -------
    Reduction

    Raises
    ------
    CycleError
        If the order has a cycle.

    Notes
    -----
    Nodes are walked in reverse topological order; an edge ``v -> w`` is kept
    only if ``w`` is not already reachable through the successors of ``v``
    examined before it (closest first).  The result equals
    ``networkx.transitive_reduction`` on the same node graph.  Strictness is
    not considered: a strict edge implied only by weak edges is still removed.

    References
    ----------
    Aho, A. V., Garey, M. R. & Ullman, J. D. (1972). The transitive reduction of
    a directed graph. SIAM Journal on Computing 1(2), 131-137.
    """
    with gc_paused():
        return _reduce(graph, explain)


def _reduce(graph: TemporalGraph, explain: bool) -> Reduction:
    keep = reduced_edge_mask(graph)
    direct_edges = tuple(e for e, k in enumerate(keep) if k)
    redundant: list[RedundantRelationship] = []
    if explain:
        order = topological_order(graph)
        pos = [0] * graph.n_nodes
        for i, v in enumerate(order):
            pos[v] = i
        index_of = graph.index_of
        n = graph.n_nodes
        ee, el = graph.edge_earlier, graph.edge_later
        direct_into = {ee[e] * n + el[e]: e for e in direct_edges}
        for e, k in enumerate(keep):
            if k:
                continue
            chain = _direct_path(graph, keep, pos, e, direct_into)
            for rid in graph.edge_relationships[e]:
                rel = graph.relationships[rid]
                steps = chain_steps(graph, chain, start=index_of[rel.later], end=index_of[rel.earlier])
                redundant.append(RedundantRelationship(rid, e, tuple(steps)))
            for x in graph.edge_extras[e]:
                ordering = graph.extras[x]
                steps = chain_steps(graph, chain, start=index_of[ordering.later], end=index_of[ordering.earlier])
                redundant.append(RedundantRelationship(ordering.ref, e, tuple(steps), recorded=False))
    else:
        for e, k in enumerate(keep):
            if not k:
                redundant.extend(RedundantRelationship(rid, e, ()) for rid in graph.edge_relationships[e])
    return Reduction(direct=tuple(keep), direct_edges=direct_edges, redundant=tuple(redundant))


