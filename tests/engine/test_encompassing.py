"""Readings weighed jointly from one encompassing model, against counting and numerical integration."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import integrate

from chronology.engine.encompassing import (
    JointSettings,
    Restriction,
    cycles_of,
    encompassing_weights,
    indicator_patterns,
    superset_fractions,
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


def test_superset_fractions_count_the_masks_that_hold_every_bit():
    masks = np.random.default_rng(1).integers(0, 16, 500)
    f = superset_fractions(masks, 4)
    for s in range(16):
        assert f[s] == pytest.approx(np.mean((masks & s) == s))


def test_a_restriction_holds_only_where_all_its_pairs_are_in_order():
    draws = np.array([[1.0, 2.0, 3.0], [2.0, 1.0, 3.0], [3.0, 2.0, 1.0]])
    masks = indicator_patterns(draws, [[(0, 1)], [(0, 1), (1, 2)], [(2, 0)]])
    assert masks.tolist() == [0b011, 0b000, 0b100]


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
