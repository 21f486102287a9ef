"""Splitting a large record into drawable parts."""

import pytest

from chronology.benchmarks.diagram import random_graph
from chronology.engine.diagram import DiagramEdge, DiagramNode, split_for_drawing
from chronology.engine.errors import DiagramError


def test_record_that_fits_comes_back_whole():
    nodes, edges = random_graph(40, seed=1)
    (part,) = split_for_drawing(nodes, edges, max_nodes=500)
    assert len(part.nodes) == 40 and len(part.edges) == len(edges)


def test_every_context_is_in_exactly_one_part_of_bounded_size():
    nodes, edges = random_graph(300, seed=3)
    parts = split_for_drawing(nodes, edges, max_nodes=60, by="area")
    ids = [n.id for p in parts for n in p.nodes]
    assert sorted(ids) == sorted(n.id for n in nodes)
    assert all(len(p.nodes) <= 60 for p in parts)


def test_part_keeps_an_order_that_ran_through_another_part():
    nodes = [DiagramNode(1, "1001", area="A"), DiagramNode(2, "1002", area="B"), DiagramNode(3, "1003", area="A")]
    edges = [DiagramEdge(1, 2), DiagramEdge(2, 3)]
    parts = {p.key[0]: p for p in split_for_drawing(nodes, edges, max_nodes=2)}
    assert [(e.earlier_id, e.later_id) for e in parts["A"].edges] == [(1, 3)]


def test_part_edges_are_the_reduction_of_the_restricted_order():
    # 1 < 2 < 3 inside area A, plus the direct 1 < 3 implied via area B: only
    # the two direct relations remain (Aho, Garey & Ullman 1972).
    nodes = [DiagramNode(i, str(i), area="A") for i in (1, 2, 3)] + [DiagramNode(4, "4", area="B")]
    edges = [DiagramEdge(1, 2), DiagramEdge(2, 3), DiagramEdge(1, 4), DiagramEdge(4, 3)]
    parts = {p.key[0]: p for p in split_for_drawing(nodes, edges, max_nodes=3)}
    assert sorted((e.earlier_id, e.later_id) for e in parts["A"].edges) == [(1, 2), (2, 3)]


def test_split_by_phase_groups_by_phase():
    nodes = [DiagramNode(i, str(i), phase="P1" if i < 3 else "P2") for i in range(5)]
    parts = split_for_drawing(nodes, [], max_nodes=3, by="phase")
    assert {p.key[0]: len(p.nodes) for p in parts} == {"P1": 3, "P2": 2}


def test_unknown_split_key_is_rejected():
    with pytest.raises(DiagramError) as info:
        split_for_drawing([], [], by="colour")
    assert info.value.code == "diagram-bad-split"
