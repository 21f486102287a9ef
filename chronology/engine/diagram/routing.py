"""Horizontal coordinates and edge polylines of the layered drawing.

The x coordinates solve the convex problem of Gansner et al. (1993),
minimise ``sum omega(e) * (x_u - x_v)^2`` over the segments, with weights
omega = 1, 2, 8 for real-real, real-dummy and dummy-dummy segments so that
long edges run straight, subject to the layer order and the minimum
separation of neighbouring boxes.  (Gansner et al. use the absolute value
and network simplex; the squared form keeps the solver short.)  It is solved
by block coordinate descent: each layer in turn is placed optimally given
its neighbours, which under the order constraints is a weighted isotonic
regression solved exactly by pool-adjacent-violators (Ayer et al. 1955).
Sweeps alternate upwards and downwards.

Unphased vertices (group 1) are held to the right of a vertical boundary
just beyond the phased area, so they form a strip of their own.
"""

from __future__ import annotations

from collections.abc import Sequence

from .ordering import ProperGraph

__all__ = ["assign_x", "isotonic_regression"]


def isotonic_regression(targets: Sequence[float], weights: Sequence[float]) -> list[float]:
    """Weighted least-squares non-decreasing fit (pool-adjacent-violators).

    References
    ----------
    Ayer, M., Brunk, H. D., Ewing, G. M., Reid, W. T. & Silverman, E. (1955).
    An empirical distribution function for sampling with incomplete
    information. Annals of Mathematical Statistics 26(4), 641-647.

    Examples
    --------
    >>> isotonic_regression([1.0, 3.0, 2.0], [1.0, 1.0, 1.0])
    [1.0, 2.5, 2.5]
    """
    blocks: list[list[float]] = []  # [weighted sum, weight, count]
    for t, w in zip(targets, weights):
        blocks.append([w * t, w, 1])
        while len(blocks) > 1 and blocks[-2][0] * blocks[-1][1] > blocks[-1][0] * blocks[-2][1]:
            s, w2, c = blocks.pop()
            blocks[-1][0] += s
            blocks[-1][1] += w2
            blocks[-1][2] += c
    fitted: list[float] = []
    for s, w, c in blocks:
        fitted.extend([s / w] * int(c))
    return fitted


def assign_x(
    graph: ProperGraph,
    layers: list[list[int]],
    widths: Sequence[float],
    *,
    node_gap: float = 14.0,
    dummy_gap: float = 6.0,
    strip_gap: float = 40.0,
    sweeps: int = 10,
) -> list[float]:
    """Place every vertex horizontally, keeping the layer orders.

    Parameters
    ----------
    graph : ProperGraph
    layers : list of list of int
        Final order of each layer, left to right.
    widths : sequence of float
        Box width of each vertex (dummies: the line's clearance).
    node_gap, dummy_gap : float
        Clear space between neighbouring boxes; ``dummy_gap`` when both are
        dummies.
    strip_gap : float
        Space between the phased area and the unphased strip.
    sweeps : int
        Number of up-and-down passes.

    Returns
    -------
    list of float
        Centre x of each vertex; the leftmost box edge is at 0.

    References
    ----------
    Gansner, E. R., Koutsofios, E., North, S. C. & Vo, K.-P. (1993). A
    technique for drawing directed graphs. IEEE Transactions on Software
    Engineering 19(3), 214-230.
    """
    n_real = graph.n_real
    group = graph.group
    seps = [_separations(layer, widths, n_real, node_gap, dummy_gap) for layer in layers]
    x = [0.0] * graph.n_vertices
    for layer, sep in zip(layers, seps):
        offset = 0.0
        for j, v in enumerate(layer):
            offset += sep[j]
            x[v] = offset
        shift = offset / 2
        for v in layer:
            x[v] -= shift
    has_strip = any(g == 1 for g in group) and any(g == 0 for g in group)
    order = list(range(len(layers))) + list(range(len(layers) - 2, 0, -1))
    for _ in range(sweeps):
        boundary = _boundary(x, widths, group, strip_gap) if has_strip else None
        for i in order:
            _place_layer(graph, layers[i], seps[i], x, widths, boundary)
    boundary = _boundary(x, widths, group, strip_gap) if has_strip else None
    if has_strip:
        for i in range(len(layers)):
            _place_layer(graph, layers[i], seps[i], x, widths, boundary, only_strip=True)
    _straighten(graph, layers, seps, x, widths, boundary, strip_gap)
    left = min((x[v] - widths[v] / 2 for v in range(graph.n_vertices)), default=0.0)
    return [xv - left for xv in x]


def _straighten(graph, layers, seps, x, widths, boundary, strip_gap, passes: int = 2) -> None:
    """Put the two ends of one-to-one links on one vertical where room allows.

    The squared objective draws a chain pinned at both ends as a slanted
    line; moving each link's upper end onto its lower end (then the reverse)
    turns it into vertical runs joined by one slant, the look of the
    priority layout of Sugiyama et al. (1981), and never breaks the order
    or the spacing.
    """
    up, down, group = graph.up, graph.down, graph.group
    phased_right = None if boundary is None else boundary - strip_gap
    sweeps = []
    for _ in range(passes):
        sweeps.append((range(1, len(layers)), down, up))
        sweeps.append((range(len(layers) - 2, -1, -1), up, down))
    for order, toward, back in sweeps:
        for i in order:
            layer, sep = layers[i], seps[i]
            for j, v in enumerate(layer):
                if len(toward[v]) != 1 or len(back[toward[v][0]]) != 1:
                    continue
                target = x[toward[v][0]]
                lo = x[layer[j - 1]] + sep[j] if j > 0 else float("-inf")
                hi = x[layer[j + 1]] - sep[j + 1] if j + 1 < len(layer) else float("inf")
                if boundary is not None:
                    if group[v] == 1:
                        lo = max(lo, boundary + widths[v] / 2)
                    else:
                        hi = min(hi, phased_right - widths[v] / 2)
                if lo <= target <= hi:
                    x[v] = target


def _separations(layer, widths, n_real, node_gap, dummy_gap) -> list[float]:
    """Distance between each vertex's centre and its left neighbour's (0 first)."""
    sep = [0.0]
    for v, w in zip(layer, layer[1:]):
        gap = dummy_gap if (v >= n_real and w >= n_real) else node_gap
        sep.append((widths[v] + widths[w]) / 2 + gap)
    return sep


def _boundary(x, widths, group, strip_gap) -> float:
    right = max((x[v] + widths[v] / 2 for v in range(len(x)) if group[v] == 0), default=0.0)
    return right + strip_gap


def _omega(v: int, w: int, n_real: int) -> float:
    dummies = (v >= n_real) + (w >= n_real)
    return (1.0, 2.0, 8.0)[dummies]


def _place_layer(graph, layer, sep, x, widths, boundary, only_strip=False) -> None:
    """Optimal positions of one layer given its neighbours (one descent step)."""
    if not layer:
        return
    n_real = graph.n_real
    targets, weights = [], []
    for v in layer:
        total = 1e-3  # a faint pull to the current place settles loose vertices
        acc = 1e-3 * x[v]
        for w in graph.up[v]:
            om = _omega(v, w, n_real)
            total += om
            acc += om * x[w]
        for w in graph.down[v]:
            om = _omega(v, w, n_real)
            total += om
            acc += om * x[w]
        targets.append(acc / total)
        weights.append(total)
    split = len(layer)
    if boundary is not None:
        split = next((j for j, v in enumerate(layer) if graph.group[v] == 1), len(layer))
    segments = [(0, split, None), (split, len(layer), boundary)]
    if only_strip:
        segments = segments[1:]
    for start, stop, floor in segments:
        if start == stop:
            continue
        offsets, acc = [], 0.0
        for j in range(start, stop):
            acc += sep[j] if j > start else 0.0
            offsets.append(acc)
        fitted = isotonic_regression(
            [targets[j] - offsets[j - start] for j in range(start, stop)],
            weights[start:stop],
        )
        if floor is not None:
            # the projection onto {monotone} ∩ {y >= c} is the clipped projection
            least = floor + widths[layer[start]] / 2
            fitted = [max(y, least) for y in fitted]
        for j in range(start, stop):
            x[layer[j]] = fitted[j - start] + offsets[j - start]
