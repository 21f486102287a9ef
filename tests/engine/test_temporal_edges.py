"""Edges grouped with numpy are exactly those of the one-by-one build.

Reference: ``temporal_graph._edges_one_by_one``, the plain Python grouping
the compiler uses when interpretive orderings are among the supports.
"""

from __future__ import annotations

import random

import pytest

from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.synthetic_shapes import SHAPES, generate_shape
from chronology.engine.synthetic_site import generate_site
from chronology.engine.temporal_edges import group_edges
from chronology.engine.temporal_graph import _edges_one_by_one
from chronology.engine.unionfind import UnionFind


def _both(contexts, relationships):
    contexts = sorted(contexts, key=lambda c: c.id)
    rels = sorted(relationships, key=lambda r: r.id)
    index_of = {c.id: i for i, c in enumerate(contexts)}
    uf = UnionFind(len(contexts))
    for r in rels:
        if r.type in ("same_as", "bonded_with") and r.certain:
            uf.union(index_of[r.later], index_of[r.earlier])
    node_of = uf.labels()
    n_nodes = max(node_of, default=-1) + 1
    ordered = [r for r in rels if r.type in ("above", "cuts", "fills", "abuts")]
    plain = _edges_one_by_one(ordered, (), index_of, node_of, n_nodes)
    g = group_edges(ordered, [c.id for c in contexts], node_of, n_nodes)
    grouped = (g.earlier, g.later, g.strict, g.relationships, [()] * len(g.earlier), g.succ, g.pred, g.loops)
    return plain, grouped


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_grouped_edges_of_each_shape_equal_the_one_by_one_build(shape):
    plain, grouped = _both(*generate_shape(shape, 800, seed=1))
    assert grouped == plain


def test_grouped_edges_of_a_site_with_equalities_equal_the_one_by_one_build():
    plain, grouped = _both(*generate_site(800, seed=2))
    assert grouped == plain


def test_grouped_edges_with_parallel_relationships_and_loops_inside_a_merged_node_equal_the_one_by_one_build():
    rng = random.Random(3)
    for _ in range(200):
        contexts = [ContextData(10 + 3 * i, str(i)) for i in range(rng.randint(1, 8))]
        rels = []
        for k in range(rng.randint(0, 15)):
            a, b = rng.choice(contexts).id, rng.choice(contexts).id
            if a != b:
                rels.append(RelationshipData(k + 1, rng.choice(["above", "abuts", "same_as", "cuts"]), a, b))
        plain, grouped = _both(contexts, rels)
        assert grouped == plain
