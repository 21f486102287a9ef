"""Reachability among the endpoints of undecided items, and its closure.

The undecided items of an interpretation only interact through the order
between their endpoints, so the analysis never works on the whole base graph.
This module sweeps the base once, in reverse topological order, holding for
each node the set of endpoints it reaches as a Python-int bitset (the same
device as the transitive reduction of the order, Aho, Garey & Ullman 1972),
and keeps two sets per node: endpoints reached by any path, and endpoints
reached by a path with at least one strict edge.  The cost is O(n + m)
big-integer operations on masks of at most 2k bits, so a base of 100,000
nodes is swept in well under a second.

On the endpoint graph (at most 2k nodes), a :class:`_Closure` holds the
transitive closure of the base plus accepted items and adds one edge in
O(#endpoints) mask operations.  An equality is added as two weak edges; a
closed walk of weak edges only is an implied equality (consistent); a closed
walk through a strict edge is a contradiction.
"""

from __future__ import annotations

from collections import deque

from .errors import CycleError

__all__: list[str] = []  # private helpers of chronology.engine.alternatives


def _topological_order(n_nodes: int, succ: list[list[tuple[int, bool]]]) -> list[int]:
    """Kahn's order of the base; raise CycleError if the base is not acyclic."""
    indeg = [0] * n_nodes
    for row in succ:
        for w, _ in row:
            indeg[w] += 1
    queue = deque(v for v in range(n_nodes) if indeg[v] == 0)
    order: list[int] = []
    while queue:
        v = queue.popleft()
        order.append(v)
        for w, _ in succ[v]:
            indeg[w] -= 1
            if indeg[w] == 0:
                queue.append(w)
    if len(order) != n_nodes:
        stuck = [v for v in range(n_nodes) if indeg[v] > 0]
        raise CycleError(
            "the base order of an alternatives problem must be acyclic",
            details={"nodes_on_cycles": stuck[:50]},
        )
    return order


def endpoint_reach(
    n_nodes: int,
    edges: list[tuple[int, int, bool]],
    endpoints: list[int],
) -> tuple[list[int], list[int]]:
    """Reach masks among ``endpoints`` in the base.

    Returns ``(reach, strict_reach)``: for endpoint position ``x``, bit ``y`` of
    ``reach[x]`` is set when a non-empty base path leads from ``endpoints[x]``
    to ``endpoints[y]``, and of ``strict_reach[x]`` when such a path holds a
    strict edge.
    """
    succ: list[list[tuple[int, bool]]] = [[] for _ in range(n_nodes)]
    for u, v, strict in edges:
        succ[u].append((v, strict))
    order = _topological_order(n_nodes, succ)
    bit = [0] * n_nodes
    for pos, node in enumerate(endpoints):
        bit[node] = 1 << pos
    any_m = [0] * n_nodes
    strict_m = [0] * n_nodes
    for v in reversed(order):
        row = succ[v]
        if not row:
            continue
        a = s = 0
        for w, strict in row:
            wm = any_m[w] | bit[w]
            a |= wm
            s |= wm if strict else strict_m[w]
        any_m[v] = a
        strict_m[v] = s
    return [any_m[e] for e in endpoints], [strict_m[e] for e in endpoints]


class _Closure:
    """Transitive closure with strictness on the endpoint graph (mutable)."""

    __slots__ = ("reach", "strict", "ok")

    def __init__(self, reach: list[int], strict: list[int], ok: bool = True):
        self.reach = reach
        self.strict = strict
        self.ok = ok

    def copy(self) -> "_Closure":
        return _Closure(self.reach[:], self.strict[:], self.ok)

    def add_edge(self, u: int, v: int, strict: bool) -> bool:
        """Add ``u -> v``; return False once a strict closed walk exists."""
        reach, sreach = self.reach, self.strict
        rv = reach[v] | (1 << v)
        sv = sreach[v]
        ubit = 1 << u
        for x in range(len(reach)):
            if x != u and not reach[x] & ubit:
                continue
            reach[x] |= rv
            if strict or sreach[x] & ubit:
                sreach[x] |= rv
            else:
                sreach[x] |= sv
            if sreach[x] >> x & 1:
                self.ok = False
        return self.ok

    def can_add(self, edges: list[tuple[int, int, bool]]) -> bool:
        """Whether adding one item (one edge, or the two weak edges of an
        equality) keeps this consistent closure consistent, in O(1).

        Every new closed walk passes through a new edge, and the stretches
        between new edges are old paths, so it is enough to look at the old
        reach from each new edge's head back to its tail.
        """
        if not self.ok:
            return False
        if len(edges) == 1:
            u, v, strict = edges[0]
            if u == v:
                return not strict
            if not self.reach[v] >> u & 1:
                return True
            return not strict and not self.strict[v] >> u & 1
        (a, b, _), _ = edges
        return not (self.strict[a] >> b & 1 or self.strict[b] >> a & 1)

    def reaches(self, x: int, y: int) -> bool:
        return x == y or bool(self.reach[x] >> y & 1)

    def strictly_reaches(self, x: int, y: int) -> bool:
        return bool(self.strict[x] >> y & 1)

    def signature(self) -> tuple[tuple[int, ...], tuple[int, ...]]:
        return tuple(self.reach), tuple(self.strict)
