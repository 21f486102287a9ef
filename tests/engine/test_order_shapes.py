"""Exactness of the reduction and its witnesses on the hard record shapes.

Reference: networkx.transitive_reduction (Aho, Garey & Ullman 1972, The
transitive reduction of a directed graph) on the same node graph.
"""

from __future__ import annotations

import networkx as nx
import pytest

from chronology.engine.reduction import implying_path, reduce_order
from chronology.engine.synthetic_shapes import SHAPES, generate_shape
from chronology.engine.temporal_graph import compile_order

EQUALITIES = ("same_as", "bonded_with")


def _node_digraph(g):
    d = nx.DiGraph()
    d.add_nodes_from(range(g.n_nodes))
    d.add_edges_from(zip(g.edge_earlier, g.edge_later))
    return d


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_the_reduction_of_each_shape_equals_networkx(shape):
    g = compile_order(*generate_shape(shape, 600, seed=3))
    reduction = reduce_order(g)
    ours = {(g.edge_earlier[e], g.edge_later[e]) for e in reduction.direct_edges}
    assert ours == set(nx.transitive_reduction(_node_digraph(g)).edges())


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_the_redundant_relationships_of_each_shape_are_the_recorded_ones_outside_the_reduction(shape):
    g = compile_order(*generate_shape(shape, 600, seed=4))
    reduction = reduce_order(g)
    removed = {rid for e, k in enumerate(reduction.direct) if not k for rid in g.edge_relationships[e]}
    assert {r.id for r in reduction.redundant} == removed


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_every_witness_of_each_shape_expands_to_a_real_path_of_two_or_more_relationships(shape):
    g = compile_order(*generate_shape(shape, 400, seed=5))
    reduction = reduce_order(g)
    for item in reduction.redundant:
        rel = g.relationships[item.id]
        path = implying_path(g, reduction, item)
        assert path[0].later == rel.later and path[-1].earlier == rel.earlier
        assert all(a.earlier == b.later for a, b in zip(path, path[1:]))
        for step in path:
            recorded = g.relationships[step.id]
            assert {recorded.later, recorded.earlier} == {step.later, step.earlier}
        assert len([s for s in path if s.type not in EQUALITIES]) >= 2
