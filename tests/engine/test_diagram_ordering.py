"""Dummy vertices and crossing reduction within layers."""

import random

from chronology.benchmarks.diagram import random_graph
from chronology.engine.diagram.crossings import count_crossings
from chronology.engine.diagram.layering import assign_layers
from chronology.engine.diagram.ordering import (
    initial_order,
    make_proper,
    minimise_crossings,
    order_crossings,
)


def _proper(n, seed, group=None):
    nodes, edges = random_graph(n, seed=seed)
    index = {x.id: i for i, x in enumerate(nodes)}
    pairs = [(index[e.earlier_id], index[e.later_id]) for e in edges]
    result = assign_layers(len(nodes), pairs)
    group = group or [0] * len(nodes)
    return make_proper(len(nodes), pairs, result.layer, group, result.n_layers), pairs, result


def _segments(graph):
    return [(v, w) for v in range(graph.n_vertices) for w in graph.up[v]]


def test_long_relation_gets_one_dummy_per_layer_it_passes():
    graph, pairs, result = _proper(80, seed=2)
    for (a, b), chain in zip(pairs, graph.chains):
        assert len(chain) == result.layer[b] - result.layer[a] + 1
        assert [graph.layer_of[v] for v in chain] == list(range(result.layer[a], result.layer[b] + 1))


def test_sweeps_never_end_with_more_crossings_than_the_initial_order():
    rng = random.Random(9)
    for seed in range(6):
        graph, _, _ = _proper(60 + 20 * seed, seed=seed)
        start = initial_order(graph, [0] * graph.n_real)
        for layer in start:
            rng.shuffle(layer)
        before = order_crossings(graph, start)
        best, after = minimise_crossings(graph, start, iterations=12)
        assert after <= before
        assert after == count_crossings(best, _segments(graph))


def test_sweeps_untangle_a_shuffled_tree():
    # A tree has a crossing-free layered drawing; median sweeps with
    # transposition find it on a small complete binary tree (common practice).
    pairs = [(child, (child - 1) // 2) for child in range(1, 31)]  # leaves earliest
    depth = [0] * 31
    for v in range(31):
        depth[v] = 4 - (v + 1).bit_length() + 1
    graph = make_proper(31, pairs, depth, [0] * 31, 5)
    start = initial_order(graph, list(range(31)))
    rng = random.Random(4)
    for layer in start:
        rng.shuffle(layer)
    assert order_crossings(graph, start) > 0
    _, after = minimise_crossings(graph, start)
    assert after == 0


def test_groups_stay_contiguous_and_in_order_in_every_layer():
    rng = random.Random(1)
    group = [int(rng.random() < 0.3) for _ in range(100)]
    graph, _, _ = _proper(100, seed=1, group=group)
    best, _ = minimise_crossings(graph, initial_order(graph, [0] * 100))
    for layer in best:
        groups = [graph.group[v] for v in layer]
        assert groups == sorted(groups)


def test_every_vertex_is_placed_once():
    graph, _, _ = _proper(90, seed=8)
    best, _ = minimise_crossings(graph, initial_order(graph, [0] * 90))
    placed = [v for layer in best for v in layer]
    assert sorted(placed) == list(range(graph.n_vertices))


def test_sifting_never_adds_crossings_and_fixes_a_misplaced_vertex():
    from chronology.engine.diagram.ordering import _sift

    # 0-3, 1-4, 2-5 straight, but 5 starts at the far left: two crossings
    graph = make_proper(6, [(0, 3), (1, 4), (2, 5)], [0, 0, 0, 1, 1, 1], [0] * 6, 2)
    layers = [[0, 1, 2], [5, 3, 4]]
    assert order_crossings(graph, layers) == 2
    _sift(graph, layers)
    assert order_crossings(graph, layers) == 0
    rng = random.Random(3)
    for seed in range(4):
        graph, _, _ = _proper(60, seed=seed)
        start = initial_order(graph, [0] * graph.n_real)
        for layer in start:
            rng.shuffle(layer)
        before = order_crossings(graph, start)
        _sift(graph, start)
        assert order_crossings(graph, start) <= before
