"""Transitive reduction of an acyclic temporal order, with compact witnesses.

The reduction of a DAG is unique (Aho, Garey & Ullman 1972): it keeps exactly
the edges not implied by a longer path.  This is what the stratigraphic
sequence diagram shows; the other recorded relationships are redundant (they
add no order information) but stay in the record as independent evidence.

Each redundant relationship carries a *witness*: the first node after its
earlier end on a path of direct edges that implies it.  The witness costs
O(1) space, so the whole report is linear in the size of the record however
long the implying paths are; :func:`implying_path` spells out the full path of
one relationship on request (one breadth-first search).

Reachability is held as Python-int bitsets, with three savings that keep the
live sets small on wide and deep records alike:

* only nodes with two or more predecessors get a bit (the far end of a
  redundant edge always has another predecessor, the last step of the longer
  path), numbered in reverse topological order;
* a node with a single direct successor holds a link ``(its bit, successor's
  set)`` instead of a copy, so a long sequence costs O(1) per node until a
  node with several direct successors needs the union;
* a node's set is dropped as soon as its last predecessor has used it.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from .checks import topological_order
from .order_paths import PathStep
from .temporal_graph import TemporalGraph, chain_steps, gc_paused

__all__ = ["RedundantRelationship", "Reduction", "reduce_order", "reduced_edge_mask", "implying_path"]

#: Out-degree above which membership tests read a byte snapshot of the union
#: (O(1) each) instead of shifting the whole integer (O(size) each).
_SNAPSHOT_FROM = 16


@dataclass(frozen=True, slots=True)
class RedundantRelationship:
    """A relationship whose order is implied by a path of direct ones.

    ``id`` is the relationship id (or an interpretive reference when
    ``recorded`` is False); ``edge`` the index of the removed edge; ``via`` the
    node index of the witness (the first node after the earlier end on an
    implying path of direct edges), None when the reduction was computed
    without explanations.
    """

    id: int | str
    edge: int
    via: int | None = None
    recorded: bool = True

    def as_dict(self, graph: TemporalGraph | None = None) -> dict:
        out = {"id": self.id, "edge": self.edge, "recorded": self.recorded, "via": None, "via_label": None}
        if graph is not None and self.via is not None:
            first = graph.members[self.via][0]
            out["via"] = graph.contexts[first].id
            out["via_label"] = graph.label(first)
        return out


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
            "redundant": [r.as_dict(graph) for r in self.redundant],
        }


def _materialise(reach) -> int:
    """The bitset of a reach value: an int, or a chain of ``(bit, next)`` links."""
    if type(reach) is int:
        return reach
    bits = []
    while type(reach) is tuple:
        b, reach = reach
        if b >= 0:
            bits.append(b)
    if len(bits) < 32:
        for b in bits:
            reach |= 1 << b
        return reach
    buf = bytearray((max(bits) >> 3) + 1)
    for b in bits:
        buf[b >> 3] |= 1 << (b & 7)
    return reach | int.from_bytes(buf, "little")


class _Bits:
    """Membership tests on one bitset, O(1) each once a byte snapshot is taken."""

    __slots__ = ("value", "_bytes")

    def __init__(self, value: int):
        self.value = value
        self._bytes = None

    def has(self, b: int, snapshot: bool) -> bool:
        if not snapshot:
            return (self.value >> b) & 1 == 1
        if self._bytes is None:
            self._bytes = self.value.to_bytes((self.value.bit_length() >> 3) + 1, "little")
        i = b >> 3
        return i < len(self._bytes) and (self._bytes[i] >> (b & 7)) & 1 == 1


def _sweep(graph: TemporalGraph, witnesses: bool) -> tuple[list[bool], dict[int, int]]:
    """Kept-edge mask and, per removed edge, its witness node (when asked)."""
    order = topological_order(graph)
    n = graph.n_nodes
    pos = [0] * n
    for i, v in enumerate(order):
        pos[v] = i
    el = graph.edge_later
    succ, pred = graph.succ, graph.pred
    bit = [-1] * n
    count = 0
    for v in reversed(order):
        if len(pred[v]) >= 2:
            bit[v] = count
            count += 1
    keep = [False] * graph.n_edges
    via: dict[int, int] = {}
    reach: list = [None] * n
    waiting = [len(p) for p in pred]
    for v in reversed(order):
        out = succ[v]
        if len(out) == 1:
            e = out[0]
            w = el[e]
            keep[e] = True
            reach[v] = (bit[v], reach[w])
            waiting[w] -= 1
            if waiting[w] == 0:
                reach[w] = None
        elif out:
            reach[v] = _union_of_successors(v, out, pos, bit, el, keep, via, reach, waiting, witnesses)
        else:
            reach[v] = (1 << bit[v]) if bit[v] >= 0 else 0
        if waiting[v] == 0:
            reach[v] = None
    return keep, via


def _union_of_successors(v, out, pos, bit, el, keep, via, reach, waiting, witnesses) -> int:
    """Keep the edges of ``v`` not implied by its closer successors; return ``v``'s set."""
    # Closest successors first: a later-positioned successor can never reach
    # an earlier-positioned one.
    out = sorted(out, key=lambda e: pos[el[e]])
    snapshot = len(out) > _SNAPSHOT_FROM
    acc = _Bits(0)
    kept: list[tuple[int, _Bits]] = []
    for e in out:
        w = el[e]
        b = bit[w]
        if b >= 0 and acc.has(b, snapshot):
            if witnesses:
                via[e] = kept[0][0] if len(kept) == 1 else next(x for x, r in kept if r.has(b, snapshot))
        else:
            keep[e] = True
            r = _materialise(reach[w])
            acc = _Bits(acc.value | r)
            if witnesses:
                kept.append((w, _Bits(r)))
            if waiting[w] > 1:
                reach[w] = r  # another predecessor will need it: keep the union, not the links
        waiting[w] -= 1
        if waiting[w] == 0:
            reach[w] = None
    if bit[v] >= 0:
        return acc.value | (1 << bit[v])
    return acc.value


def reduced_edge_mask(graph: TemporalGraph) -> list[bool]:
    """Per edge, whether it belongs to the transitive reduction.

    Raises ``CycleError`` if the order is not acyclic.  O(n·m/w) word operations
    in the worst case, usually far less because sets are shared and freed early.
    """
    with gc_paused():
        return _sweep(graph, False)[0]


def reduce_order(graph: TemporalGraph, *, explain: bool = True) -> Reduction:
    """Transitive reduction of an acyclic order, with a witness per redundant relationship.

    Parameters
    ----------
    graph : TemporalGraph
        Must be acyclic (see :func:`chronology.engine.checks.is_acyclic`).
    explain : bool
        When True (default) every redundant relationship carries its witness
        node (``via``), from which :func:`implying_path` gives the full path.

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
    examined before it (closest first); the first kept successor whose set
    holds ``w`` is its witness.  The result equals
    ``networkx.transitive_reduction`` on the same node graph.  Strictness is
    not considered: a strict edge implied only by weak edges is still removed.

    References
    ----------
    Aho, A. V., Garey, M. R. & Ullman, J. D. (1972). The transitive reduction of
    a directed graph. SIAM Journal on Computing 1(2), 131-137.
    """
    with gc_paused():
        keep, via = _sweep(graph, explain)
        direct_edges = tuple(e for e, k in enumerate(keep) if k)
        redundant: list[RedundantRelationship] = []
        add = redundant.append
        edge_rels, edge_extras, get_via = graph.edge_relationships, graph.edge_extras, via.get
        for e, k in enumerate(keep):
            if k:
                continue
            w = get_via(e)
            for rid in edge_rels[e]:
                add(RedundantRelationship(rid, e, w))
            if edge_extras[e]:
                redundant.extend(RedundantRelationship(graph.extras[x].ref, e, w, recorded=False)
                                 for x in edge_extras[e])
        return Reduction(direct=tuple(keep), direct_edges=direct_edges, redundant=tuple(redundant))


def _direct_chain(graph: TemporalGraph, direct, source: int, target: int) -> list[int]:
    """Edges of a shortest path of direct edges source ⇝ target, later end first.

    Breadth-first search over kept edges, pruned to topological positions
    before the target (no path to it can leave that region).
    """
    pos = _position(graph)
    limit = pos[target]
    el, ee = graph.edge_later, graph.edge_earlier
    back = {source: None}
    queue = deque([source])
    while queue and target not in back:
        x = queue.popleft()
        for e in graph.succ[x]:
            y = el[e]
            if direct[e] and y not in back and pos[y] <= limit:
                back[y] = e
                queue.append(y)
    if target not in back:
        raise ValueError("no path of direct edges joins the witness to the later end")
    chain = []
    y = target
    while back[y] is not None:
        e = back[y]
        chain.append(e)
        y = ee[e]
    return chain


def _position(graph: TemporalGraph) -> list[int]:
    pos = graph._cache.get("topo_position")
    if pos is None:
        pos = [0] * graph.n_nodes
        for i, v in enumerate(topological_order(graph)):
            pos[v] = i
        graph._cache["topo_position"] = pos
    return pos


def implying_path(graph: TemporalGraph, reduction: Reduction, item: RedundantRelationship) -> list[PathStep]:
    """The full path of recorded relationships that implies a redundant one.

    Expands the witness: the direct edge from the earlier end of ``item`` to
    its witness, then a shortest path of direct edges from the witness to the
    later end (breadth-first, O(n + m) for one relationship), written later
    end first with the equality chains inside merged nodes spelt out.
    """
    e0 = item.edge
    source, target = graph.edge_earlier[e0], graph.edge_later[e0]
    via = item.via
    if via is None:
        raise ValueError("the reduction was computed without witnesses (explain=False)")
    first = next(e for e in graph.succ[source] if graph.edge_later[e] == via and reduction.direct[e])
    chain = (_direct_chain(graph, reduction.direct, via, target) if via != target else []) + [first]
    if item.recorded:
        rel = graph.relationships[item.id]
        later, earlier = rel.later, rel.earlier
    else:
        ordering = next(graph.extras[x] for x in graph.edge_extras[e0] if graph.extras[x].ref == item.id)
        later, earlier = ordering.later, ordering.earlier
    index_of = graph.index_of
    return chain_steps(graph, chain, start=index_of[later], end=index_of[earlier])
