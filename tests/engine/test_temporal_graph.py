"""Tests of compiling the record into a temporal order."""

import random

import pytest

from chronology.engine.errors import OrderError
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.synthetic_site import generate_site
from chronology.engine.temporal_graph import ExtraOrdering, OrderPolicy, compile_order, equality_chain


def ctxs(*ids, area=""):
    return [ContextData(i, str(i), area=area) for i in ids]


def rel(rid, typ, later, earlier, certain=True):
    return RelationshipData(rid, typ, later, earlier, certain)


def edges_by_id(g):
    return {
        (g.node_context_ids(a)[0], g.node_context_ids(b)[0]): (s, r)
        for a, b, s, r in zip(g.edge_earlier, g.edge_later, g.edge_strict, g.edge_relationships)
    }


def test_ordered_relationship_becomes_edge_from_earlier_to_later():
    g = compile_order(ctxs(1, 2), [rel(10, "above", 2, 1)])
    assert edges_by_id(g) == {(1, 2): (True, (10,))}


def test_abuts_gives_a_weak_edge():
    g = compile_order(ctxs(1, 2), [rel(10, "abuts", 2, 1)])
    assert g.edge_strict == [False]


def test_parallel_relationships_share_one_edge_that_is_strict_if_any_support_is():
    g = compile_order(ctxs(1, 2), [rel(10, "abuts", 2, 1), rel(11, "above", 2, 1)])
    assert edges_by_id(g) == {(1, 2): (True, (10, 11))}


def test_certain_same_as_merges_contexts_into_one_node():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "same_as", 3, 1), rel(11, "above", 2, 3)])
    assert g.n_nodes == 2
    assert g.node_context_ids(g.node_for_id(3)) == [1, 3]
    assert edges_by_id(g) == {(1, 2): (True, (11,))}
    assert g.merged == (10,)


def test_contemporary_with_is_not_merged_unless_accepted():
    record = (ctxs(1, 2), [rel(10, "contemporary_with", 2, 1)])
    assert compile_order(*record).n_nodes == 2
    assert [r.id for r in compile_order(*record).pending] == [10]
    assert compile_order(*record, OrderPolicy(accept={10})).n_nodes == 1


def test_uncertain_equality_is_merged_only_when_accepted():
    record = (ctxs(1, 2), [rel(10, "same_as", 2, 1, certain=False)])
    assert compile_order(*record).n_nodes == 2
    assert compile_order(*record, OrderPolicy(accept=[10])).n_nodes == 1


def test_uncertain_order_is_used_by_default_and_dropped_when_rejected():
    record = (ctxs(1, 2), [rel(10, "above", 2, 1, certain=False)])
    assert compile_order(*record).n_edges == 1
    rejected = compile_order(*record, OrderPolicy(reject={10}))
    assert rejected.n_edges == 0
    assert [r.id for r in rejected.pending] == [10]


def test_uncertain_orders_can_be_left_out_unless_accepted():
    record = (ctxs(1, 2, 3), [rel(10, "above", 2, 1, certain=False), rel(11, "above", 3, 2, certain=False)])
    g = compile_order(*record, OrderPolicy(accept_uncertain_orders=False, accept={11}))
    assert list(edges_by_id(g)) == [(2, 3)]


def test_set_aside_drops_even_certain_relationships():
    g = compile_order(ctxs(1, 2), [rel(10, "above", 2, 1)], OrderPolicy(set_aside={10}))
    assert g.n_edges == 0
    assert g.set_aside == (10,)
    assert g.pending == ()


def test_interpretive_orderings_are_kept_apart_from_recorded_ones():
    policy = OrderPolicy(extra_orderings=[(1, 2, True, "phase-note-1")])
    g = compile_order(ctxs(1, 2), [], policy)
    assert g.edge_relationships == [()]
    assert g.extras[g.edge_extras[0][0]] == ExtraOrdering(1, 2, True, "phase-note-1")


def test_unknown_context_is_rejected_with_a_code():
    with pytest.raises(OrderError) as err:
        compile_order(ctxs(1), [rel(10, "above", 2, 1)])
    assert err.value.code == "unknown-context"


def test_duplicate_context_is_rejected():
    with pytest.raises(OrderError) as err:
        compile_order(ctxs(1, 1), [])
    assert err.value.code == "duplicate-context"


def test_duplicate_relationship_is_rejected():
    with pytest.raises(OrderError) as err:
        compile_order(ctxs(1, 2), [rel(10, "above", 2, 1), rel(10, "cuts", 2, 1)])
    assert err.value.code == "duplicate-relationship"


def test_unknown_relationship_type_is_rejected():
    with pytest.raises(OrderError) as err:
        compile_order(ctxs(1, 2), [rel(10, "near", 2, 1)])
    assert err.value.code == "unknown-relationship-type"


def test_equality_chain_explains_why_two_contexts_were_merged():
    g = compile_order(ctxs(1, 2, 3, 4), [rel(10, "same_as", 2, 1), rel(11, "bonded_with", 3, 2),
                                         rel(12, "same_as", 4, 1)])
    steps = equality_chain(g, g.index_of[3], g.index_of[4])
    assert [s.id for s in steps] == [11, 10, 12]
    assert (steps[0].later, steps[-1].earlier) == (3, 4)


def test_compiled_graph_does_not_depend_on_input_order():
    site = generate_site(300, seed=5, equality_rate=0.05)
    contexts, rels = list(site.contexts), list(site.relationships)
    first = compile_order(contexts, rels)
    rng = random.Random(1)
    rng.shuffle(contexts)
    rng.shuffle(rels)
    second = compile_order(contexts, rels)
    assert first.members == second.members
    assert (first.edge_earlier, first.edge_later, first.edge_relationships) == (
        second.edge_earlier, second.edge_later, second.edge_relationships)
