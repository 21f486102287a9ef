"""The write-time check agrees with networkx.has_path in every insertion order.

A field team may post a record bottom-up (earliest first), as it is dug
(latest first, every post against the order made so far) or in no order at
all.  Contexts are made when first named, as on site, so their initial
positions follow the posting order.

Reference: after contracting the certain identity equalities
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

from chronology.engine import incremental, incremental_search
from chronology.engine.incremental import IncrementalOrder
from chronology.engine.record_data import IDENTITY_TYPES, ORDERED_TYPES, RelationshipData
from chronology.engine.synthetic_shapes import generate_shape

ORDERS = ("earliest_first", "latest_first", "random")


def _closes_cycle(accepted, rel) -> bool:
    uf = UnionFind()
    for r in accepted:
        if r.type in IDENTITY_TYPES and r.certain:
            uf.union(r.later, r.earlier)
    graph = nx.DiGraph()
    graph.add_nodes_from(uf[c] for r in [*accepted, rel] for c in (r.later, r.earlier))
    graph.add_edges_from((uf[r.earlier], uf[r.later]) for r in accepted if r.type in ORDERED_TYPES)
    later, earlier = uf[rel.later], uf[rel.earlier]
    if rel.type in ORDERED_TYPES:
        return later == earlier or nx.has_path(graph, later, earlier)
    if not (rel.type in IDENTITY_TYPES and rel.certain):
        return False
    return later != earlier and (nx.has_path(graph, later, earlier) or nx.has_path(graph, earlier, later))


def _in_order(rels, order: str, seed: int):
    rels = list(rels)
    if order == "latest_first":
        return rels[::-1]
    if order == "random":
        random.Random(seed).shuffle(rels)
    return rels


def _post_all(rels) -> tuple[IncrementalOrder, int]:
    """Post ``rels`` one by one, checking each against networkx; return the order and the refusals."""
    order = IncrementalOrder()
    accepted: list[RelationshipData] = []
    refused = 0
    for rel in rels:
        order.add_context(rel.later)
        order.add_context(rel.earlier)
        cycle = order.find_cycle(rel)
        assert (cycle is not None) == _closes_cycle(accepted, rel), rel
        if cycle is not None:
            refused += 1
            continue
        order.add(rel)
        accepted.append(rel)
    assert order.is_topologically_ordered()
    return order, refused


@st.composite
def records(draw):
    """A record in the order it was laid down, with a few posts that contradict it."""
    n = draw(st.integers(2, 14))
    rels = []
    for later in range(1, n):
        for earlier in draw(st.sets(st.integers(0, later - 1), max_size=3)):
            kind = draw(st.sampled_from(["above", "above", "cuts", "fills", "abuts", "same_as"]))
            rels.append((kind, later, earlier, True))
    for _ in range(draw(st.integers(0, 3))):  # a mistaken post, perhaps closing a cycle
        a, b = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if a != b:
            rels.append((draw(st.sampled_from(["above", "same_as", "bonded_with"])), a, b, draw(st.booleans())))
    return [RelationshipData(id=i + 1, type=t, later=a, earlier=b, certain=c) for i, (t, a, b, c) in enumerate(rels)]


@pytest.mark.parametrize("order", ORDERS)
@settings(max_examples=80, deadline=None)
@given(rels=records(), seed=st.integers(0, 2**16))
def test_every_insertion_of_a_generated_record_agrees_with_networkx_has_path(order, rels, seed):
    _post_all(_in_order(rels, order, seed))


@pytest.mark.parametrize("order", ORDERS)
def test_a_deep_site_posted_in_each_order_agrees_with_networkx_on_every_post(order):
    site = generate_shape("deep_site", 160, seed=2)
    _order, refused = _post_all(_in_order(site.relationships, order, seed=5))
    assert refused == 0  # the generated record is consistent


@pytest.mark.parametrize("order", ORDERS)
def test_positions_that_run_out_of_room_are_renumbered_and_the_check_still_agrees(order, monkeypatch):
    monkeypatch.setattr(incremental_search, "SPACING", 2)
    monkeypatch.setattr(incremental, "SPACING", 2)
    calls = []
    original = incremental.renumber
    monkeypatch.setattr(incremental, "renumber", lambda pos: calls.append(1) or original(pos))
    site = generate_shape("deep_site", 120, seed=1)
    _post_all(_in_order(site.relationships, order, seed=3))
    if order == "random":
        assert calls, "the narrow spacing never ran out"


def test_a_record_posted_as_it_is_dug_moves_one_context_per_post():
    # Latest first: each new context goes under the one above it.  With the
    # one-way repair every post moved the whole column; now one node moves.
    order = IncrementalOrder()
    order.add_context(0)
    for ctx in range(1, 50):
        order.add_context(ctx)
        before = dict(order._ord)
        rel = RelationshipData(id=ctx, type="above", later=ctx - 1, earlier=ctx)
        assert order.find_cycle(rel) is None
        order.add(rel)
        moved = [c for c, p in order._ord.items() if before.get(c) != p]
        assert len(moved) == 1
    assert order.is_topologically_ordered()
