"""Tests of the disjoint-set forest (Tarjan 1975)."""

import random

import networkx as nx
import pytest

from chronology.engine.unionfind import UnionFind


def test_union_reports_whether_classes_were_merged():
    uf = UnionFind(3)
    assert uf.union(0, 1) is True
    assert uf.union(1, 0) is False


def test_canonical_representative_is_the_smallest_member():
    uf = UnionFind(6)
    uf.union(5, 4)
    uf.union(4, 2)
    assert {uf.canonical(x) for x in (2, 4, 5)} == {2}


def test_classes_remember_their_members():
    uf = UnionFind(5)
    uf.union(3, 1)
    uf.union(4, 3)
    assert uf.members(4) == [1, 3, 4]
    assert uf.classes() == [[0], [1, 3, 4], [2]]
    assert uf.class_count == 3


def test_labels_number_classes_by_smallest_member():
    uf = UnionFind(4)
    uf.union(3, 0)
    assert uf.labels() == [0, 1, 2, 0]


def test_negative_size_is_rejected():
    with pytest.raises(ValueError):
        UnionFind(-1)


def test_classes_do_not_depend_on_union_order():
    rng = random.Random(3)
    pairs = [(rng.randrange(60), rng.randrange(60)) for _ in range(50)]
    first, second = UnionFind(60), UnionFind(60)
    for a, b in pairs:
        first.union(a, b)
    for a, b in reversed(pairs):
        second.union(b, a)
    assert first.classes() == second.classes()
    assert first.labels() == second.labels()


def test_classes_equal_networkx_connected_components():
    # Reference: networkx.connected_components.
    rng = random.Random(7)
    for _ in range(50):
        n = rng.randint(1, 30)
        pairs = [(rng.randrange(n), rng.randrange(n)) for _ in range(rng.randint(0, n))]
        uf = UnionFind(n)
        g = nx.Graph()
        g.add_nodes_from(range(n))
        for a, b in pairs:
            uf.union(a, b)
            g.add_edge(a, b)
        expected = sorted(sorted(c) for c in nx.connected_components(g))
        assert uf.classes() == expected
