"""SVG rendering of the diagram."""

import xml.etree.ElementTree as ET

from chronology.benchmarks.diagram import random_graph
from chronology.engine.diagram import KINDS, DiagramEdge, DiagramNode, layout_diagram, render_svg

SVG = "{http://www.w3.org/2000/svg}"


def _sample():
    nodes = [
        DiagramNode(1, "1001", "deposit", "Area 1", "Phase 1"),
        DiagramNode(2, "1002", "cut", "Area 1", "Phase 2"),
        DiagramNode(3, "1003", "fill", "Area 1", "Phase 2", ("1003", "1011")),
        DiagramNode(4, "1004", "masonry", "Area 2", "Phase 1"),
        DiagramNode(5, "1005", "timber", "Area 2", None),
        DiagramNode(6, "1006", "skeleton", "Area 2", "Phase 2"),
        DiagramNode(7, "<1007 & co>", "other", "Area 2", "Phase 1"),
    ]
    edges = [
        DiagramEdge(1, 2), DiagramEdge(2, 3), DiagramEdge(4, 5, strict=False),
        DiagramEdge(5, 6), DiagramEdge(6, 7),  # 6 (Phase 2) below 7 (Phase 1)
    ]
    return layout_diagram(nodes, edges, ["Phase 1", "Phase 2"])


def _contexts(root):
    return [g for g in root.iter(f"{SVG}g") if g.get("class") == "context"]


def test_svg_is_well_formed_xml_with_title_and_caption():
    text = render_svg(_sample(), title="VML24 Area 1", caption="Direct relations only.")
    root = ET.fromstring(text.encode("utf-8"))
    assert root.tag == f"{SVG}svg"
    assert root.find(f"{SVG}title").text == "VML24 Area 1"
    assert "Direct relations only." in "".join(root.itertext())


def test_every_context_is_drawn_exactly_once():
    nodes, edges = random_graph(150, seed=2)
    root = ET.fromstring(render_svg(layout_diagram(nodes, edges)).encode())
    ids = [int(g.get("data-id")) for g in _contexts(root)]
    assert sorted(ids) == sorted(n.id for n in nodes)


def test_labels_are_escaped():
    root = ET.fromstring(render_svg(_sample()).encode())
    assert "<1007 & co>" in "".join(root.itertext())


def test_relation_against_phase_order_is_dashed_with_a_warning_glyph():
    root = ET.fromstring(render_svg(_sample()).encode())
    lines = [p for p in root.iter(f"{SVG}polyline") if p.get("class") == "conflict"]
    assert [(p.get("data-earlier"), p.get("data-later")) for p in lines] == [("6", "7")]
    assert lines[0].get("stroke-dasharray")
    assert [g for g in root.iter(f"{SVG}g") if g.get("class") == "warning"]


def test_legend_names_every_kind_drawn_and_bands_are_labelled():
    text = "".join(ET.fromstring(render_svg(_sample()).encode()).itertext())
    for word in ("Deposit", "Cut", "Fill", "Masonry", "Timber", "Skeleton", "Other"):
        assert word in text
    for band in ("Phase 1", "Phase 2", "Unphased"):
        assert band in text
    assert len(KINDS) == 7


def test_context_positions_in_svg_lie_inside_band_rectangles():
    layout = _sample()
    root = ET.fromstring(render_svg(layout).encode())
    rects = {r.get("data-phase"): r for r in root.iter(f"{SVG}rect") if r.get("class") == "band"}
    phase_of = {b.id: b.phase for b in layout.nodes}
    for g in _contexts(root):
        rect = rects[phase_of[int(g.get("data-id"))] or ""]
        y = float(g.get("data-y"))
        assert float(rect.get("y")) < y < float(rect.get("y")) + float(rect.get("height"))
