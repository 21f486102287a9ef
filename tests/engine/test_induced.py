"""Tests of the order induced on a chosen set of contexts."""

import networkx as nx
import pytest

from chronology.engine.errors import OrderError
from chronology.engine.induced import induced_classes, induced_closure, induced_order
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.synthetic_site import generate_site
from chronology.engine.temporal_graph import compile_order


def ctxs(*ids):
    return [ContextData(i, str(i)) for i in ids]


def rel(rid, typ, later, earlier):
    return RelationshipData(rid, typ, later, earlier)


def test_order_passes_through_undated_contexts():
    # 1 < 2 < 3 < 4; only 1 and 4 chosen.
    rels = [rel(10, "above", 2, 1), rel(11, "above", 3, 2), rel(12, "above", 4, 3)]
    g = compile_order(ctxs(1, 2, 3, 4), rels)
    assert induced_order(g, [4, 1]) == [(1, 4, True)]


def test_induced_order_is_reduced():
    rels = [rel(10, "above", 2, 1), rel(11, "above", 3, 2)]
    g = compile_order(ctxs(1, 2, 3), rels)
    assert induced_order(g, [1, 2, 3]) == [(1, 2, True), (2, 3, True)]
    assert induced_closure(g, [1, 2, 3]) == [(1, 2, True), (1, 3, True), (2, 3, True)]


def test_relation_through_weak_edges_only_is_weak():
    rels = [rel(10, "abuts", 2, 1), rel(11, "abuts", 3, 2)]
    g = compile_order(ctxs(1, 2, 3), rels)
    assert induced_order(g, [1, 3]) == [(1, 3, False)]


def test_strict_relation_is_kept_when_the_other_route_is_weak():
    # 1 ⪯ 2 ⪯ 3 through chosen 2, but 1 ≺ 3 through undated 4.
    rels = [rel(10, "abuts", 2, 1), rel(11, "abuts", 3, 2), rel(12, "above", 4, 1), rel(13, "above", 3, 4)]
    g = compile_order(ctxs(1, 2, 3, 4), rels)
    assert induced_order(g, [1, 2, 3]) == [(1, 2, False), (1, 3, True), (2, 3, False)]


def test_unrelated_contexts_stay_unordered():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "above", 2, 1), rel(11, "above", 3, 1)])
    assert induced_order(g, [2, 3]) == []


def test_chosen_contexts_in_one_node_are_reported_as_classes():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "same_as", 2, 1), rel(11, "above", 3, 2)])
    assert induced_classes(g, [1, 2, 3]) == [[1, 2]]
    assert induced_order(g, [1, 2, 3]) == [(1, 3, True), (2, 3, True)]


def test_unknown_context_is_rejected():
    g = compile_order(ctxs(1), [])
    with pytest.raises(OrderError):
        induced_order(g, [99])


def test_induced_closure_on_a_site_record_equals_networkx_reachability():
    # Reference: networkx.descendants on the merged node graph.
    site = generate_site(2000, seed=8)
    g = compile_order(*site)
    chosen = [c.id for c in site.contexts[::37]]
    d = nx.DiGraph()
    d.add_nodes_from(range(g.n_nodes))
    d.add_edges_from(zip(g.edge_earlier, g.edge_later))
    nodes = {cid: g.node_for_id(cid) for cid in chosen}
    later = {cid: nx.descendants(d, nodes[cid]) for cid in chosen}
    expected = sorted((a, b) for a in chosen for b in chosen if nodes[b] in later[a])
    assert sorted((a, b) for a, b, _ in induced_closure(g, chosen)) == expected
    reduced = {(a, b) for a, b, _ in induced_order(g, chosen)}
    closure = nx.DiGraph(expected)
    closure.add_nodes_from(chosen)
    assert reduced == set(nx.transitive_reduction(closure).edges())
