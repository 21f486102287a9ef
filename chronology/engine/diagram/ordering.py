"""Vertex order within layers: dummy vertices and crossing reduction.

Long edges are split by dummy vertices, one per layer crossed, so every
segment joins adjacent layers (Sugiyama, Tagawa & Toda 1981).  The order is
then improved by alternating downward and upward layer-by-layer sweeps that
sort each layer by the median (Gansner et al. 1993) or barycenter
(Sugiyama et al. 1981; Eades & Wormald 1994 for the median's bound) of its
neighbours in the layer just swept, each sweep followed by the transpose
heuristic of Gansner et al. (1993).  The best order seen, the initial one
included, is kept, so the result never has more crossings than the start.

Vertices carry a *group* (0 = phased area, 1 = unphased strip); groups stay
contiguous, in group order, within every layer.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from .crossings import bilayer_crossings

__all__ = ["ProperGraph", "make_proper", "initial_order", "minimise_crossings", "order_crossings"]


@dataclass(slots=True)
class ProperGraph:
    """A layered graph whose every edge joins adjacent layers.

    Vertices ``0 .. n_real - 1`` are the nodes; higher ones are dummies.
    ``chains[i]`` lists the vertices of edge ``i`` from its lower end to its
    upper end, or is None for an edge whose ends share a layer.
    """

    n_real: int
    layer_of: list[int]
    up: list[list[int]]
    down: list[list[int]]
    group: list[int]
    chains: list[list[int] | None]
    n_layers: int

    @property
    def n_vertices(self) -> int:
        return len(self.layer_of)


def make_proper(
    n_nodes: int,
    edges: Sequence[tuple[int, int]],
    layer: Sequence[int],
    group: Sequence[int],
    n_layers: int,
) -> ProperGraph:
    """Split every edge longer than one layer by dummy vertices.

    Edges may point downwards (a relation drawn against the phase order);
    their chain still runs from the lower end to the upper end.  A dummy
    takes the larger group of its edge's ends, so a line to the unphased
    strip travels in the strip.
    """
    graph = ProperGraph(
        n_real=n_nodes,
        layer_of=list(layer),
        up=[[] for _ in range(n_nodes)],
        down=[[] for _ in range(n_nodes)],
        group=list(group),
        chains=[],
        n_layers=n_layers,
    )
    for a, b in edges:
        if layer[a] == layer[b]:
            graph.chains.append(None)
            continue
        low, high = (a, b) if layer[a] < layer[b] else (b, a)
        chain = [low]
        dummy_group = max(group[a], group[b])
        for level in range(layer[low] + 1, layer[high]):
            d = graph.n_vertices
            graph.layer_of.append(level)
            graph.up.append([])
            graph.down.append([])
            graph.group.append(dummy_group)
            chain.append(d)
        chain.append(high)
        for lower, upper in zip(chain, chain[1:]):
            graph.up[lower].append(upper)
            graph.down[upper].append(lower)
        graph.chains.append(chain)
    return graph


def initial_order(graph: ProperGraph, sort_key: Sequence) -> list[list[int]]:
    """Depth-first order from the bottom, the starting point of the sweeps.

    Roots are visited in ``sort_key`` order (a key per real vertex, e.g.
    group, area and label), so related vertices start side by side
    (Gansner et al. 1993 start from a search order too).
    """
    layers: list[list[int]] = [[] for _ in range(graph.n_layers)]
    seen = [False] * graph.n_vertices
    roots = sorted(range(graph.n_real), key=lambda v: (graph.layer_of[v], sort_key[v]))
    for root in roots:
        if seen[root]:
            continue
        stack = [root]
        seen[root] = True
        while stack:
            v = stack.pop()
            layers[graph.layer_of[v]].append(v)
            for w in reversed(graph.up[v]):
                if not seen[w]:
                    seen[w] = True
                    stack.append(w)
    for v in range(graph.n_vertices):
        if not seen[v]:  # dummies whose lower end was a later root
            layers[graph.layer_of[v]].append(v)
    for layer in layers:
        layer.sort(key=lambda v: graph.group[v])  # stable: keeps search order
    return layers


def order_crossings(graph: ProperGraph, layers: list[list[int]]) -> int:
    """Crossings of ``layers`` (Barth, Jünger & Mutzel 2002 per layer pair)."""
    position = _positions(graph, layers)
    total = 0
    for i in range(len(layers) - 1):
        pairs = [(position[v], position[w]) for v in layers[i] for w in graph.up[v]]
        total += bilayer_crossings(pairs, len(layers[i + 1]))
    return total


def minimise_crossings(
    graph: ProperGraph, layers: list[list[int]], iterations: int = 24, sift_passes: int = 2
) -> tuple[list[list[int]], int]:
    """Reduce crossings by median/barycenter sweeps with transposition.

    Parameters
    ----------
    graph : ProperGraph
    layers : list of list of int
        Starting order (not modified).
    iterations : int
        Number of sweeps; even ones go upward, odd ones downward; the first
        half use the median, the second half alternate barycenter and median
        pairs.
    sift_passes : int
        Passes of sifting (Matuszewski, Schönfeld & Molitor 1999) over the
        best sweep result: each vertex in turn moves to the place in its
        layer where it crosses least.

    Returns
    -------
    (list of list of int, int)
        Best order found and its crossing count.

    References
    ----------
    Gansner, E. R., Koutsofios, E., North, S. C. & Vo, K.-P. (1993). A
    technique for drawing directed graphs. IEEE Transactions on Software
    Engineering 19(3), 214-230.
    Eades, P. & Wormald, N. C. (1994). Edge crossings in drawings of
    bipartite graphs. Algorithmica 11(4), 379-403.
    Sugiyama, K., Tagawa, S. & Toda, M. (1981). Methods for visual
    understanding of hierarchical system structures. IEEE Transactions on
    Systems, Man, and Cybernetics 11(2), 109-125.
    Matuszewski, C., Schönfeld, R. & Molitor, P. (1999). Using sifting for
    k-layer straightline crossing minimization. Graph Drawing (GD 1999),
    LNCS 1731, 217-224.
    """
    best = [list(layer) for layer in layers]
    best_count = order_crossings(graph, best)
    current = [list(layer) for layer in best]
    for it in range(iterations):
        if best_count == 0:
            break
        use_median = it < iterations // 2 or it % 4 < 2
        # on alternate pairs of sweeps, ties and equal swaps go the other
        # way, which lets the search leave plateaus (Gansner et al. 1993)
        flip = it % 4 >= 2
        if it % 2 == 0:
            for i in range(1, len(current)):
                _sort_layer(graph, current, i, graph.down, current[i - 1], use_median, flip)
        else:
            for i in range(len(current) - 2, -1, -1):
                _sort_layer(graph, current, i, graph.up, current[i + 1], use_median, flip)
        _transpose(graph, current, equal_swaps=flip)
        count = order_crossings(graph, current)
        if count <= best_count:
            best, best_count = [list(layer) for layer in current], count
    for _ in range(sift_passes):
        if best_count == 0:
            break
        current = [list(layer) for layer in best]
        _sift(graph, current)
        _transpose(graph, current)
        count = order_crossings(graph, current)
        if count >= best_count:
            break
        best, best_count = current, count
    return best, best_count


def _positions(graph: ProperGraph, layers: list[list[int]]) -> list[int]:
    position = [0] * graph.n_vertices
    for layer in layers:
        for p, v in enumerate(layer):
            position[v] = p
    return position


def _sort_layer(graph, layers, i, neighbours, fixed, use_median, flip=False) -> None:
    pos_fixed = {v: p for p, v in enumerate(fixed)}
    layer = layers[i]
    scale = len(fixed) / max(len(layer), 1)
    keys = {}
    for p, v in enumerate(layer):
        ps = sorted(pos_fixed[w] for w in neighbours[v])
        if not ps:
            keys[v] = p * scale  # no neighbours: hold its place
        elif use_median:
            keys[v] = _weighted_median(ps)
        else:
            keys[v] = sum(ps) / len(ps)
    if flip:
        layer.reverse()  # the sort is stable: equal keys swap sides
    layer.sort(key=lambda v: (graph.group[v], keys[v]))


def _weighted_median(ps: list[int]) -> float:
    """Median position, interpolated for even counts (Gansner et al. 1993)."""
    m = len(ps) // 2
    if len(ps) % 2 == 1:
        return float(ps[m])
    if len(ps) == 2:
        return (ps[0] + ps[1]) / 2
    left = ps[m - 1] - ps[0]
    right = ps[-1] - ps[m]
    if left + right == 0:
        return (ps[m - 1] + ps[m]) / 2
    return (ps[m - 1] * right + ps[m] * left) / (left + right)


def _pair_crossings(pos, nv, nw) -> tuple[int, int]:
    """Crossings among the edges of v and w (v left of w, then w left of v)."""
    vw = wv = 0
    for a in nv:
        pa = pos[a]
        for b in nw:
            pb = pos[b]
            if pa > pb:
                vw += 1
            elif pa < pb:
                wv += 1
    return vw, wv


def _sift(graph: ProperGraph, layers: list[list[int]]) -> None:
    """Move each vertex to its least-crossing place in its layer, one by one.

    Only crossings between the moved vertex's edges and its layer mates'
    change, so the gain of each place is exact: sliding ``v`` past ``w``
    changes the count by ``c(w, v) - c(v, w)``.  Vertices stay in their
    group's stretch of the layer.
    """
    pos = _positions(graph, layers)
    up, down, group = graph.up, graph.down, graph.group
    for layer in layers:
        for v in list(layer):
            j = layer.index(v)
            lo = j
            while lo > 0 and group[layer[lo - 1]] == group[v]:
                lo -= 1
            hi = j
            while hi + 1 < len(layer) and group[layer[hi + 1]] == group[v]:
                hi += 1
            others = layer[lo:j] + layer[j + 1 : hi + 1]
            # cost relative to v at the stretch's left end; ties keep v's place
            cost = 0
            best_cost, best_at = 0, 0
            for k, w in enumerate(others):
                a1, b1 = _pair_crossings(pos, up[v], up[w])
                a2, b2 = _pair_crossings(pos, down[v], down[w])
                cost += (b1 + b2) - (a1 + a2)  # now w left of v
                if cost < best_cost or (cost == best_cost and lo + k + 1 == j):
                    best_cost, best_at = cost, k + 1
            others.insert(best_at, v)
            layer[lo : hi + 1] = others
            for p in range(lo, hi + 1):
                pos[layer[p]] = p


def _transpose(graph: ProperGraph, layers: list[list[int]], equal_swaps: bool = False,
               max_passes: int = 30) -> None:
    """Swap neighbours in a layer while that lowers crossings (Gansner et al. 1993).

    With ``equal_swaps`` a swap that leaves the count unchanged is made too;
    passes stop once a pass brings no strict gain.
    """
    pos = _positions(graph, layers)
    up, down, group = graph.up, graph.down, graph.group
    for _ in range(max_passes):
        gain = 0
        for layer in layers:
            for j in range(len(layer) - 1):
                v, w = layer[j], layer[j + 1]
                if group[v] != group[w]:
                    continue
                a1, b1 = _pair_crossings(pos, up[v], up[w])
                a2, b2 = _pair_crossings(pos, down[v], down[w])
                before, after = a1 + a2, b1 + b2
                if after < before or (equal_swaps and after == before and before > 0):
                    layer[j], layer[j + 1] = w, v
                    pos[v], pos[w] = j + 1, j
                    gain += before - after
        if gain == 0:
            break
