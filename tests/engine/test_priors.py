"""The span-uniform boundary prior (Nicholls & Jones 2001)."""

import numpy as np
import pytest
from scipy import integrate, stats

from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import PhaseInput, compile_model
from chronology.engine.priors import (
    log_one_phase_prior,
    log_prior,
    prior_structure,
    sample_one_phase_prior,
)
from chronology.engine.sampler import chain_seeds, run_chain

GRID = CalendarGrid(0.0, 1.0, 1001)


def test_one_phase_prior_integrates_to_one_with_its_events():
    # scipy.integrate.dblquad; the events' volume s^n is integrated out analytically
    lo, hi, n = 0.0, 10.0, 3

    def f(beta, alpha):
        return np.exp(log_one_phase_prior(alpha, beta, n, lo, hi)) * (beta - alpha) ** n

    total, _ = integrate.dblquad(f, lo, hi, lambda a: a + 1e-12, lambda a: hi)
    assert total == pytest.approx(1.0, rel=1e-6)


def test_three_step_construction_gives_a_uniform_span():
    # scipy.stats.kstest against U(0, R) (Nicholls & Jones 2001: the span is uniform)
    a, b, _ = sample_one_phase_prior(4, 0.0, 500.0, 4000, np.random.default_rng(1))
    assert stats.kstest((b - a) / 500.0, "uniform").pvalue > 1e-3


def test_chain_exponent_counts_distinct_boundaries():
    contiguous = compile_model(GRID, phases=[PhaseInput("A", (1,), "contiguous"), PhaseInput("B", (2,))],
                               order=[], evidence=[], range_lo=0.0, range_hi=1000.0, prior_only=True)
    sequential = compile_model(GRID, phases=[PhaseInput("A", (1,), "sequential"), PhaseInput("B", (2,))],
                               order=[], evidence=[], range_lo=0.0, range_hi=1000.0, prior_only=True)
    # m = 2 phases: S^-(m-1) when contiguous, S^-(2m-2) when sequential (Nicholls & Jones 2001)
    assert prior_structure(contiguous).block_k.tolist() == [3]
    assert prior_structure(sequential).block_k.tolist() == [4]


def test_uniform_prior_adds_no_boundary_factor():
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2))], order=[], evidence=[], range_lo=0.0,
                      range_hi=1000.0, prior_only=True, prior="uniform")
    assert log_prior(prior_structure(m), np.array([10.0, 90.0, 20.0, 30.0])) == 0.0


def test_prior_only_chain_gives_a_uniform_span():
    # scipy.stats.kstest on thinned MCMC draws of the span against U(0, R)
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2, 3))], order=[], evidence=[],
                      range_lo=0.0, range_hi=1000.0, prior_only=True)
    r = run_chain(m, chain_seeds(7, 1)[0], iterations=60000, warmup=1000, thin=20)
    span = r.draws[:, 1] - r.draws[:, 0]
    assert stats.kstest(span / 1000.0, "uniform").pvalue > 1e-3


@pytest.mark.parametrize("arrangement", ["contiguous", "sequential"])
def test_prior_only_chain_of_two_phases_has_a_uniform_total_span(arrangement):
    # Nicholls & Jones (2001): the total span S of linked phases is U(0, R) under their prior;
    # scipy.stats.kstest on thinned MCMC draws
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2), arrangement), PhaseInput("B", (3, 4))],
                      order=[], evidence=[], range_lo=0.0, range_hi=1000.0, prior_only=True)
    r = run_chain(m, chain_seeds(9, 1)[0], iterations=60000, warmup=1000, thin=20)
    keys = m.event_keys
    total = r.draws[:, keys.index(m.phase("B").end)] - r.draws[:, keys.index(m.phase("A").start)]
    assert stats.kstest(total / 1000.0, "uniform").pvalue > 1e-3
