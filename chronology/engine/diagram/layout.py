"""Lay out a stratigraphic diagram: validation and the Sugiyama pipeline.

Steps (Sugiyama, Tagawa & Toda 1981): layers inside phase bands
(:mod:`.layering`), dummy vertices and crossing reduction (:mod:`.ordering`),
horizontal coordinates (:mod:`.routing`), then boxes, polylines and bands.
Earlier contexts are drawn below later ones.  Contexts without a phase, when
phases are given, are drawn in a vertical strip to the right of the phase
bands, at the height their stratigraphy gives them.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

from ..errors import DiagramError
from .layering import assign_layers
from .model import KINDS, UNPHASED_BAND, Band, DiagramEdge, DiagramNode, EdgePath, Layout, NodeBox
from .ordering import initial_order, make_proper, minimise_crossings
from .routing import assign_x
from .style import FONT_SIZE, LAYER_GAP, NODE_HEIGHT, node_text, text_width

__all__ = ["layout_diagram"]

_DUMMY_WIDTH = 4.0
_MIN_NODE_WIDTH = 40.0
_MARGIN = 16.0
_STRIP_GAP = 40.0  # same as the routing default between phased area and strip
_MIN_BAND_WIDTH = 80.0
_STRIP_HEADER = 22.0  # room for the unphased strip's name above its top layer


def layout_diagram(
    nodes: Iterable[DiagramNode],
    edges: Iterable[DiagramEdge],
    phases: Sequence[str] | None = None,
    *,
    sweeps: int = 24,
) -> Layout:
    """Compute a layered drawing of a reduced stratigraphic order.

    Parameters
    ----------
    nodes : iterable of DiagramNode
        Contexts or merged equality classes; ids must be unique.
    edges : iterable of DiagramEdge
        Direct relations (the transitive reduction) of an acyclic order.
        A relation given twice is drawn once (strict if either is strict).
    phases : sequence of str, optional
        Phase names, earliest first.  When given, each phase gets a band and
        every node whose ``phase`` is set must name one of them; nodes with
        no phase go to the unphased strip on the right.  Without it, node
        phases are ignored and no bands are drawn.
    sweeps : int
        Crossing-reduction sweeps (see :func:`.ordering.minimise_crossings`).

    Returns
    -------
    Layout
        Boxes, polylines, bands and the crossing count.  Relations that
        contradict the phase order come back with ``conflict=True``.

    Raises
    ------
    DiagramError
        ``diagram-duplicate-node``, ``diagram-unknown-kind``,
        ``diagram-unknown-node``, ``diagram-self-loop``,
        ``diagram-duplicate-phase``, ``diagram-unknown-phase`` or
        ``diagram-cycle`` (the relation must be acyclic).

    Examples
    --------
    >>> layout = layout_diagram(
    ...     [DiagramNode(1, "1001"), DiagramNode(2, "1002")],
    ...     [DiagramEdge(2, 1)])
    >>> layout.node(2).y > layout.node(1).y   # earlier is lower
    True

    References
    ----------
    Sugiyama, K., Tagawa, S. & Toda, M. (1981). Methods for visual
    understanding of hierarchical system structures. IEEE Transactions on
    Systems, Man, and Cybernetics 11(2), 109-125.
    """
    nodes = list(nodes)
    index, pairs, strict = _validate(nodes, edges, phases)
    n = len(nodes)
    phase_index = {name: k for k, name in enumerate(phases or ())}
    phase_of = [phase_index.get(node.phase) if phases else None for node in nodes]
    assignment = assign_layers(n, pairs, phase_of, len(phase_index))
    group = [1 if phases and p is None else 0 for p in phase_of]
    graph = make_proper(n, pairs, assignment.layer, group, assignment.n_layers)
    sort_key = [(group[i], nodes[i].area, _label_key(nodes[i].label)) for i in range(n)]
    start = initial_order(graph, sort_key)
    layers, crossings = minimise_crossings(graph, start, iterations=sweeps)
    texts = [node_text(node.label, node.members) for node in nodes]
    widths = [max(_MIN_NODE_WIDTH, text_width(t, FONT_SIZE) + 16.0) for t in texts]
    widths += [_DUMMY_WIDTH] * (graph.n_vertices - n)
    label_column = _label_column(phases)
    x = assign_x(graph, layers, widths)
    x = [xv + label_column + _MARGIN for xv in x]
    if phases:
        _clear_strip(x, widths, graph.group, label_column)
    top = assignment.n_layers - 1
    header = _STRIP_HEADER if any(group) else 0.0

    def y_of(layer: int) -> float:
        return _MARGIN + header + LAYER_GAP / 2 + (top - layer) * LAYER_GAP

    boxes = tuple(
        NodeBox(
            id=node.id,
            label=node.label,
            kind=node.kind,
            phase=node.phase if phases else None,
            area=node.area,
            members=tuple(node.members),
            layer=assignment.layer[i],
            x=x[i],
            y=y_of(assignment.layer[i]),
            width=widths[i],
            height=NODE_HEIGHT,
        )
        for i, node in enumerate(nodes)
    )
    paths = tuple(
        _edge_path(nodes, graph, k, pairs[k], strict[k], k in assignment.conflicts, x, y_of, widths)
        for k in range(len(pairs))
    )
    right = max((x[v] + widths[v] / 2 for v in range(graph.n_vertices)), default=label_column)
    width = right + _MARGIN
    height = 2 * _MARGIN + header + max(assignment.n_layers, 1) * LAYER_GAP
    bands = _bands(phases, assignment, group, x, widths, y_of, width, graph.n_vertices, graph)
    orders = tuple(
        tuple(nodes[v].id if v < n else -(v - n + 1) for v in layer) for layer in layers
    )
    return Layout(boxes, paths, bands, crossings, width, height, assignment.n_layers, orders)


def _validate(nodes, edges, phases):
    index: dict[int, int] = {}
    for i, node in enumerate(nodes):
        if node.id in index:
            raise DiagramError("node id given twice", code="diagram-duplicate-node", details={"id": node.id})
        if node.kind not in KINDS:
            raise DiagramError(
                f"unknown context kind {node.kind!r}",
                code="diagram-unknown-kind",
                details={"id": node.id, "kind": node.kind, "kinds": list(KINDS)},
            )
        index[node.id] = i
    if phases is not None:
        if len(set(phases)) != len(phases):
            raise DiagramError("phase named twice", code="diagram-duplicate-phase", details={"phases": list(phases)})
        known = set(phases)
        for node in nodes:
            if node.phase is not None and node.phase not in known:
                raise DiagramError(
                    f"context {node.label} is in phase {node.phase!r}, which is not in the phase list",
                    code="diagram-unknown-phase",
                    details={"id": node.id, "phase": node.phase},
                )
    merged: dict[tuple[int, int], bool] = {}
    for edge in edges:
        for end in (edge.earlier_id, edge.later_id):
            if end not in index:
                raise DiagramError("relation names an unknown node", code="diagram-unknown-node", details={"id": end})
        if edge.earlier_id == edge.later_id:
            raise DiagramError("relation joins a node to itself", code="diagram-self-loop", details={"id": edge.earlier_id})
        key = (index[edge.earlier_id], index[edge.later_id])
        merged[key] = merged.get(key, False) or edge.strict
    pairs = list(merged)
    _check_acyclic(len(nodes), pairs, nodes)
    return index, pairs, [merged[p] for p in pairs]


def _check_acyclic(n, pairs, nodes) -> None:
    indegree = [0] * n
    succ: list[list[int]] = [[] for _ in range(n)]
    for a, b in pairs:
        succ[a].append(b)
        indegree[b] += 1
    ready = [v for v in range(n) if indegree[v] == 0]
    seen = 0
    while ready:
        v = ready.pop()
        seen += 1
        for w in succ[v]:
            indegree[w] -= 1
            if indegree[w] == 0:
                ready.append(w)
    if seen < n:
        stuck = [nodes[v].id for v in range(n) if indegree[v] > 0]
        raise DiagramError(
            "the relations form a cycle; resolve it before drawing",
            code="diagram-cycle",
            details={"ids": stuck[:50]},
        )


def _label_key(label: str):
    """Natural sort: numbers by value, so 1002 comes before 1010."""
    return (0, int(label), label) if label.isdigit() else (1, 0, label)


def _label_column(phases) -> float:
    if not phases:
        return 0.0
    return max(text_width(p, FONT_SIZE + 1) for p in list(phases) + [UNPHASED_BAND]) + 24.0


def _edge_path(nodes, graph, k, pair, strict, conflict, x, y_of, widths) -> EdgePath:
    a, b = pair
    half = NODE_HEIGHT / 2
    chain = graph.chains[k]
    if chain is None:
        # both ends on one layer (only for a conflict): join the box sides
        left, right = (a, b) if x[a] < x[b] else (b, a)
        y = y_of(graph.layer_of[a])
        ends = {left: (x[left] + widths[left] / 2, y), right: (x[right] - widths[right] / 2, y)}
        points = (ends[a], ends[b])
    else:
        points = []
        for j, v in enumerate(chain):
            y = y_of(graph.layer_of[v])
            if j == 0:
                y -= half  # leave the lower box from its top
            elif j == len(chain) - 1:
                y += half  # enter the upper box from below
            points.append((x[v], y))
        if chain[0] != a:  # drawn downwards: store earlier end first
            points.reverse()
        points = tuple(points)
    return EdgePath(nodes[a].id, nodes[b].id, strict, conflict, points)


def _phased_right(x, widths, group, label_column) -> float:
    """Right edge of the phased area, never narrower than the band names."""
    right = max((x[v] + widths[v] / 2 for v in range(len(x)) if group[v] == 0), default=0.0)
    return max(right, label_column + _MARGIN + _MIN_BAND_WIDTH)


def _clear_strip(x, widths, group, label_column) -> None:
    """Shift the unphased strip right if the phased area is wider than its content."""
    strip = [v for v in range(len(x)) if group[v] == 1]
    if not strip:
        return
    needed = _phased_right(x, widths, group, label_column) + _STRIP_GAP
    deficit = needed - min(x[v] - widths[v] / 2 for v in strip)
    if deficit > 0:
        for v in strip:
            x[v] += deficit


def _bands(phases, assignment, group, x, widths, y_of, width, n_vertices, graph):
    if not phases:
        return ()
    half_gap = LAYER_GAP / 2
    phased_right = _phased_right(x, widths, graph.group, _label_column(phases))
    has_strip = any(group)
    band_right = phased_right + (16.0 if has_strip else _MARGIN)
    if not has_strip:
        band_right = width
    bands = []
    for name, (first, last) in zip(phases, assignment.bands):
        top_y = y_of(last) - half_gap
        bands.append(
            Band(name, "phase", 0.0 + _MARGIN / 2, top_y, band_right - _MARGIN / 2, y_of(first) + half_gap - top_y, first, last)
        )
    if has_strip:
        top_y = y_of(assignment.n_layers - 1) - half_gap - _STRIP_HEADER
        bottom_y = y_of(0) + half_gap
        strip_left = band_right + 8.0
        bands.append(
            Band(
                UNPHASED_BAND, "unphased", strip_left, top_y, width - _MARGIN / 2 - strip_left,
                bottom_y - top_y, 0, assignment.n_layers - 1,
            )
        )
    return tuple(bands)
