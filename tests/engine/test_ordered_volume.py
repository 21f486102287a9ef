"""The exact span-uniform prior of overlapping phases with ordered beginnings (Steck 1971)."""

import numpy as np
import pytest
from scipy import integrate, stats

from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import PhaseInput, beginning_key, compile_model
from chronology.engine.ordered_volume import log_ordered_volume_of_rooms
from chronology.engine.priors import log_prior, prior_structure
from chronology.engine.sampler import chain_seeds, run_chain

GRID = CalendarGrid(0.0, 1.0, 1001)
R = 1000.0


def _overlapping(sizes, ordered=True):
    keys = [f"P{j + 1}" for j in range(len(sizes))]
    members, c = [], 1
    for n in sizes:
        members.append(tuple(range(c, c + n)))
        c += n
    phases = [PhaseInput(k, m, "overlapping" if j + 1 < len(keys) else None)
              for j, (k, m) in enumerate(zip(keys, members))]
    order = [(beginning_key(a), beginning_key(b), False) for a, b in zip(keys, keys[1:])] if ordered else []
    return compile_model(GRID, phases=phases, order=[], evidence=[], range_lo=0.0, range_hi=R,
                         prior_only=True, boundary_order=order)


def _indicator_volume(rooms):
    # scipy.integrate.nquad over the raw constraints 0 <= y_1 <= y_2 <= y_3, y_j <= rooms[j]
    ranges = [lambda y2, y1: (y2, max(y2, rooms[2])), lambda y1: (y1, max(y1, rooms[1])), (0.0, rooms[0])]
    total, _ = integrate.nquad(lambda y3, y2, y1: 1.0, ranges, opts={"epsabs": 1e-10})
    return total


@pytest.mark.parametrize("rooms", [(3.0, 1.0, 4.0), (2.0, 5.0, 7.0), (6.0, 6.0, 6.0), (9.0, 2.5, 2.0)])
def test_ordered_volume_equals_numerical_integration_of_the_constraints(rooms):
    assert np.exp(log_ordered_volume_of_rooms(rooms)) == pytest.approx(_indicator_volume(rooms), rel=1e-6)


def test_ordered_volume_of_one_room_is_the_room():
    # one phase: the Nicholls & Jones (2001) factor R - s
    assert np.exp(log_ordered_volume_of_rooms([420.0], 1000.0)) == pytest.approx(420.0)


def test_ordered_volume_of_equal_rooms_is_the_simplex_volume():
    # m ordered points in [0, a]: a^m / m! (analytic)
    assert np.exp(log_ordered_volume_of_rooms([5.0] * 4)) == pytest.approx(5.0 ** 4 / 24)


def test_ordered_beginnings_join_overlapping_phases_into_one_group():
    s = prior_structure(_overlapping((2, 2, 2)))
    assert s.group_ptr.tolist() == [0, 3]


def test_overlapping_phases_without_asserted_order_stay_independent():
    s = prior_structure(_overlapping((2, 2, 2), ordered=False))
    assert s.group_ptr.tolist() == [0, 1, 2, 3]


def _given_spans(model, s1, s2):
    # integral of the prior over both beginnings (ordered) at fixed spans (scipy.integrate.dblquad);
    # the members integrate out analytically to s_j^n_j
    st = prior_structure(model)
    keys = model.event_keys
    a1, b1, a2, b2 = (keys.index(k) for k in ("beginning:P1", "close:P1", "beginning:P2", "close:P2"))
    x = np.zeros(len(keys))

    def f(alpha2, alpha1):
        x[a1], x[b1], x[a2], x[b2] = alpha1, alpha1 + s1, alpha2, alpha2 + s2
        return np.exp(log_prior(st, x)) * s1 ** 2 * s2 ** 3

    total, _ = integrate.dblquad(f, 0.0, R - s1, lambda alpha1: alpha1,
                                 lambda alpha1: max(alpha1, R - s2), epsabs=1e-9)
    return total


@pytest.mark.parametrize("spans", [(50.0, 700.0), (400.0, 120.0), (850.0, 90.0), (300.0, 300.0)])
def test_overlapping_prior_integrates_to_the_same_mass_at_every_pair_of_spans(spans):
    # exact span-uniform prior: at any spans the beginnings and members integrate to the same
    # constant, so the spans are independent and uniform on [0, R] (derivation in docs/statistics.md)
    assert _given_spans(_overlapping((2, 3)), *spans) == pytest.approx(1.0, rel=1e-6)


def test_independent_factors_would_not_leave_the_spans_uniform():
    # the previous factor prod (R - s_j)^-1 with ordered beginnings gives unequal masses
    model = _overlapping((2, 3))
    st = prior_structure(model)
    ratio = []
    for s1, s2 in ((50.0, 700.0), (850.0, 90.0)):
        x = np.zeros(len(model.event_keys))
        x[1], x[3] = s1, s2
        ratio.append(np.exp(-np.log(R - s1) - np.log(R - s2) - log_prior(st, x) - 2 * np.log(s1) - 3 * np.log(s2)))
    assert abs(ratio[0] - ratio[1]) > 0.1


def test_prior_only_chain_of_ordered_overlapping_phases_gives_uniform_spans():
    # scipy.stats.kstest of thinned MCMC spans against U(0, R)
    model = _overlapping((2, 2, 2))
    r = run_chain(model, chain_seeds(11, 1)[0], iterations=60000, warmup=1000, thin=20)
    keys = model.event_keys
    for j in (1, 2, 3):
        span = r.draws[:, keys.index(f"close:P{j}")] - r.draws[:, keys.index(f"beginning:P{j}")]
        assert stats.kstest(span / R, "uniform").pvalue > 1e-3, j


def test_the_kernel_evaluates_the_same_prior_as_the_reference_function():
    from chronology.engine.sampler import flatten
    from chronology.engine.sampler_updates import full_log_prior

    model = _overlapping((2, 3, 1))
    f = flatten(model)
    x = np.array([10.0, 400.0, 50.0, 300.0, 200.0, 990.0] + [250.0] * (len(model.event_keys) - 6))
    kernel = full_log_prior(x, f.phase_start, f.phase_end, f.phase_n, f.block_first, f.block_last, f.block_k,
                            f.block_group, f.group_ptr, f.group_blocks, R, f.interval_earlier, f.interval_later,
                            f.interval_code, f.interval_p1, f.interval_p2)
    assert np.isfinite(kernel) and kernel == pytest.approx(log_prior(prior_structure(model), x), rel=1e-12)
