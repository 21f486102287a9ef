"""Layer assignment of the diagram: earlier below later, inside phase bands."""

import networkx as nx

from chronology.benchmarks.diagram import random_graph
from chronology.engine.diagram.layering import assign_layers


def _indexed(nodes, edges):
    index = {n.id: i for i, n in enumerate(nodes)}
    return [(index[e.earlier_id], index[e.later_id]) for e in edges]


def test_every_relation_goes_up_at_least_one_layer_without_phases():
    nodes, edges = random_graph(120, seed=3)
    pairs = _indexed(nodes, edges)
    result = assign_layers(len(nodes), pairs)
    assert all(result.layer[b] >= result.layer[a] + 1 for a, b in pairs)
    assert not result.conflicts


def test_layering_is_no_longer_in_total_than_longest_path():
    # Optimal layering minimises total edge span (Gansner et al. 1993); the
    # longest-path layering is one feasible answer, so it bounds the optimum.
    nodes, edges = random_graph(150, seed=5)
    pairs = _indexed(nodes, edges)
    result = assign_layers(len(nodes), pairs)
    graph = nx.DiGraph(pairs)
    graph.add_nodes_from(range(len(nodes)))
    longest = {}
    for v in nx.topological_sort(graph):
        longest[v] = max((longest[u] + 1 for u in graph.pred[v]), default=0)
    span = sum(result.layer[b] - result.layer[a] for a, b in pairs)
    assert span <= sum(longest[b] - longest[a] for a, b in pairs)


def test_phased_nodes_lie_within_their_band_and_bands_are_stacked():
    # 0 -> 1 -> 2 in phase 0, 3 in phase 1 above 1
    pairs = [(0, 1), (1, 2), (1, 3)]
    result = assign_layers(4, pairs, [0, 0, 0, 1], 2)
    (lo0, hi0), (lo1, hi1) = result.bands
    assert hi0 < lo1
    for v, k in enumerate([0, 0, 0, 1]):
        lo, hi = result.bands[k]
        assert lo <= result.layer[v] <= hi


def test_relation_against_the_phase_order_is_marked_and_not_obeyed():
    # 0 is in the later phase but lies below 1 of the earlier phase
    result = assign_layers(2, [(0, 1)], [1, 0], 2)
    assert result.conflicts == {0}
    assert result.layer[0] > result.layer[1]


def test_contradiction_through_an_unphased_context_is_marked():
    # 0 (phase 1) below 2 (unphased) below 1 (phase 0): no layer for 2 fits
    result = assign_layers(3, [(0, 2), (2, 1)], [1, 0, None], 2)
    assert len(result.conflicts) == 1
    for v, k in ((0, 1), (1, 0)):
        lo, hi = result.bands[k]
        assert lo <= result.layer[v] <= hi


def test_unphased_context_between_two_of_one_phase_gets_room_in_the_band():
    result = assign_layers(3, [(0, 2), (2, 1)], [0, 0, None], 1)
    assert not result.conflicts
    assert result.layer[0] < result.layer[2] < result.layer[1]
    assert result.bands[0][1] >= result.layer[1]


def test_empty_phase_still_gets_a_band():
    result = assign_layers(2, [(0, 1)], [0, 2], 3)
    assert result.bands[1][0] <= result.bands[1][1]
    assert result.bands[0][1] < result.bands[1][0] <= result.bands[1][1] < result.bands[2][0]


def test_longest_path_fallback_still_respects_relations_and_bands(monkeypatch):
    from chronology.engine.diagram import layering

    monkeypatch.setattr(layering, "_optimal_layers", lambda graph, rank: False)
    pairs = [(0, 1), (1, 2), (0, 3), (3, 2)]
    result = layering.assign_layers(4, pairs, [0, 0, 1, None], 2)
    assert all(result.layer[b] > result.layer[a] for a, b in pairs)
    assert result.bands[1][0] <= result.layer[2] <= result.bands[1][1]
