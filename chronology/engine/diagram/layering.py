"""Layer assignment for the stratigraphic diagram, inside phase bands.

Layer 0 is the bottom (earliest) layer.  Without phases this is the
longest-path layering (Sugiyama, Tagawa & Toda 1981), followed by a pass that
lifts nodes with more later than earlier neighbours as high as their later
neighbours allow, which shortens edges without adding layers.

With phases, each phase ``k`` owns the layers ``[bound[k], bound[k+1] - 1]``.
The bounds are unknowns of the same system of difference constraints as the
node layers (``layer(later) >= layer(earlier) + 1``, ``bound[k] <= layer(v)
< bound[k+1]`` for v in phase k, ``bound[k+1] >= bound[k] + 1``); the
least solution is a longest path in the constraint graph.  Relations that
contradict the phase order would close a positive cycle; they are set aside
as *conflicts* (drawn, but not obeyed) so every context stays in its band.
Unphased contexts obey only the stratigraphy.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import networkx as nx

__all__ = ["LayerAssignment", "assign_layers"]


@dataclass(frozen=True, slots=True)
class LayerAssignment:
    """Result of :func:`assign_layers`.

    ``layer[i]`` is the layer of node index ``i``; ``bands[k]`` is the
    ``(first, last)`` layer of phase ``k``; ``conflicts`` holds the indices
    of the edges that were not obeyed because they contradict the phases.
    """

    layer: tuple[int, ...]
    bands: tuple[tuple[int, int], ...]
    conflicts: frozenset[int]
    n_layers: int


def assign_layers(
    n_nodes: int,
    edges: Sequence[tuple[int, int]],
    phase_of: Sequence[int | None] | None = None,
    n_phases: int = 0,
) -> LayerAssignment:
    """Assign every node a layer, earliest at the bottom.

    Parameters
    ----------
    n_nodes : int
        Nodes are the integers ``0 .. n_nodes - 1``.
    edges : sequence of (int, int)
        ``(earlier, later)`` index pairs of an acyclic relation.
    phase_of : sequence of int or None, optional
        Phase index of each node (0 = earliest phase) or None if unphased.
    n_phases : int
        Number of phases (bands), empty phases included.

    Returns
    -------
    LayerAssignment

    Notes
    -----
    Runs in O((V + E) * (c + 1)) for ``c`` conflicts that only show through
    unphased contexts (direct ones are found in one scan).

    References
    ----------
    Sugiyama, K., Tagawa, S. & Toda, M. (1981). Methods for visual
    understanding of hierarchical system structures. IEEE Transactions on
    Systems, Man, and Cybernetics 11(2), 109-125.
    """
    if phase_of is None or n_phases == 0:
        phase_of = [None] * n_nodes
        n_phases = 0
    conflicts = {
        i
        for i, (a, b) in enumerate(edges)
        if phase_of[a] is not None and phase_of[b] is not None and phase_of[b] < phase_of[a]
    }
    graph = _constraint_graph(n_nodes, edges, phase_of, n_phases, conflicts)
    order = _break_hidden_conflicts(graph, edges, conflicts)
    rank = _longest_path(graph, order)
    if not _optimal_layers(graph, rank):
        _lift(graph, order, rank, n_nodes)
    layer = tuple(rank[v] for v in range(n_nodes))
    bands = tuple(
        (rank[("bound", k)], rank[("bound", k + 1)] - 1) for k in range(n_phases)
    )
    top = max(layer, default=-1)
    if bands:
        top = max(top, bands[-1][1])
    return LayerAssignment(layer, bands, frozenset(conflicts), top + 1)


def _constraint_graph(n_nodes, edges, phase_of, n_phases, conflicts) -> nx.DiGraph:
    graph = nx.DiGraph()
    graph.add_nodes_from(range(n_nodes))
    for k in range(n_phases):
        graph.add_edge(("bound", k), ("bound", k + 1), weight=1)
    for v in range(n_nodes):
        k = phase_of[v]
        if k is not None:
            graph.add_edge(("bound", k), v, weight=0)
            graph.add_edge(v, ("bound", k + 1), weight=1)
    for i, (a, b) in enumerate(edges):
        if i not in conflicts:
            graph.add_edge(a, b, weight=1, edge_index=i)
    return graph


def _break_hidden_conflicts(graph: nx.DiGraph, edges, conflicts: set[int]) -> list:
    """Drop stratigraphic edges on positive cycles until the graph is acyclic.

    Such cycles run through unphased contexts (e.g. a phase-2 context below
    an unphased one that lies below a phase-1 context).  The edge dropped is
    the first stratigraphic edge met on the cycle; any of them would do, and
    the cycle is reported through the conflict set.
    """
    while True:
        try:
            return list(nx.topological_sort(graph))
        except nx.NetworkXUnfeasible:
            cycle = nx.find_cycle(graph)
            for a, b in cycle:
                index = graph.edges[a, b].get("edge_index")
                if index is not None:
                    conflicts.add(index)
                    graph.remove_edge(a, b)
                    break


def _longest_path(graph: nx.DiGraph, order: list) -> dict:
    rank = dict.fromkeys(order, 0)
    for u in order:
        base = rank[u]
        for v, data in graph.succ[u].items():
            if base + data["weight"] > rank[v]:
                rank[v] = base + data["weight"]
    return rank


def _optimal_layers(graph: nx.DiGraph, rank: dict) -> bool:
    """Replace ``rank`` by layers of least total edge length, if the LP solves.

    This is the optimal layering of Gansner et al. (1993), minimise the sum
    of ``layer(later) - layer(earlier)`` under the same constraints, solved
    as a linear programme (HiGHS through scipy) instead of by network
    simplex.  The constraint matrix is a network matrix, hence totally
    unimodular, so a basic optimal solution is integral; it is rounded and
    checked, and the longest-path layers are kept if anything is off.  A
    small weight on every layer keeps the drawing low and bands thin.
    """
    try:
        import numpy as np
        from scipy.optimize import linprog
        from scipy.sparse import coo_matrix
    except ImportError:  # pragma: no cover - scipy is a dependency
        return False
    names = list(rank)
    col = {name: j for j, name in enumerate(names)}
    cost = np.full(len(names), 1e-3)
    rows, cols, vals, rhs = [], [], [], []
    for r, (u, v, data) in enumerate(graph.edges(data=True)):
        # layer(u) - layer(v) <= -weight
        rows += [r, r]
        cols += [col[u], col[v]]
        vals += [1.0, -1.0]
        rhs.append(-data["weight"])
        if "edge_index" in data:
            cost[col[v]] += 1.0
            cost[col[u]] -= 1.0
    if not rhs:
        return False
    matrix = coo_matrix((vals, (rows, cols)), shape=(len(rhs), len(names))).tocsr()
    result = linprog(cost, A_ub=matrix, b_ub=rhs, bounds=(0, None), method="highs-ds")
    if result.status != 0:
        return False
    layers = np.rint(result.x).astype(int)
    if np.any(matrix @ layers > np.asarray(rhs) + 1e-9) or layers.min() < 0:
        return False
    for name, value in zip(names, layers):
        rank[name] = int(value)
    return True


def _lift(graph: nx.DiGraph, order: list, rank: dict, n_nodes: int) -> None:
    """Raise nodes with more later than earlier neighbours (reverse topological order).

    A node moved up by one layer shortens each later edge by one and
    lengthens each earlier edge by one, so the move pays when it has more
    later neighbours; it is taken as far as the successors allow.
    """
    for v in reversed(order):
        if not isinstance(v, int) or v >= n_nodes:
            continue
        succ = graph.succ[v]
        later = sum(1 for s, d in succ.items() if "edge_index" in d)
        earlier = sum(1 for p, d in graph.pred[v].items() if "edge_index" in d)
        if later <= earlier or not succ:
            continue
        ceiling = min(rank[s] - d["weight"] for s, d in succ.items())
        if ceiling > rank[v]:
            rank[v] = ceiling
