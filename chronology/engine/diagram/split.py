"""Cut a record too large to draw whole into parts, per area or per phase.

Each part keeps the order *among its own contexts* as the full record
implies it, including relations that ran through contexts of other parts:
the part's edges are the transitive reduction (Aho, Garey & Ullman 1972) of
the full order restricted to the part.  Reachability is held as Python-int
bitsets, one per node, filled in reverse topological order.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from ..errors import DiagramError
from .model import DiagramEdge, DiagramNode

__all__ = ["DrawingPart", "split_for_drawing"]


@dataclass(frozen=True, slots=True)
class DrawingPart:
    """One drawable part: ``key`` names it (area, phase, and a slice number)."""

    key: tuple[str, ...]
    nodes: tuple[DiagramNode, ...]
    edges: tuple[DiagramEdge, ...]


def split_for_drawing(
    nodes: Iterable[DiagramNode],
    edges: Iterable[DiagramEdge],
    max_nodes: int = 500,
    by: str = "area",
) -> list[DrawingPart]:
    """Split a reduced order into parts of at most ``max_nodes`` nodes.

    Parameters
    ----------
    nodes, edges :
        As for :func:`layout_diagram`; ``edges`` must be acyclic.
    max_nodes : int
        Largest part.  A record that fits comes back as one part.
    by : {"area", "phase"}
        First grouping key.  A group still too large is split by the other
        key, then into consecutive slices of the topological order.

    Returns
    -------
    list of DrawingPart
        Parts in key order; each node is in exactly one part.

    Raises
    ------
    DiagramError
        ``diagram-bad-split`` for an unknown ``by`` or ``max_nodes < 1``,
        ``diagram-unknown-node`` or ``diagram-cycle`` for bad edges.

    References
    ----------
    Aho, A. V., Garey, M. R. & Ullman, J. D. (1972). The transitive reduction
    of a directed graph. SIAM Journal on Computing 1(2), 131-137.
    """
    if by not in ("area", "phase"):
        raise DiagramError("split by 'area' or 'phase'", code="diagram-bad-split", details={"by": by})
    if max_nodes < 1:
        raise DiagramError("max_nodes must be at least 1", code="diagram-bad-split", details={"max_nodes": max_nodes})
    nodes = list(nodes)
    edges = list(edges)
    index = {node.id: i for i, node in enumerate(nodes)}
    for e in edges:
        if e.earlier_id not in index or e.later_id not in index:
            raise DiagramError("relation names an unknown node", code="diagram-unknown-node",
                               details={"edge": [e.earlier_id, e.later_id]})
    if len(nodes) <= max_nodes:
        return [DrawingPart(("all",), tuple(nodes), tuple(edges))]
    order = _topological(len(nodes), edges, index)
    rank = {v: r for r, v in enumerate(order)}
    reach = _reachability(len(nodes), edges, index, order)
    strict_pairs = {(index[e.earlier_id], index[e.later_id]): e.strict for e in edges}
    other = "phase" if by == "area" else "area"
    parts = []
    for key, members in _groups(nodes, range(len(nodes)), by).items():
        for key2, members2 in _subsplit(nodes, members, other, max_nodes).items():
            members2 = sorted(members2, key=rank.__getitem__)
            for s in range(0, len(members2), max_nodes):
                chunk = members2[s : s + max_nodes]
                slice_key = (key, key2) + ((str(s // max_nodes + 1),) if len(members2) > max_nodes else ())
                parts.append(DrawingPart(slice_key, tuple(nodes[v] for v in chunk),
                                         tuple(_restricted_reduction(nodes, chunk, reach, rank, strict_pairs))))
    return parts


def _groups(nodes, members, attr) -> dict[str, list[int]]:
    groups: dict[str, list[int]] = {}
    for v in members:
        groups.setdefault(getattr(nodes[v], attr) or "", []).append(v)
    return dict(sorted(groups.items()))


def _subsplit(nodes, members, attr, max_nodes) -> dict[str, list[int]]:
    if len(members) <= max_nodes:
        return {"": list(members)}
    return _groups(nodes, members, attr)


def _topological(n, edges, index) -> list[int]:
    succ = [[] for _ in range(n)]
    indegree = [0] * n
    for e in edges:
        succ[index[e.earlier_id]].append(index[e.later_id])
        indegree[index[e.later_id]] += 1
    ready = [v for v in range(n) if indegree[v] == 0]
    order = []
    while ready:
        v = ready.pop()
        order.append(v)
        for w in succ[v]:
            indegree[w] -= 1
            if indegree[w] == 0:
                ready.append(w)
    if len(order) < n:
        raise DiagramError("the relations form a cycle", code="diagram-cycle", details={})
    return order


def _reachability(n, edges, index, order) -> list[int]:
    """Bitset of the nodes strictly later than each node."""
    succ = [[] for _ in range(n)]
    for e in edges:
        succ[index[e.earlier_id]].append(index[e.later_id])
    reach = [0] * n
    for v in reversed(order):
        bits = 0
        for w in succ[v]:
            bits |= reach[w] | (1 << w)
        reach[v] = bits
    return reach


def _restricted_reduction(nodes, chunk, reach, rank, strict_pairs):
    """Direct relations among ``chunk`` in the order restricted to it."""
    mask = 0
    for v in chunk:
        mask |= 1 << v
    for v in sorted(chunk, key=rank.__getitem__, reverse=False):
        later = reach[v] & mask
        kept = 0  # nodes reachable through successors already kept
        for w in sorted(_bits(later), key=rank.__getitem__):
            if kept >> w & 1:
                continue
            kept |= reach[w] | (1 << w)
            # a path through other parts carries no strictness of its own;
            # call it strict unless the one direct relation was weak
            yield DiagramEdge(nodes[v].id, nodes[w].id, strict_pairs.get((v, w), True))


def _bits(value: int):
    while value:
        low = value & -value
        yield low.bit_length() - 1
        value ^= low
