"""Geometry of the laid-out diagram: boxes, bands and relation lines."""

import random

import pytest

from chronology.benchmarks.diagram import random_graph
from chronology.engine.diagram import (
    UNPHASED_BAND,
    DiagramEdge,
    DiagramNode,
    count_crossings,
    layout_diagram,
)
from chronology.engine.errors import DiagramError

PHASES = ["Phase 1", "Phase 2", "Phase 3", "Phase 4"]


def _phased_graph(n=150, seed=11, unphased=0.1, wrong=0.0):
    """Random order with phases from its depth; a few unphased or misphased."""
    nodes, edges = random_graph(n, seed=seed)
    rng = random.Random(seed)
    later = {}
    for e in edges:
        later.setdefault(e.earlier_id, []).append(e.later_id)
    height = {}
    for node in sorted(nodes, key=lambda x: x.id, reverse=True):
        height[node.id] = 0
    # depth from the bottom by repeated relaxation (graph is small)
    for _ in range(n):
        changed = False
        for e in edges:
            if height[e.later_id] < height[e.earlier_id] + 1:
                height[e.later_id] = height[e.earlier_id] + 1
                changed = True
        if not changed:
            break
    top = max(height.values()) + 1
    out = []
    for node in nodes:
        k = min(len(PHASES) - 1, height[node.id] * len(PHASES) // top)
        r = rng.random()
        if r < unphased:
            phase = None
        elif r < unphased + wrong:
            phase = PHASES[(k + 2) % len(PHASES)]
        else:
            phase = PHASES[k]
        out.append(DiagramNode(node.id, node.label, node.kind, node.area, phase))
    return out, edges


def _band_of(layout, node):
    name = node.phase or UNPHASED_BAND
    (band,) = [b for b in layout.bands if b.name == name]
    return band


def test_every_context_appears_exactly_once():
    nodes, edges = _phased_graph()
    layout = layout_diagram(nodes, edges, PHASES)
    assert sorted(b.id for b in layout.nodes) == sorted(n.id for n in nodes)


def test_every_context_lies_inside_its_phase_band_or_the_unphased_strip():
    nodes, edges = _phased_graph(unphased=0.15, wrong=0.1)
    layout = layout_diagram(nodes, edges, PHASES)
    for box in layout.nodes:
        band = _band_of(layout, box)
        assert band.y <= box.y - box.height / 2 and box.y + box.height / 2 <= band.y + band.height
        assert band.x <= box.x - box.width / 2 and box.x + box.width / 2 <= band.x + band.width


def test_phase_bands_are_stacked_earliest_at_the_bottom():
    nodes, edges = _phased_graph()
    layout = layout_diagram(nodes, edges, PHASES)
    ys = [b.y for b in layout.bands if b.kind == "phase"]
    assert ys == sorted(ys, reverse=True)  # SVG y grows downwards


def test_earlier_context_is_drawn_below_the_later_for_every_relation_obeyed():
    nodes, edges = _phased_graph(unphased=0.15, wrong=0.1)
    layout = layout_diagram(nodes, edges, PHASES)
    boxes = {b.id: b for b in layout.nodes}
    assert any(e.conflict for e in layout.edges)
    for e in layout.edges:
        if not e.conflict:
            assert boxes[e.earlier_id].y > boxes[e.later_id].y


def test_without_phases_no_relation_is_a_conflict():
    nodes, edges = random_graph(200, seed=4)
    layout = layout_diagram(nodes, edges)
    boxes = {b.id: b for b in layout.nodes}
    assert not any(e.conflict for e in layout.edges)
    assert all(boxes[e.earlier_id].y > boxes[e.later_id].y for e in layout.edges)
    assert layout.bands == ()


def test_relation_against_the_phase_order_is_flagged():
    nodes = [DiagramNode(1, "1001", phase="Phase 2"), DiagramNode(2, "1002", phase="Phase 1")]
    layout = layout_diagram(nodes, [DiagramEdge(1, 2)], ["Phase 1", "Phase 2"])
    (edge,) = layout.edges
    assert edge.conflict
    assert layout.node(1).y < layout.node(2).y  # drawn inside its bands regardless


def test_boxes_in_one_layer_do_not_overlap():
    nodes, edges = _phased_graph()
    layout = layout_diagram(nodes, edges, PHASES)
    by_layer = {}
    for box in layout.nodes:
        by_layer.setdefault(box.layer, []).append(box)
    for boxes in by_layer.values():
        boxes.sort(key=lambda b: b.x)
        for left, right in zip(boxes, boxes[1:]):
            assert left.x + left.width / 2 < right.x - right.width / 2


def test_polyline_runs_from_top_of_earlier_box_to_bottom_of_later_box():
    nodes, edges = random_graph(80, seed=6)
    layout = layout_diagram(nodes, edges)
    boxes = {b.id: b for b in layout.nodes}
    for e in layout.edges:
        low, high = boxes[e.earlier_id], boxes[e.later_id]
        assert e.points[0] == pytest.approx((low.x, low.y - low.height / 2))
        assert e.points[-1] == pytest.approx((high.x, high.y + high.height / 2))
        assert len(e.points) == low.layer - high.layer + 1 or len(e.points) == high.layer - low.layer + 1


def test_reported_crossings_match_a_recount_of_the_layer_orders():
    nodes, edges = random_graph(120, seed=12)
    layout = layout_diagram(nodes, edges)
    segments = []
    dummy = 0
    for e in layout.edges:
        # chains are listed edge by edge with dummies numbered in that order
        span = len(e.points) - 1
        chain = [e.earlier_id] + [-(dummy + i + 1) for i in range(span - 1)] + [e.later_id]
        dummy += span - 1
        segments += list(zip(chain, chain[1:]))
    assert count_crossings(layout.layer_orders, segments) == layout.crossings


def test_merged_class_shows_its_members():
    nodes = [DiagramNode(1, "1003", members=("1003", "1007")), DiagramNode(2, "1002")]
    layout = layout_diagram(nodes, [DiagramEdge(2, 1)])
    assert layout.node(1).members == ("1003", "1007")


@pytest.mark.parametrize(
    "nodes, edges, phases, code",
    [
        ([DiagramNode(1, "a"), DiagramNode(1, "b")], [], None, "diagram-duplicate-node"),
        ([DiagramNode(1, "a", kind="brick")], [], None, "diagram-unknown-kind"),
        ([DiagramNode(1, "a")], [DiagramEdge(1, 2)], None, "diagram-unknown-node"),
        ([DiagramNode(1, "a")], [DiagramEdge(1, 1)], None, "diagram-self-loop"),
        ([DiagramNode(1, "a", phase="X")], [], ["Y"], "diagram-unknown-phase"),
        ([DiagramNode(1, "a")], [], ["Y", "Y"], "diagram-duplicate-phase"),
        ([DiagramNode(1, "a"), DiagramNode(2, "b")], [DiagramEdge(1, 2), DiagramEdge(2, 1)], None, "diagram-cycle"),
    ],
)
def test_bad_input_is_rejected_with_a_stable_code(nodes, edges, phases, code):
    with pytest.raises(DiagramError) as info:
        layout_diagram(nodes, edges, phases)
    assert info.value.code == code


def test_empty_record_lays_out_and_renders():
    from chronology.engine.diagram import render_svg
    import xml.etree.ElementTree as ET

    layout = layout_diagram([], [])
    assert layout.nodes == () and layout.crossings == 0
    ET.fromstring(render_svg(layout).encode())


def test_unphased_strip_clears_the_phase_bands_even_when_no_context_is_phased():
    layout = layout_diagram([DiagramNode(1, "1001"), DiagramNode(2, "1002")], [DiagramEdge(1, 2)], ["Phase 1"])
    (phase,) = [b for b in layout.bands if b.kind == "phase"]
    (strip,) = [b for b in layout.bands if b.kind == "unphased"]
    assert phase.x + phase.width < strip.x
    for box in layout.nodes:
        assert strip.x <= box.x - box.width / 2 and box.x + box.width / 2 <= strip.x + strip.width
