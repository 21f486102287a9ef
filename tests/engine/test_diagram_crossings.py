"""Exact crossing count of layered drawings (Barth, Jünger & Mutzel 2002)."""

import random
from itertools import combinations

import pytest

from chronology.engine.diagram import bilayer_crossings, count_crossings
from chronology.engine.errors import DiagramError


def _orientation(p, q, r):
    value = (q[0] - p[0]) * (r[1] - p[1]) - (q[1] - p[1]) * (r[0] - p[0])
    return (value > 0) - (value < 0)


def _segments_cross(s, t):
    """Proper intersection of two segments (orientation test, common practice);
    touching at a shared end point is not a crossing."""
    (p1, p2), (p3, p4) = s, t
    if {p1, p2} & {p3, p4}:
        return False
    return (
        _orientation(p1, p2, p3) * _orientation(p1, p2, p4) < 0
        and _orientation(p3, p4, p1) * _orientation(p3, p4, p2) < 0
    )


def _random_layering(rng):
    sizes = [rng.randint(1, 7) for _ in range(rng.randint(2, 6))]
    layers, name = [], 0
    for size in sizes:
        layers.append(list(range(name, name + size)))
        name += size
    for layer in layers:
        rng.shuffle(layer)
    edges = set()
    for lower, upper in zip(layers, layers[1:]):
        for a in lower:
            for b in upper:
                if rng.random() < 0.4:
                    edges.add((a, b) if rng.random() < 0.5 else (b, a))
    return layers, sorted(edges)


def _brute_force(layers, edges):
    point = {}
    for y, layer in enumerate(layers):
        for x, v in enumerate(layer):
            # irrational-looking spacing keeps points in general position
            point[v] = (x * 1.0 + 0.01 * y, float(y))
    segments = [(point[a], point[b]) for a, b in edges]
    return sum(_segments_cross(s, t) for s, t in combinations(segments, 2))


def test_counter_equals_brute_force_segment_intersection_on_random_layerings():
    rng = random.Random(20241)
    for _ in range(200):
        layers, edges = _random_layering(rng)
        assert count_crossings(layers, edges) == _brute_force(layers, edges)


def test_complete_bipartite_layers_cross_once_per_pair_of_pairs():
    # In a two-layer straight-line drawing of K(m,n), every two top and two
    # bottom vertices give exactly one crossing: C(m,2) * C(n,2) (elementary).
    top, bottom = ["a", "b", "c"], ["x", "y", "z", "w"]
    edges = [(u, v) for u in top for v in bottom]
    assert count_crossings([top, bottom], edges) == 3 * 6


def test_segments_sharing_an_end_do_not_cross():
    assert bilayer_crossings([(0, 0), (0, 1), (1, 1)], 2) == 0


def test_two_swapped_segments_cross_once():
    assert bilayer_crossings([(0, 1), (1, 0)], 2) == 1


def test_edge_skipping_a_layer_is_rejected():
    with pytest.raises(DiagramError) as info:
        count_crossings([[1], [2], [3]], [(1, 3)])
    assert info.value.code == "diagram-improper-edge"


def test_edge_to_an_unknown_vertex_is_rejected():
    with pytest.raises(DiagramError):
        count_crossings([[1], [2]], [(1, 9)])
