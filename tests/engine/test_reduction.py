"""Tests of the transitive reduction (Aho, Garey & Ullman 1972)."""

import networkx as nx
import pytest

from chronology.engine.errors import CycleError
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.reduction import implying_path, reduce_order, reduced_edge_mask
from chronology.engine.synthetic_site import generate_site
from chronology.engine.temporal_graph import compile_order


def ctxs(*ids):
    return [ContextData(i, str(i)) for i in ids]


def rel(rid, typ, later, earlier):
    return RelationshipData(rid, typ, later, earlier)


def direct_pairs(g, reduction):
    return sorted((g.node_context_ids(g.edge_earlier[e])[0], g.node_context_ids(g.edge_later[e])[0])
                  for e in reduction.direct_edges)


def node_digraph(g):
    d = nx.DiGraph()
    d.add_nodes_from(range(g.n_nodes))
    d.add_edges_from(zip(g.edge_earlier, g.edge_later))
    return d


def test_reduction_keeps_only_direct_edges():
    rels = [rel(10, "above", 2, 1), rel(11, "above", 3, 2), rel(12, "above", 3, 1)]
    g = compile_order(ctxs(1, 2, 3), rels)
    assert direct_pairs(g, reduce_order(g)) == [(1, 2), (2, 3)]


def test_redundant_relationship_is_listed_with_the_path_that_implies_it():
    rels = [rel(10, "above", 2, 1), rel(11, "cuts", 3, 2), rel(12, "above", 3, 1)]
    g = compile_order(ctxs(1, 2, 3), rels)
    reduction = reduce_order(g)
    (redundant,) = reduction.redundant
    assert redundant.id == 12
    path = implying_path(g, reduction, redundant)
    assert [(s.id, s.later, s.earlier) for s in path] == [(11, 3, 2), (10, 2, 1)]


def test_redundant_path_walks_through_equalities_of_merged_nodes():
    # 4 same as 2: "3 above 4" and "2 above 1" meet at the merged node.
    rels = [rel(10, "above", 2, 1), rel(11, "same_as", 4, 2), rel(12, "above", 3, 4), rel(13, "above", 3, 1)]
    g = compile_order(ctxs(1, 2, 3, 4), rels)
    reduction = reduce_order(g)
    (redundant,) = reduction.redundant
    assert [s.id for s in implying_path(g, reduction, redundant)] == [12, 11, 10]


def test_reduction_refuses_a_cyclic_order():
    g = compile_order(ctxs(1, 2), [rel(10, "above", 2, 1), rel(11, "above", 1, 2)])
    with pytest.raises(CycleError):
        reduce_order(g)


def test_reduction_of_a_site_record_equals_networkx():
    # Reference: networkx.transitive_reduction.
    site = generate_site(800, seed=11)
    g = compile_order(*site)
    keep = reduced_edge_mask(g)
    ours = {(g.edge_earlier[e], g.edge_later[e]) for e, k in enumerate(keep) if k}
    assert ours == set(nx.transitive_reduction(node_digraph(g)).edges())


def test_every_redundancy_path_joins_the_ends_of_its_relationship():
    site = generate_site(800, seed=2, equality_rate=0.05)
    g = compile_order(*site)
    reduction = reduce_order(g)
    assert reduction.redundant
    direct_ids = {rid for e in reduction.direct_edges for rid in g.edge_relationships[e]}
    for item in reduction.redundant:
        r = g.relationships[item.id]
        path = implying_path(g, reduction, item)
        assert path[0].later == r.later and path[-1].earlier == r.earlier
        for a, b in zip(path, path[1:]):
            assert a.earlier == b.later
        ordered = [s.id for s in path if s.type not in ("same_as", "bonded_with")]
        assert len(ordered) >= 2 and set(ordered) <= direct_ids


def test_reduction_without_explanations_lists_the_same_relationships():
    site = generate_site(500, seed=4)
    g = compile_order(*site)
    full, quick = reduce_order(g), reduce_order(g, explain=False)
    assert [r.id for r in full.redundant] == [r.id for r in quick.redundant]
    assert full.direct_edges == quick.direct_edges


def test_generated_site_is_deterministic_consistent_and_partly_redundant():
    first, second = generate_site(2000, seed=9), generate_site(2000, seed=9)
    assert first == second
    assert generate_site(2000, seed=10) != first
    g = compile_order(*first)
    reduction = reduce_order(g, explain=False)
    share = len(reduction.redundant) / len(first.relationships)
    assert 0.2 <= share <= 0.4
    equalities = sum(r.type == "same_as" for r in first.relationships)
    assert 0.005 <= equalities / len(first.contexts) <= 0.03
    assert len({c.area for c in first.contexts}) == 3
