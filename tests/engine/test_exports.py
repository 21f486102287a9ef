"""Tests of the GraphML, DOT, node-link and CSV exports."""

import csv
import io
import xml.etree.ElementTree as ET

import networkx as nx

from chronology.engine.exports import to_csv, to_dot, to_graphml, to_node_link
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.temporal_graph import OrderPolicy, compile_order


def record():
    contexts = [ContextData(1001, "1001", "deposit", "Area 1"), ContextData(1002, "1002 <west>", "cut", "Area 1"),
                ContextData(1003, "1003", "fill", "Area 1"), ContextData(1004, "1004", "deposit", "Area 2")]
    rels = [RelationshipData(1, "cuts", 1002, 1001), RelationshipData(2, "fills", 1003, 1002),
            RelationshipData(3, "above", 1003, 1001), RelationshipData(4, "abuts", 1004, 1003)]
    return compile_order(contexts, rels, OrderPolicy(extra_orderings=[(1001, 1004, True, "note-7")]))


def test_graphml_is_valid_xml_with_key_declarations():
    text = to_graphml(record())
    root = ET.fromstring(text)
    ns = "{http://graphml.graphdrawing.org/xmlns}"
    keys = {k.get("attr.name") for k in root.findall(f"{ns}key")}
    assert {"label", "strict", "relationships"} <= keys
    assert root.find(f"{ns}graph").get("edgedefault") == "directed"


def test_graphml_is_read_back_by_networkx():
    # Reference: networkx.read_graphml.
    g = nx.read_graphml(io.BytesIO(to_graphml(record()).encode()))
    assert g.is_directed()
    assert set(g.edges()) == {("1001", "1002"), ("1002", "1003"), ("1001", "1003"), ("1003", "1004"),
                              ("1001", "1004")}
    assert g.nodes["1002"]["label"] == "1002 <west>"
    assert g.edges["1003", "1004"]["strict"] is False
    assert g.edges["1001", "1003"]["relationships"] == "3"
    assert g.edges["1001", "1004"]["interpretive"] == "note-7"


def test_reduced_graphml_has_only_direct_edges():
    g = nx.read_graphml(io.BytesIO(to_graphml(record(), reduced=True).encode()))
    assert set(g.edges()) == {("1001", "1002"), ("1002", "1003"), ("1003", "1004")}


def test_dot_lists_nodes_and_dashes_weak_edges():
    text = to_dot(record(), reduced=True)
    assert text.startswith("digraph order {")
    assert '"1003" -> "1004" [label="4", style=dashed];' in text
    assert '"1001" -> "1003"' not in text


def test_node_link_data_is_read_by_networkx():
    # Reference: networkx.node_link_graph (node-link shape of networkx.node_link_data).
    data = to_node_link(record())
    g = nx.node_link_graph(data, edges="edges")
    assert g.is_directed() and not g.is_multigraph()
    assert g.number_of_edges() == 5
    assert g.edges[1001, 1003]["relationships"] == [3]


def test_csv_lists_each_relationship_and_whether_it_is_direct():
    rows = list(csv.DictReader(io.StringIO(to_csv(record(), reduced=False, reduction=None))))
    assert {r["relationship"] for r in rows} == {"1", "2", "3", "4", "note-7"}
    assert all(r["direct"] == "" for r in rows)
    reduced = list(csv.DictReader(io.StringIO(to_csv(record(), reduced=True))))
    assert sorted(r["relationship"] for r in reduced) == ["1", "2", "4"]
    assert all(r["direct"] == "true" for r in reduced)


def test_merged_nodes_are_exported_once_with_all_members():
    contexts = [ContextData(1, "1"), ContextData(2, "2"), ContextData(3, "3")]
    rels = [RelationshipData(1, "same_as", 2, 1), RelationshipData(2, "above", 3, 2)]
    data = to_node_link(compile_order(contexts, rels))
    assert [n["contexts"] for n in data["nodes"]] == [[1, 2], [3]]
    assert data["edges"][0]["source"] == 1
