"""The write-time order check against networkx on random sequences of relationships.

Reference: after contracting the certain identity equalities with a union-find
(networkx.utils.UnionFind), adding ``earlier -> later`` closes a cycle exactly
when ``later`` already reaches ``earlier`` (networkx.has_path); an equality
between two classes closes one when either reaches the other.
"""

from __future__ import annotations

import random

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from networkx.utils import UnionFind

from chronology.engine.incremental import IncrementalOrder, counts_for_order
from chronology.engine.record_data import IDENTITY_TYPES, ORDERED_TYPES, RelationshipData

TYPES = ["above", "cuts", "fills", "abuts", "same_as", "bonded_with", "contemporary_with"]


class _Reference:
    """The accepted relationships, checked from scratch with networkx at every step."""

    def __init__(self, nodes):
        self.nodes = list(nodes)
        self.accepted: list[RelationshipData] = []

    def _contracted(self):
        uf = UnionFind(self.nodes)
        for rel in self.accepted:
            if rel.type in IDENTITY_TYPES and rel.certain:
                uf.union(rel.later, rel.earlier)
        graph = nx.DiGraph()
        graph.add_nodes_from(uf[n] for n in self.nodes)
        for rel in self.accepted:
            if rel.type in ORDERED_TYPES:
                graph.add_edge(uf[rel.earlier], uf[rel.later])
        return uf, graph

    def closes_cycle(self, rel: RelationshipData) -> bool:
        if not (rel.type in ORDERED_TYPES or (rel.type in IDENTITY_TYPES and rel.certain)):
            return False
        uf, graph = self._contracted()
        later, earlier = uf[rel.later], uf[rel.earlier]
        if rel.type in ORDERED_TYPES:
            return later == earlier or nx.has_path(graph, later, earlier)
        return later != earlier and (nx.has_path(graph, later, earlier) or nx.has_path(graph, earlier, later))


def _assert_real_cycle(cycle, proposal, accepted_by_id):
    """Every step is a counting relationship oriented along a closed chain; the proposal is on it once."""
    assert cycle, "an empty cycle"
    assert all(cycle[i].to_context == cycle[(i + 1) % len(cycle)].from_context for i in range(len(cycle)))
    assert [s.relationship_id for s in cycle].count(proposal.id) == 1
    ids = [s.relationship_id for s in cycle]
    assert len(ids) == len(set(ids)), "a relationship used twice"
    assert any(s.type in ORDERED_TYPES for s in cycle), "a cycle of equalities alone is no contradiction"
    for step in cycle:
        rel = proposal if step.relationship_id == proposal.id else accepted_by_id[step.relationship_id]
        assert counts_for_order(rel)
        assert step.type == rel.type
        if rel.type in ORDERED_TYPES:
            assert (step.from_context, step.to_context) == (rel.later, rel.earlier)
        else:
            assert {step.from_context, step.to_context} == {rel.later, rel.earlier}


def _assert_ordered(order, accepted):
    assert order.is_topologically_ordered()
    for rel in accepted:
        if rel.type in ORDERED_TYPES:
            # The earlier class stands before the later one in the maintained order.
            assert order._ord[order.find(rel.earlier)] < order._ord[order.find(rel.later)]


def _run_sequence(n_nodes, proposals):
    """Feed ``proposals`` (type, later, earlier, certain) one by one, checking each against networkx."""
    order = IncrementalOrder()
    for node in range(n_nodes):
        order.add_context(node)
    reference = _Reference(range(n_nodes))
    accepted = {}
    cycles = 0
    for index, (type_, later, earlier, certain) in enumerate(proposals, start=1):
        if later == earlier:
            continue  # the write path refuses self-relationships before the check
        proposal = RelationshipData(id=-index, type=type_, later=later, earlier=earlier, certain=certain)
        expected = reference.closes_cycle(proposal)
        cycle = order.find_cycle(proposal)
        assert (cycle is not None) == expected, (proposal, reference.accepted)
        if cycle is not None:
            cycles += 1
            _assert_real_cycle(cycle, proposal, accepted)
            continue
        stored = RelationshipData(id=index, type=type_, later=later, earlier=earlier, certain=certain)
        order.add(stored)
        accepted[index] = stored
        reference.accepted.append(stored)
        _assert_ordered(order, reference.accepted)
    return cycles


def _random_sequence(rng, n_nodes, length):
    return [
        (rng.choice(TYPES), rng.randrange(n_nodes), rng.randrange(n_nodes), rng.random() < 0.8)
        for _ in range(length)
    ]


def test_random_sequences_find_a_cycle_exactly_when_networkx_does():
    rng = random.Random(20240611)
    cycles = 0
    for _ in range(400):
        n_nodes = rng.randint(3, 8)
        cycles += _run_sequence(n_nodes, _random_sequence(rng, n_nodes, rng.randint(5, 25)))
    assert cycles > 100  # the sample exercises refusals, not only acceptances


def test_sequences_rich_in_equalities_find_a_cycle_exactly_when_networkx_does():
    rng = random.Random(7)
    for _ in range(200):
        n_nodes = rng.randint(4, 9)
        proposals = [
            (rng.choice(["same_as", "bonded_with", "same_as", "above", "cuts"]), rng.randrange(n_nodes),
             rng.randrange(n_nodes), True)
            for _ in range(rng.randint(5, 20))
        ]
        _run_sequence(n_nodes, proposals)


def test_bottom_up_recording_of_a_long_sequence_never_reorders():
    order = IncrementalOrder()
    for node in range(200):
        order.add_context(node)
    for node in range(1, 200):
        rel = RelationshipData(id=node, type="above", later=node, earlier=node - 1)
        assert order.find_cycle(rel) is None
        order.add(rel)
    assert order.is_topologically_ordered()
    closing = RelationshipData(id=None, type="above", later=0, earlier=199)
    assert len(order.find_cycle(closing)) == 200


proposal_strategy = st.tuples(
    st.sampled_from(TYPES), st.integers(0, 6), st.integers(0, 6), st.booleans()
)


@settings(max_examples=150, deadline=None)
@given(st.lists(proposal_strategy, min_size=1, max_size=30))
def test_any_sequence_agrees_with_networkx(proposals):
    _run_sequence(7, proposals)


def test_removing_an_ordered_relationship_allows_the_reverse_order():
    order = IncrementalOrder.build(range(3), [
        RelationshipData(id=1, type="above", later=0, earlier=1),
        RelationshipData(id=2, type="above", later=1, earlier=2),
    ])
    reverse = RelationshipData(id=3, type="above", later=2, earlier=0)
    assert order.find_cycle(reverse) is not None
    assert order.remove(2)
    assert order.find_cycle(reverse) is None
    order.add(reverse)
    assert order.is_topologically_ordered()


def test_removing_an_identity_equality_asks_for_a_rebuild():
    order = IncrementalOrder.build(range(2), [RelationshipData(id=1, type="same_as", later=0, earlier=1)])
    assert order.remove(1) is False


def test_building_from_cyclic_relationships_is_refused():
    with pytest.raises(ValueError):
        IncrementalOrder.build(range(2), [
            RelationshipData(id=1, type="above", later=0, earlier=1),
            RelationshipData(id=2, type="cuts", later=1, earlier=0),
        ])


def test_contemporary_with_and_uncertain_equalities_never_count():
    assert not counts_for_order(RelationshipData(id=1, type="contemporary_with", later=0, earlier=1))
    assert not counts_for_order(RelationshipData(id=1, type="same_as", later=0, earlier=1, certain=False))
    assert counts_for_order(RelationshipData(id=1, type="abuts", later=0, earlier=1, certain=False))


def test_random_insertions_and_retractions_agree_with_networkx():
    rng = random.Random(99)
    for _ in range(150):
        n_nodes = rng.randint(3, 7)
        order = IncrementalOrder.build(range(n_nodes), [])
        reference = _Reference(range(n_nodes))
        for index in range(1, rng.randint(10, 30)):
            if reference.accepted and rng.random() < 0.25:
                gone = reference.accepted.pop(rng.randrange(len(reference.accepted)))
                if not order.remove(gone.id):  # an identity split: rebuild, as the service does
                    order = IncrementalOrder.build(range(n_nodes), reference.accepted)
                _assert_ordered(order, reference.accepted)
                continue
            type_, later, earlier, certain = _random_sequence(rng, n_nodes, 1)[0]
            if later == earlier:
                continue
            proposal = RelationshipData(id=index, type=type_, later=later, earlier=earlier, certain=certain)
            cycle = order.find_cycle(proposal)
            assert (cycle is not None) == reference.closes_cycle(proposal)
            if cycle is None:
                order.add(proposal)
                reference.accepted.append(proposal)
                _assert_ordered(order, reference.accepted)
            else:
                _assert_real_cycle(cycle, proposal, {r.id: r for r in reference.accepted})
