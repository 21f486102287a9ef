"""The order the whole record implies among a chosen set of contexts.

Dated contexts are usually few and far apart in the sequence; their order comes
through undated ones.  The induced order is the restriction of the transitive
closure to the chosen contexts, reduced to its direct relations (Aho, Garey &
Ullman 1972), keeping strictness: a strict relation is dropped only when a
path through another chosen context already implies it strictly.
"""

from __future__ import annotations

from collections import deque
from typing import Iterable

from .checks import topological_order
from .temporal_graph import TemporalGraph, gc_paused

__all__ = ["induced_order", "induced_closure", "induced_classes"]


def _positions(graph: TemporalGraph) -> list[int]:
    pos = graph._cache.get("pos")
    if pos is None:
        order = topological_order(graph)
        pos = [0] * graph.n_nodes
        for i, v in enumerate(order):
            pos[v] = i
        graph._cache["pos"] = pos
    return pos


def _chosen_nodes(graph: TemporalGraph, context_ids: Iterable[int]) -> tuple[list[int], dict[int, list[int]]]:
    """Distinct nodes of the chosen contexts and node -> chosen context ids."""
    by_node: dict[int, list[int]] = {}
    for cid in context_ids:
        v = graph.node_for_id(cid)
        ids = by_node.setdefault(v, [])
        if cid not in ids:
            ids.append(cid)
    for ids in by_node.values():
        ids.sort()
    return sorted(by_node), by_node


def _reach_bits(graph: TemporalGraph, nodes: list[int]) -> tuple[list[int], list[int]]:
    """For each chosen node, bitsets (over ``nodes``) of chosen nodes later than it.

    Returns ``(reach, strict_reach)``.  Only nodes that lie between two chosen
    nodes are visited, so the cost is proportional to that slice of the graph.
    """
    pos = _positions(graph)
    bit = {v: 1 << i for i, v in enumerate(nodes)}
    el, ee = graph.edge_later, graph.edge_earlier
    below = set(nodes)  # descendants of a chosen node
    queue = deque(nodes)
    while queue:
        x = queue.popleft()
        for e in graph.succ[x]:
            y = el[e]
            if y not in below:
                below.add(y)
                queue.append(y)
    between = set(nodes)  # ... that are also ancestors of a chosen node
    queue = deque(nodes)
    while queue:
        x = queue.popleft()
        for e in graph.pred[x]:
            y = ee[e]
            if y in below and y not in between:
                between.add(y)
                queue.append(y)
    reach: dict[int, int] = {}
    strict_reach: dict[int, int] = {}
    strict_of = graph.edge_strict
    for v in sorted(between, key=pos.__getitem__, reverse=True):
        r = s = 0
        for e in graph.succ[v]:
            w = el[e]
            if w not in between:
                continue
            rw = reach[w] | bit.get(w, 0)
            r |= rw
            s |= rw if strict_of[e] else strict_reach[w]
        reach[v] = r
        strict_reach[v] = s
    return [reach[v] for v in nodes], [strict_reach[v] for v in nodes]


def _bits(x: int):
    while x:
        low = x & -x
        yield low.bit_length() - 1
        x ^= low


def _closure_pairs(graph: TemporalGraph, context_ids, reduced: bool) -> list[tuple[int, int, bool]]:
    nodes, by_node = _chosen_nodes(graph, context_ids)
    if not nodes:
        return []
    reach, strict = _reach_bits(graph, nodes)
    out = []
    for i, a in enumerate(nodes):
        keep_weak, keep_strict = reach[i] & ~strict[i], strict[i]
        if reduced:
            implied = implied_strict = 0
            for c in _bits(reach[i]):
                implied |= reach[c]
                implied_strict |= strict[c]
            for c in _bits(strict[i]):
                implied_strict |= reach[c]
            keep_weak &= ~implied
            keep_strict &= ~implied_strict
        for flag, mask in ((True, keep_strict), (False, keep_weak)):
            for j in _bits(mask):
                for x in by_node[a]:
                    for y in by_node[nodes[j]]:
                        out.append((x, y, flag))
    out.sort()
    return out


def induced_order(graph: TemporalGraph, context_ids: Iterable[int]) -> list[tuple[int, int, bool]]:
    """Direct order relations among chosen contexts implied by the whole record.

    Parameters
    ----------
    graph : TemporalGraph
        An acyclic order.
    context_ids : iterable of int
        The chosen contexts (for example the dated ones).

    Returns
    -------
    list of (earlier context id, later context id, strict)
        The transitive reduction of the closure restricted to the chosen
        contexts, sorted.  A relation is strict when some path between the two
        has a strict edge.  Chosen contexts merged into one node are equal and
        appear in :func:`induced_classes`, not here.

    Raises
    ------
    CycleError
        If the order is not acyclic.
    OrderError
        ``unknown-context`` for an id not in the record.

    Notes
    -----
    Two breadth-first searches select the nodes lying between chosen contexts;
    bitsets over the ``k`` chosen nodes are then propagated in reverse
    topological order, O((n' + m') k / w) for the ``n'`` nodes in between, and
    the reduction of the ``k``-node closure costs O(k^2) bitset operations.

    References
    ----------
    Aho, A. V., Garey, M. R. & Ullman, J. D. (1972). The transitive reduction of
    a directed graph. SIAM Journal on Computing 1(2), 131-137.
    """
    with gc_paused():
        return _closure_pairs(graph, context_ids, reduced=True)


def induced_closure(graph: TemporalGraph, context_ids: Iterable[int]) -> list[tuple[int, int, bool]]:
    """Every order relation among chosen contexts (the unreduced closure)."""
    with gc_paused():
        return _closure_pairs(graph, context_ids, reduced=False)


def induced_classes(graph: TemporalGraph, context_ids: Iterable[int]) -> list[list[int]]:
    """Groups of chosen contexts merged into one node (only groups of two or more)."""
    _nodes, by_node = _chosen_nodes(graph, context_ids)
    return sorted(ids for ids in by_node.values() if len(ids) > 1)
