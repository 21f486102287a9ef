"""Tests of the exact analysis of interpretive alternatives.

The reference for consistency is an independent brute force over all 2^k
choices, built on networkx.strongly_connected_components and
networkx.descendants: a choice is inconsistent when a strongly connected
component holds a strict edge (domain primer §1.4 step 4), and two choices
give the same order when they have the same strict and non-strict
reachability on the original nodes.
"""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from chronology.engine.alternatives import (
    AlternativesProblem,
    Item,
    analyse_alternatives,
    choice_at,
    iter_choices,
)
from chronology.engine.errors import AlternativesInputError, CycleError, SearchCancelled


# --------------------------------------------------------------------------
# brute force reference (networkx)


def _graph_for(problem, chosen):
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(problem.n_nodes))
    for u, v in problem.edges:
        g.add_edge(u, v, strict=True)
    for u, v in problem.weak_edges:
        g.add_edge(u, v, strict=False)
    for i in chosen:
        it = problem.items[i]
        if it.kind == "equal":
            g.add_edge(it.a, it.b, strict=False)
            g.add_edge(it.b, it.a, strict=False)
        else:
            g.add_edge(it.a, it.b, strict=it.strict)
    return g


def _brute_consistent(problem, chosen):
    g = _graph_for(problem, chosen)
    comp = {}
    for n, scc in enumerate(nx.strongly_connected_components(g)):
        for x in scc:
            comp[x] = n
    return not any(d["strict"] and comp[u] == comp[v] for u, v, d in g.edges(data=True))


def _brute_order(problem, chosen):
    g = _graph_for(problem, chosen)
    down = {x: nx.descendants(g, x) | {x} for x in g.nodes}
    reach = frozenset((x, y) for x in g.nodes for y in down[x] if y != x)
    strict = frozenset(
        (x, y)
        for u, v, d in g.edges(data=True) if d["strict"]
        for x in g.nodes if u in down[x]
        for y in down[v]
    )
    return reach, strict


def _brute(problem):
    k = len(problem.items)
    consistent = []
    for r in range(k + 1):
        for combo in itertools.combinations(range(k), r):
            if _brute_consistent(problem, combo):
                consistent.append(frozenset(combo))
    cons_set = set(consistent)
    minimal = set()
    for r in range(1, k + 1):
        for combo in itertools.combinations(range(k), r):
            s = frozenset(combo)
            if s not in cons_set and all(s - {x} in cons_set for x in s):
                minimal.add(s)
    orders = {_brute_order(problem, sorted(s)) for s in consistent}
    return cons_set, minimal, len(orders)


def _random_problem(rng, n, k, weak_share=0.25, density=0.3):
    perm = list(range(n))
    rng.shuffle(perm)
    edges, weak = [], []
    for i in range(n):
        for j in range(i + 1, n):
            if rng.random() < density:
                (weak if rng.random() < weak_share else edges).append((perm[i], perm[j]))
    items = []
    for r in range(k):
        a, b = rng.sample(range(n), 2)
        kind = "equal" if rng.random() < 0.5 else "before"
        items.append(Item(kind, a, b, ref=f"R{r}", strict=rng.random() > weak_share))
    return AlternativesProblem(n, edges, items, weak)


def _refs_to_indices(problem, choice):
    pos = {it.ref: i for i, it in enumerate(problem.items)}
    return frozenset(pos[r] for r in choice)


def _check_against_brute(problem):
    cons, minimal, n_orders = _brute(problem)
    res = analyse_alternatives(problem)
    assert res.exact
    listed = [_refs_to_indices(problem, c) for c in iter_choices(res)]
    assert len(listed) == len(set(listed))
    assert set(listed) == cons
    assert res.consistent_count == len(cons)
    assert res.distinct_orders == n_orders
    found = {_refs_to_indices(problem, c) for c in res.minimal_conflicts}
    assert found == minimal
    for rep in res.items:
        assert rep.accepted_in == sum(1 for s in cons if rep.index in s)
        assert rep.forced_out == (frozenset({rep.index}) not in cons)


# --------------------------------------------------------------------------
# agreement with brute force


@pytest.mark.parametrize("seed", range(60))
def test_small_random_cases_match_brute_force(seed):
    rng = random.Random(seed)
    _check_against_brute(_random_problem(rng, rng.randint(3, 8), rng.randint(1, 7)))


@pytest.mark.parametrize("seed", range(3))
def test_twelve_item_cases_match_brute_force(seed):
    rng = random.Random(1000 + seed)
    _check_against_brute(_random_problem(rng, 12, 12, weak_share=0.2, density=0.1))


@pytest.mark.parametrize(("seed", "density"), [(2010, 0.15), (2028, 0.2), (2038, 0.15), (2039, 0.2)])
def test_twelve_interacting_items_match_brute_force(seed, density):
    # Seeds picked so that one group holds 10-12 items with several conflicts.
    rng = random.Random(seed)
    _check_against_brute(_random_problem(rng, 12, 12, weak_share=0.2, density=density))


# --------------------------------------------------------------------------
# hand-built behaviours


def test_twenty_non_interacting_equalities_give_two_to_the_twenty_choices():
    # 20 separate pairs of unordered nodes; each equality stands alone.
    # 2^20 = 1,048,576 (domain primer §2.2).
    items = [Item("equal", 2 * i, 2 * i + 1, ref=i) for i in range(20)]
    res = analyse_alternatives(AlternativesProblem(40, [], items))
    assert res.consistent_count == 1_048_576
    assert res.distinct_orders == 1_048_576
    assert len(res.groups) == 20
    assert res.minimal_conflicts == []


def test_two_equalities_that_merge_ordered_nodes_form_a_conflict():
    # 0 ≺ 1 and 2 ≺ 3; 0 = 3 and 1 = 2 together give 0 ≺ 1 = 2 ≺ 3 = 0.
    p = AlternativesProblem(4, [(0, 1), (2, 3)], [Item("equal", 0, 3, ref="e1"), Item("equal", 1, 2, ref="e2")])
    res = analyse_alternatives(p)
    assert res.minimal_conflicts == [("e1", "e2")]
    assert res.consistent_count == 3
    assert [r.conflicts for r in res.items] == [[("e1", "e2")], [("e1", "e2")]]
    assert not any(r.forced_out for r in res.items)


def test_equality_of_ordered_nodes_is_forced_out():
    p = AlternativesProblem(3, [(0, 1), (1, 2)], [Item("equal", 0, 2, ref="x")])
    res = analyse_alternatives(p)
    assert res.items[0].forced_out
    assert res.items[0].accepted_in == 0
    assert res.consistent_count == 1


def test_weak_cycle_is_an_implied_equality_not_a_conflict():
    # 0 ⪯ 1 in the base; accepting 1 ⪯ 0 only makes them one event.
    p = AlternativesProblem(2, [], [Item("before", 1, 0, ref="w", strict=False)], weak_edges=[(0, 1)])
    res = analyse_alternatives(p)
    assert res.consistent_count == 2
    assert res.minimal_conflicts == []


def test_orderings_implied_by_the_base_count_once_as_orders():
    # 0 ≺ 1 ≺ 2.  "0 before 2" is already implied; "3 = 4" and "4 = 3" are the
    # same merge recorded twice.  All 8 choices are consistent, but they give
    # only 2 distinct orders (with or without the merge of 3 and 4).
    items = [
        Item("before", 0, 2, ref="implied"),
        Item("equal", 3, 4, ref="m1"),
        Item("equal", 4, 3, ref="m2"),
    ]
    res = analyse_alternatives(AlternativesProblem(5, [(0, 1), (1, 2)], items))
    assert res.consistent_count == 8
    assert res.distinct_orders == 2
    assert res.items[0].implied_by_base


def test_equality_implied_by_two_orderings_counts_once():
    # Accepting 0 ⪯ 1 and 1 ⪯ 0 (weak) implies 0 = 1: the choices
    # {w1, w2} and {w1, w2, e} give the same order.
    items = [
        Item("before", 0, 1, ref="w1", strict=False),
        Item("before", 1, 0, ref="w2", strict=False),
        Item("equal", 0, 1, ref="e"),
    ]
    res = analyse_alternatives(AlternativesProblem(2, [], items))
    assert res.consistent_count == 8
    # orders: none, 0⪯1, 1⪯0, 0=1 (e alone, or w1+w2, with or without e)
    assert res.distinct_orders == 4


def test_paging_returns_the_same_choices_as_full_listing():
    rng = random.Random(7)
    p = _random_problem(rng, 9, 10)
    res = analyse_alternatives(p)
    full = list(iter_choices(res))
    pages = []
    for offset in range(0, len(full), 7):
        pages.extend(iter_choices(res, offset=offset, limit=7))
    assert pages == full


def test_choice_at_agrees_with_listing_without_caching():
    rng = random.Random(11)
    p = _random_problem(rng, 9, 10)
    res = analyse_alternatives(p)
    full = list(iter_choices(res))
    assert [choice_at(res, j) for j in range(len(full))] == full
    with pytest.raises(AlternativesInputError):
        choice_at(res, len(full))


def test_paging_deep_into_a_million_choices_is_direct():
    items = [Item("equal", 2 * i, 2 * i + 1, ref=i) for i in range(20)]
    res = analyse_alternatives(AlternativesProblem(40, [], items))
    page = list(iter_choices(res, offset=1_048_570, limit=10))
    assert len(page) == 6
    assert page[-1] == frozenset(range(20))
    assert next(iter_choices(res)) == frozenset()


def test_endpoint_reach_goes_through_a_large_base():
    # A chain of 100,000 nodes: its two ends are ordered, so merging them is a
    # contradiction while merging two unordered side nodes is not.
    n = 100_002
    edges = [(i, i + 1) for i in range(99_999)]
    items = [Item("equal", 0, 99_999, ref="ends"), Item("equal", 100_000, 100_001, ref="side")]
    res = analyse_alternatives(AlternativesProblem(n, edges, items))
    assert res.items[0].forced_out and not res.items[1].forced_out
    assert res.consistent_count == 2


def test_oversized_block_is_reported_inexact():
    # Two equalities crossing a chain 0 ≺ 1 ≺ 2 ≺ 3 and a third closing a
    # three-item cycle: with max_k_exact=2 only the pair is found.
    edges = [(0, 1), (2, 3), (4, 5)]
    items = [
        Item("equal", 1, 2, ref="a"),
        Item("equal", 3, 4, ref="b"),
        Item("equal", 5, 0, ref="c"),
    ]
    p = AlternativesProblem(6, edges, items)
    exact = analyse_alternatives(p)
    assert exact.exact and exact.minimal_conflicts == [("a", "b", "c")]
    bounded = analyse_alternatives(p, max_k_exact=2)
    assert not bounded.exact and bounded.notes
    assert bounded.minimal_conflicts == []
    assert bounded.consistent_count == 8 > exact.consistent_count == 7


def test_progress_reaches_one_and_cancel_stops():
    rng = random.Random(5)
    p = _random_problem(rng, 8, 6)
    seen = []
    analyse_alternatives(p, progress=seen.append)
    assert seen[-1] == 1.0 and seen == sorted(seen)
    with pytest.raises(SearchCancelled):
        analyse_alternatives(p, cancel=lambda: True)


def test_cyclic_base_is_refused():
    with pytest.raises(CycleError):
        analyse_alternatives(AlternativesProblem(2, [(0, 1), (1, 0)], []))


def test_out_of_range_item_is_refused():
    with pytest.raises(AlternativesInputError):
        analyse_alternatives(AlternativesProblem(2, [], [Item("equal", 0, 5)]))


def test_repeated_ref_is_refused():
    items = [Item("equal", 0, 1, ref=5), Item("before", 1, 0, ref=5)]
    with pytest.raises(AlternativesInputError):
        analyse_alternatives(AlternativesProblem(2, [], items))


# --------------------------------------------------------------------------
# monotonicity (domain primer §2.2)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10**6), n=st.integers(3, 8), k=st.integers(1, 8))
def test_every_subset_of_a_listed_choice_is_listed(seed, n, k):
    p = _random_problem(random.Random(seed), n, k)
    res = analyse_alternatives(p)
    listed = set(iter_choices(res))
    for choice in listed:
        for x in choice:
            assert choice - {x} in listed
