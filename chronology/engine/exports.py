"""Exports of a temporal order: GraphML, DOT, node-link JSON and CSV.

Each export shows the merged nodes and their edges (earlier -> later), either
the full order or its transitive reduction.  GraphML follows the format's
specification (Brandes et al. 2013): ``key`` declarations for every attribute
and ``edgedefault="directed"``.  The node-link form has the shape that
``networkx.node_link_graph`` reads.
"""

from __future__ import annotations

import io
from xml.sax.saxutils import escape, quoteattr

from .csv_cells import SafeWriter
from .reduction import Reduction, reduce_order
from .temporal_graph import TemporalGraph

__all__ = ["to_graphml", "to_dot", "to_node_link", "to_csv"]

_NODE_KEYS = (("label", "string"), ("contexts", "string"), ("kind", "string"), ("area", "string"),
              ("size", "int"))
_EDGE_KEYS = (("strict", "boolean"), ("relationships", "string"), ("interpretive", "string"))


def _edges(graph: TemporalGraph, reduced: bool, reduction: Reduction | None) -> list[int]:
    if not reduced:
        return list(range(graph.n_edges))
    if reduction is None:
        reduction = reduce_order(graph, explain=False)
    return list(reduction.direct_edges)


def _node_id(graph: TemporalGraph, v: int) -> str:
    return str(graph.contexts[graph.members[v][0]].id)


def _node_attrs(graph: TemporalGraph, v: int) -> dict:
    ctxs = [graph.contexts[c] for c in graph.members[v]]
    return {
        "label": graph.node_label(v),
        "contexts": " ".join(str(c.id) for c in ctxs),
        "kind": " ".join(sorted({c.kind for c in ctxs if c.kind})),
        "area": " ".join(sorted({c.area for c in ctxs if c.area})),
        "size": len(ctxs),
    }


def _edge_attrs(graph: TemporalGraph, e: int) -> dict:
    return {
        "strict": bool(graph.edge_strict[e]),
        "relationships": " ".join(str(r) for r in graph.edge_relationships[e]),
        "interpretive": " ".join(graph.extras[k].ref for k in graph.edge_extras[e]),
    }


def _graphml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    return escape(str(value))


def to_graphml(graph: TemporalGraph, *, reduced: bool = False, reduction: Reduction | None = None) -> str:
    """The order as a GraphML document (Brandes et al. 2013).

    Parameters
    ----------
    graph : TemporalGraph
    reduced : bool
        Export only the direct edges (requires an acyclic order).
    reduction : Reduction, optional
        A reduction already computed for ``graph``.

    Returns
    -------
    str
        UTF-8 XML text.  Node ids are the smallest context id of each node.

    References
    ----------
    Brandes, U., Eiglsperger, M., Lerner, J. & Pich, C. (2013). Graph markup
    language (GraphML). In Tamassia, R. (ed.), Handbook of Graph Drawing and
    Visualization, 517-541. CRC Press.
    """
    out = ['<?xml version="1.0" encoding="UTF-8"?>',
           '<graphml xmlns="http://graphml.graphdrawing.org/xmlns" '
           'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" '
           'xsi:schemaLocation="http://graphml.graphdrawing.org/xmlns '
           'http://graphml.graphdrawing.org/xmlns/1.0/graphml.xsd">']
    for name, typ in _NODE_KEYS:
        out.append(f'  <key id="n_{name}" for="node" attr.name="{name}" attr.type="{typ}"/>')
    for name, typ in _EDGE_KEYS:
        out.append(f'  <key id="e_{name}" for="edge" attr.name="{name}" attr.type="{typ}"/>')
    kind = "reduced" if reduced else "full"
    out.append(f'  <graph id="order-{kind}" edgedefault="directed">')
    for v in range(graph.n_nodes):
        out.append(f"    <node id={quoteattr(_node_id(graph, v))}>")
        for name, value in _node_attrs(graph, v).items():
            out.append(f'      <data key="n_{name}">{_graphml_value(value)}</data>')
        out.append("    </node>")
    for e in _edges(graph, reduced, reduction):
        src = quoteattr(_node_id(graph, graph.edge_earlier[e]))
        dst = quoteattr(_node_id(graph, graph.edge_later[e]))
        out.append(f'    <edge id="e{e}" source={src} target={dst}>')
        for name, value in _edge_attrs(graph, e).items():
            out.append(f'      <data key="e_{name}">{_graphml_value(value)}</data>')
        out.append("    </edge>")
    out.append("  </graph>")
    out.append("</graphml>")
    return "\n".join(out) + "\n"


def _dot_quote(text: str) -> str:
    return '"' + str(text).replace("\\", "\\\\").replace('"', '\\"') + '"'


def to_dot(graph: TemporalGraph, *, reduced: bool = False, reduction: Reduction | None = None) -> str:
    """The order in the DOT graph language, earliest at the bottom.

    Weak edges are dashed; edge labels list the supporting relationship ids.
    """
    lines = ["digraph order {", "  rankdir=BT;", "  node [shape=box];"]
    for v in range(graph.n_nodes):
        lines.append(f"  {_dot_quote(_node_id(graph, v))} [label={_dot_quote(graph.node_label(v))}];")
    for e in _edges(graph, reduced, reduction):
        a = _dot_quote(_node_id(graph, graph.edge_earlier[e]))
        b = _dot_quote(_node_id(graph, graph.edge_later[e]))
        attrs = _edge_attrs(graph, e)
        label = " ".join(x for x in (attrs["relationships"], attrs["interpretive"]) if x)
        style = "" if attrs["strict"] else ", style=dashed"
        lines.append(f"  {a} -> {b} [label={_dot_quote(label)}{style}];")
    lines.append("}")
    return "\n".join(lines) + "\n"


def to_node_link(graph: TemporalGraph, *, reduced: bool = False, reduction: Reduction | None = None) -> dict:
    """The order as node-link data (the shape of ``networkx.node_link_data``).

    ``networkx.node_link_graph(data, edges="edges")`` rebuilds it.  Node ids are
    the smallest context id of each node (ints); relationship ids are lists.
    """
    nodes = []
    for v in range(graph.n_nodes):
        attrs = _node_attrs(graph, v)
        attrs["contexts"] = graph.node_context_ids(v)
        nodes.append({"id": graph.contexts[graph.members[v][0]].id, **attrs})
    edges = []
    for e in _edges(graph, reduced, reduction):
        edges.append({
            "source": graph.contexts[graph.members[graph.edge_earlier[e]][0]].id,
            "target": graph.contexts[graph.members[graph.edge_later[e]][0]].id,
            "strict": bool(graph.edge_strict[e]),
            "relationships": list(graph.edge_relationships[e]),
            "interpretive": [graph.extras[k].ref for k in graph.edge_extras[e]],
        })
    return {
        "directed": True,
        "multigraph": False,
        "graph": {"order": "reduced" if reduced else "full"},
        "nodes": nodes,
        "edges": edges,
    }


_CSV_COLUMNS = ("relationship", "type", "later", "later_label", "earlier", "earlier_label", "certain",
                "later_node", "earlier_node", "strict", "direct")


def to_csv(graph: TemporalGraph, *, reduced: bool = False, reduction: Reduction | None = None) -> str:
    """The relationships behind the order's edges, one CSV row each.

    Columns: relationship, type, later, later_label, earlier, earlier_label,
    certain, later_node, earlier_node (smallest context id of the merged
    nodes), strict (of the edge) and direct (``true``/``false`` when a
    reduction is known, empty otherwise).  Interpretive orderings have an empty
    ``certain`` column and their reference as ``relationship``.
    """
    if reduced and reduction is None:
        reduction = reduce_order(graph, explain=False)
    direct = reduction.direct if reduction is not None else None
    buf = io.StringIO()
    writer = SafeWriter(buf, lineterminator="\n")
    writer.writerow(_CSV_COLUMNS)
    index_of = graph.index_of
    for e in _edges(graph, reduced, reduction):
        later_node = _node_id(graph, graph.edge_later[e])
        earlier_node = _node_id(graph, graph.edge_earlier[e])
        strict = "true" if graph.edge_strict[e] else "false"
        is_direct = "" if direct is None else ("true" if direct[e] else "false")
        for rid in graph.edge_relationships[e]:
            r = graph.relationships[rid]
            writer.writerow((rid, r.type, r.later, graph.label(index_of[r.later]), r.earlier,
                             graph.label(index_of[r.earlier]), "true" if r.certain else "false",
                             later_node, earlier_node, strict, is_direct))
        for k in graph.edge_extras[e]:
            x = graph.extras[k]
            writer.writerow((x.ref, "after" if x.strict else "not_before", x.later, graph.label(index_of[x.later]),
                             x.earlier, graph.label(index_of[x.earlier]), "", later_node, earlier_node, strict,
                             is_direct))
    return buf.getvalue()
