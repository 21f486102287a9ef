"""The edges of a compiled order, grouped and indexed with numpy.

Compiling a record of 10^5 contexts turns some 3·10^5 ordered relationships
into edges between merged nodes.  Grouping them one by one in Python costs
more than the checks that follow; here the ends are looked up with a binary
search, parallel relationships are grouped with one stable sort of an integer
key ``earlier * n_nodes + later``, and the successor and predecessor lists are
cut from sorted arrays.  The result is exactly that of the one-by-one build:
edges sorted by (earlier, later), supports in the order given, edge indices
ascending in every adjacency list.
"""

from __future__ import annotations

import numpy as np

from .record_data import STRICT_TYPES

__all__ = ["OrderEdges", "group_edges"]


class OrderEdges:
    """Edges (earlier → later) between nodes, with their supports and adjacency lists."""

    __slots__ = ("earlier", "later", "strict", "relationships", "succ", "pred", "loops")

    def __init__(self, earlier, later, strict, relationships, succ, pred, loops):
        self.earlier = earlier
        self.later = later
        self.strict = strict
        self.relationships = relationships
        self.succ = succ
        self.pred = pred
        self.loops = loops


def _cut(values: list, counts: np.ndarray) -> list[list]:
    """``values`` cut into consecutive runs of the given lengths."""
    bounds = np.concatenate(([0], np.cumsum(counts))).tolist()
    return [values[a:b] for a, b in zip(bounds, bounds[1:])]


def group_edges(ordered, context_ids, node_of, n_nodes: int) -> OrderEdges:
    """Group ordered relationships into edges between the nodes of their ends.

    ``ordered`` are the used ordered relationships in id order,
    ``context_ids`` the context ids ascending (context index order) and
    ``node_of`` the node of each context index.  Relationships between two
    contexts of one node are returned in ``loops``: node -> [strict, ids, []].
    """
    m = len(ordered)
    ids = np.fromiter(context_ids, dtype=np.int64, count=len(context_ids))
    nodes = np.asarray(node_of, dtype=np.int64)
    earlier = nodes[np.searchsorted(ids, np.fromiter((r.earlier for r in ordered), dtype=np.int64, count=m))]
    later = nodes[np.searchsorted(ids, np.fromiter((r.later for r in ordered), dtype=np.int64, count=m))]
    strict = np.fromiter((r.type in STRICT_TYPES for r in ordered), dtype=bool, count=m)
    rel_ids = [r.id for r in ordered]

    loops: dict[int, list] = {}
    same = earlier == later
    if same.any():
        for i in np.flatnonzero(same).tolist():
            loop = loops.setdefault(int(earlier[i]), [False, [], []])
            loop[0] = loop[0] or bool(strict[i])
            loop[1].append(rel_ids[i])
        kept = np.flatnonzero(~same)
    else:
        kept = np.arange(m)

    nn = max(n_nodes, 1)
    keys = earlier[kept] * nn + later[kept]
    order = np.argsort(keys, kind="stable")
    keys = keys[order]
    starts = np.flatnonzero(np.concatenate(([True], keys[1:] != keys[:-1]))) if len(keys) else np.zeros(0, np.int64)
    unique = keys[starts]
    edge_earlier = unique // nn
    edge_later = unique % nn
    edge_strict = np.logical_or.reduceat(strict[kept][order], starts).tolist() if len(starts) else []
    sorted_ids = [rel_ids[i] for i in kept[order].tolist()]
    sizes = np.diff(np.concatenate((starts, [len(keys)])))
    if len(sizes) and int(sizes.max()) == 1:
        supports = [(rid,) for rid in sorted_ids]
    else:
        supports = [tuple(run) for run in _cut(sorted_ids, sizes)]

    n_edges = len(unique)
    succ = _cut(list(range(n_edges)), np.bincount(edge_earlier, minlength=n_nodes))
    by_later = np.argsort(edge_later, kind="stable").tolist()
    pred = _cut(by_later, np.bincount(edge_later, minlength=n_nodes))
    return OrderEdges(edge_earlier.tolist(), edge_later.tolist(), edge_strict, supports, succ, pred, loops)
