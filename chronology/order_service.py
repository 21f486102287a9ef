"""The temporal order of a project's record, as the service uses it.

Translates the record at a revision into engine data, and the engine's plain
results into what the API and the demo serve: the full check report
(stored per revision), the diagram (SVG) and the exports.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

from chronology.engine.checks import check_order
from chronology.engine.diagram import DiagramEdge, DiagramNode, layout_diagram, render_svg, split_for_drawing
from chronology.engine.exports import to_csv, to_dot, to_graphml, to_node_link
from chronology.engine.reduction import implying_path, reduce_order
from chronology.engine.temporal_graph import OrderPolicy, TemporalGraph, compile_order
from projects.models import Project
from projects.record import reads

#: Largest record drawn whole; larger ones are drawn per area or per phase.
MAX_DRAWN = 500

_KIND_FOR_DIAGRAM = {"deposit", "cut", "fill", "masonry", "timber", "skeleton", "other"}

CAUTION = (
    "Derived view: the temporal order is computed from the physical record and is "
    "never written back to it."
)


@dataclass
class RecordOrder:
    project: Project
    revision: int
    graph: TemporalGraph


def record_order(project: Project, revision: int | None = None, policy: OrderPolicy | None = None) -> RecordOrder:
    revision = project.revision if revision is None else revision
    contexts, relationships = reads.snapshot(project, revision)
    return RecordOrder(project, revision, compile_order(contexts, relationships, policy))


def version_order(version) -> tuple[RecordOrder, list[str], dict[int, str]]:
    """An interpretation version's own order (its revision, its decisions) and its phasing."""
    from chronology.interpretations.services import record_at
    from chronology.interpretations.validity import compile_version_order

    record = record_at(version.project, version.record_revision)
    graph = compile_version_order(version.content, record)
    names = {p["key"]: p["name"] for p in version.content.get("phases", [])}
    phases = [p["name"] for p in version.content.get("phases", [])]
    phase_of = {a["context"]: names[a["phase"]] for a in version.content.get("assignments", []) if a["phase"] in names}
    return RecordOrder(version.project, version.record_revision, graph), phases, phase_of


def full_check(project: Project, revision: int | None = None) -> dict:
    """Check + reduction of the record at ``revision`` as plain data.

    Every redundant relationship is listed with its witness (the first context
    after its earlier end on an implying path), so the report stays linear in
    the size of the record; the full path of one relationship is served by
    :func:`implied_by`.
    """
    order = record_order(project, revision)
    graph = order.graph
    report = check_order(graph).as_dict()
    if report["acyclic"]:
        reduction = reduce_order(graph, explain=True)
        redundant = []
        for item in reduction.redundant:
            entry = item.as_dict(graph)
            entry["implied_by"] = f"a path of direct relationships through {entry['via_label']}"
            if item.recorded:
                entry["path_url"] = _implied_by_url(project, item.id, order.revision)
            redundant.append(entry)
        report["direct_edge_count"] = len(reduction.direct_edges)
        report["redundant_relationships"] = redundant
        report["redundant_count"] = len(redundant)
    report.update(project=project.code, revision=order.revision, method=_method_note())
    return report


def _implied_by_url(project: Project, relationship_id: int, revision: int) -> str:
    return f"/api/v1/projects/{project.code}/relationships/{relationship_id}/implied-by/?at={revision}"


def implied_by(project: Project, relationship_id: int, revision: int | None = None) -> dict:
    """Whether one relationship is redundant at ``revision``, and the full path that implies it.

    Raises ``RecordNotFound`` when the relationship is not in the record at
    that revision, ``CycleError`` when the record is not acyclic.
    """
    from projects.record.errors import RecordNotFound

    order = record_order(project, revision)
    graph = order.graph
    rel = graph.relationships.get(relationship_id)
    if rel is None:
        raise RecordNotFound(f"relationship {relationship_id} is not in the record at revision {order.revision}",
                             field="relationship", code="not-found")
    reduction = reduce_order(graph, explain=True)
    item = next((r for r in reduction.redundant if r.recorded and r.id == relationship_id), None)
    body = {"project": project.code, "revision": order.revision, "relationship": relationship_id,
            "redundant": item is not None, "path": [], "implied_by": None, "note": CAUTION}
    if item is not None:
        steps = implying_path(graph, reduction, item)
        body.update(item.as_dict(graph), id=relationship_id, path=[s.as_dict() for s in steps],
                    implied_by=" → ".join(s.text() for s in steps))
    return body


def _method_note() -> dict:
    return {
        "merging": "union–find over certain 'same as' / 'bonded with' (Tarjan 1975)",
        "cycles": "strongly connected components (Tarjan 1972), one shortest explaining cycle each",
        "reduction": "transitive reduction of the acyclic order (Aho, Garey & Ullman 1972)",
        "note": CAUTION,
    }


def summarise(report: dict) -> dict:
    issues = report.get("issues", [])
    count = lambda sev: sum(1 for i in issues if i["severity"] == sev)  # noqa: E731
    return {
        "ok": report["ok"],
        "errors": count("error"),
        "warnings": count("warning"),
        "contexts": report["context_count"],
        "redundant": report.get("redundant_count", 0),
        "longest_path_length": report.get("longest_path_length", 0),
    }


def store_check(project: Project, revision: int, job=None):
    from chronology.models import CheckReport

    existing = CheckReport.objects.filter(project=project, revision=revision).first()
    if existing is not None:
        return existing
    report = full_check(project, revision)
    return CheckReport.objects.create(
        project=project, revision=revision, job=job, ok=report["ok"], summary=summarise(report), report=report
    )


# -- diagram -----------------------------------------------------------------

def diagram_parts(order: RecordOrder, phase_of: dict[int, str] | None = None):
    """Diagram nodes and the direct edges of the (acyclic) order."""
    graph = order.graph
    reduction = reduce_order(graph, explain=False)
    # A node is named by its first context's record id, so a page can open the context a reader clicks
    # and mark the contexts a comparison names.
    key = [graph.contexts[graph.members[node][0]].id for node in range(graph.n_nodes)]
    nodes = []
    for node in range(graph.n_nodes):
        ids = graph.node_context_ids(node)
        first = graph.contexts[graph.members[node][0]]
        phase = None
        if phase_of:
            phase = next((phase_of[i] for i in ids if i in phase_of), None)
        kind = first.kind if first.kind in _KIND_FOR_DIAGRAM else "other"
        nodes.append(DiagramNode(
            id=key[node], label=graph.node_label(node), kind=kind, area=first.area or "", phase=phase,
            members=tuple(graph.label(c) for c in graph.members[node]),
        ))
    edges = [
        DiagramEdge(key[graph.edge_earlier[e]], key[graph.edge_later[e]], graph.edge_strict[e])
        for e in reduction.direct_edges
    ]
    return nodes, edges


def diagram_svg(order: RecordOrder, *, area: str | None = None, phases=None, phase_of=None,
                title: str | None = None) -> str:
    """The layered diagram as SVG: earlier at the bottom, phases as bands."""
    from chronology.engine.errors import CycleError, OrderError

    try:
        nodes, edges = diagram_parts(order, phase_of)
    except CycleError:
        # Only a record that cannot be drawn pays for the full check that explains why.
        report = check_order(order.graph)
        raise OrderError("the record is not acyclic; it cannot be drawn", code="not-acyclic",
                         details={"issues": [i.as_dict() for i in report.errors]}) from None
    if area is not None:
        sizes = Counter(node.area for node in nodes)
        if area not in sizes:
            raise OrderError(f"no area {area!r} in the record", code="unknown-area",
                             details={"areas": sorted(a for a in sizes if a)})
        if len(sizes) > 1:
            # Parts as large as the largest area: every area is one part, drawn with the order through the others.
            parts = {p.key[0]: p for p in split_for_drawing(nodes, edges, max_nodes=max(sizes.values()), by="area")}
            part = parts.get(area)
            if part is None:
                raise OrderError(f"area {area!r} cannot be drawn on its own", code="unknown-area",
                                 details={"areas": sorted(parts)})
            nodes, edges = list(part.nodes), list(part.edges)
    elif len(nodes) > MAX_DRAWN:
        parts = split_for_drawing(nodes, edges, max_nodes=MAX_DRAWN, by="area")
        raise OrderError(
            f"{len(nodes)} nodes are too many to draw at once; draw one part at a time",
            code="too-large-to-draw", details={"parts": ["/".join(p.key) for p in parts], "max_nodes": MAX_DRAWN},
        )
    layout = layout_diagram(nodes, edges, phases if phase_of else None)
    caption = (f"{order.project.code} record revision {order.revision}. Earlier at the bottom; direct "
               f"relationships only (redundant ones are listed in the check report). {CAUTION}")
    return render_svg(layout, title=title or f"{order.project.name} — temporal order", caption=caption)


EXPORTS = {
    "graphml": ("application/graphml+xml", "graphml"),
    "dot": ("text/vnd.graphviz", "gv"),
    "json": ("application/json", "json"),
    "csv": ("text/csv", "csv"),
}


def export(order: RecordOrder, fmt: str, *, reduced: bool = False):
    graph = order.graph
    reduction = reduce_order(graph, explain=False) if reduced else None
    if fmt == "graphml":
        return to_graphml(graph, reduced=reduced, reduction=reduction)
    if fmt == "dot":
        return to_dot(graph, reduced=reduced, reduction=reduction)
    if fmt == "json":
        return to_node_link(graph, reduced=reduced, reduction=reduction)
    if fmt == "csv":
        return to_csv(graph, reduced=reduced, reduction=reduction)
    raise ValueError(fmt)
