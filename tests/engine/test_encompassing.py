"""Readings weighed jointly from one encompassing model, against counting and numerical integration."""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
from scipy import integrate

from chronology.engine.encompassing import (
    JointSettings,
    Restriction,
    cycles_of,
    encompassing_weights,
    induced_pairs,
    pair_holds,
    subset_fractions,
)
from chronology.engine.model_compiler import compile_model
from tests.engine.test_marginal_likelihood import EDGES, GRID, L, R, U, cell_integral, normal_ll, one_phase_log_z
from tests.engine.test_marginal_likelihood import one_phase_model

SETTINGS = JointSettings(chains=4, iterations=20000, warmup=1000, batches=10)


def _phase(mus):
    ev, ph = one_phase_model(mus)
    return compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U)


def _before(i, j):
    return Restriction(f"{i}<{j}", ((f"ctx:pc{i}", f"ctx:pc{j}"),))


def test_subset_fractions_count_the_draws_where_every_required_pair_holds():
    holds = np.random.default_rng(1).random((500, 4)) < 0.6
    required = [np.array([], dtype=int), np.array([0]), np.array([1, 3]), np.array([0, 1, 2, 3])]
    expected = [1.0] + [holds[:, r].all(axis=1).mean() for r in required[1:]]
    assert subset_fractions(holds, required) == pytest.approx(expected)


def test_a_pair_holds_where_the_earlier_event_is_earlier():
    draws = np.array([[1.0, 2.0, 3.0], [2.0, 1.0, 3.0]])
    assert pair_holds(draws, [(0, 1), (2, 0)]).tolist() == [[True, False], [False, False]]


def test_two_edges_through_a_context_outside_the_model_order_the_events_that_neither_orders_alone():
    g = nx.DiGraph()
    g.add_nodes_from(["a", "b", "z"])
    events = {"a", "b"}
    assert induced_pairs(g, events, [("a", "z")]) == []
    assert induced_pairs(g, events, [("z", "b")]) == []
    assert induced_pairs(g, events, [("a", "z"), ("z", "b")]) == [("a", "b")]


def test_only_the_latest_event_before_and_the_earliest_after_an_edge_are_kept():
    # a < b < c already; the edge c -> d then needs c < d only, which implies a < d and b < d
    g = nx.DiGraph([("a", "b"), ("b", "c")])
    g.add_node("d")
    assert induced_pairs(g, {"a", "b", "c", "d"}, [("c", "d")]) == [("c", "d")]


def test_restrictions_that_contradict_each_other_are_listed_as_a_cycle():
    model = _phase([150.0, 180.0])
    cycles = cycles_of(model, [_before(0, 1), _before(1, 0)])
    assert set(cycles) == {0b11}
    assert set(cycles[0b11]) == {"ctx:pc0", "ctx:pc1"}


def test_a_cycle_through_the_models_own_order_is_found():
    # the phase's beginning precedes every member, so a member before the beginning closes a cycle
    model = _phase([150.0, 180.0])
    begin = model.phases[0].start
    cycles = cycles_of(model, [Restriction("back", (("ctx:pc0", begin),)), _before(0, 1)])
    assert set(cycles) == {0b01, 0b11}


@pytest.fixture(scope="module")
def three_orderings():
    model = _phase([150.0, 180.0, 215.0])
    return encompassing_weights(model, [_before(0, 1), _before(1, 2), _before(0, 2)], entropy=3,
                                settings=SETTINGS)


@pytest.mark.parametrize("subset, orders", [
    ((), 6), (("0<1",), 3), (("0<1", "1<2"), 1), (("0<1", "0<2"), 2), (("1<2", "0<2"), 2),
    (("0<1", "1<2", "0<2"), 1),
])
def test_prior_fractions_are_the_share_of_the_six_orders_of_three_exchangeable_members(three_orderings, subset,
                                                                                         orders):
    # members of one phase are exchangeable a priori, so each of the 3! orders has prior probability 1/6
    # (a permutation count, exact)
    reading = next(r for r in three_orderings.readings if set(r.accepted) == set(subset))
    sd = max(reading.prior_fraction * (reading.mcse or 0.0), 1e-3)
    assert abs(reading.prior_fraction - orders / 6) <= 5 * sd


def test_every_subset_is_listed_once_with_the_empty_one_first(three_orderings):
    subsets = [frozenset(r.accepted) for r in three_orderings.readings]
    assert subsets[0] == frozenset() and three_orderings.readings[0].log_bf == 0.0
    assert sorted(map(sorted, subsets)) == sorted(sorted(c) for k in range(4)
                                                  for c in itertools.combinations(["0<1", "1<2", "0<2"], k))


def _ordered_pair_log_z(mu0, mu1):
    """log p(y) of one phase of two members with theta_0 < theta_1, by scipy.

    The prior is the span-uniform one (Nicholls & Jones 2001) truncated to the
    order, ``2 / (R (R - s) s^2)`` on ``alpha < theta_0 < theta_1 < beta``
    (the ordered members fill half the square).  The members' integral is
    exact for the grid likelihoods (constant inside each cell).
    """
    l0, l1 = np.exp(normal_ll(mu0)), np.exp(normal_ll(mu1))
    p0, p1 = cell_integral(normal_ll(mu0)), cell_integral(normal_ll(mu1))
    h = np.diff(EDGES)
    p0_edges = p0(EDGES[:-1])
    q_edges = np.concatenate(([0.0], np.cumsum(l1 * (p0_edges * h + l0 * h ** 2 / 2))))

    def q(t):  # ∫_L^t L1(u) P0(u) du, exact inside each cell
        i = np.clip(np.searchsorted(EDGES, t, side="right") - 1, 0, len(h) - 1)
        d = t - EDGES[i]
        return q_edges[i] + l1[i] * (p0_edges[i] * d + l0[i] * d ** 2 / 2)

    a = np.linspace(L, U, 1601)
    A, B = np.meshgrid(a, a, indexing="ij")
    S = B - A
    inner_members = q(B) - q(A) - p0(A) * (p1(B) - p1(A))
    with np.errstate(divide="ignore", invalid="ignore"):
        f = 2 * inner_members / (R * (R - S) * S ** 2)
    f = np.where((S > 0) & (S < R), f, 0.0)
    return float(np.log(integrate.simpson(integrate.simpson(f, x=a, axis=1), x=a)))


def test_the_bayes_factor_of_an_ordering_equals_numerical_integration():
    # the data put the first member later than the second, so the asserted order is disfavoured
    mus = (200.0, 185.0)
    result = encompassing_weights(_phase(list(mus)), [_before(0, 1)], entropy=5, settings=SETTINGS)
    reading = result.readings[1]
    exact = _ordered_pair_log_z(*mus) - one_phase_log_z(list(mus))
    assert exact < -0.3
    assert abs(reading.log_bf - exact) <= 4 * reading.mcse + 0.01


def test_a_reading_through_a_context_outside_the_model_has_the_prior_share_of_its_induced_order():
    # "c0 before z" and "z before c1" with z no event: alone each is no restriction (log BF 0 exactly), together
    # they order two exchangeable members, prior share 1/2 (a permutation count)
    model = _phase([150.0, 180.0])
    both = encompassing_weights(model, [Restriction("a", (("ctx:pc0", "z"),)), Restriction("b", (("z", "ctx:pc1"),))],
                                entropy=9, settings=SETTINGS, skeleton=[])
    by = {frozenset(r.accepted): r for r in both.readings}
    assert by[frozenset({"a"})].log_bf == 0.0 and by[frozenset({"b"})].log_bf == 0.0
    joint = by[frozenset({"a", "b"})]
    assert abs(joint.prior_fraction - 0.5) <= 5 * joint.prior_fraction * joint.mcse + 1e-3
