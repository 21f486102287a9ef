"""Stepping-stone marginal likelihoods against numerical integration, and Bayes factors of nested models.

The models are small (one or two phases, one to four events with normal
likelihoods on a one-year grid), so ``p(y) = ∫ p(theta) L(y | theta)`` can be
integrated with scipy.  The inner integral over each member is exact for the
grid likelihood the sampler sees (constant inside a cell), so the only
difference left is the sampler's Monte Carlo error.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, stats

from chronology.engine.bayes_factors import compare, savage_dickey_outlier
from chronology.engine.grid import CalendarGrid
from chronology.engine.marginal_likelihood import SteppingStoneSettings, beta_ladder, log_mean_exp, stepping_stone
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.power_posterior import draw_log_likelihoods, tempered
from chronology.engine.sampler import chain_seeds, flatten, run_chain

L, U = 0.0, 400.0
R = U - L
GRID = CalendarGrid.spanning(L, U, 1.0)
EDGES = GRID.start - GRID.step / 2 + GRID.step * np.arange(GRID.n + 1)
SD = 15.0
SETTINGS = SteppingStoneSettings(stones=24, draws=400, thin=2, warmup=200, repeats=6)


def normal_ll(mu, sd=SD):
    return stats.norm.logpdf(GRID.years, mu, sd)


def cell_integral(loglik):
    """t -> ∫_L^t exp(loglik) on the grid (piecewise constant), exact."""
    cum = np.concatenate(([0.0], np.cumsum(np.exp(loglik)) * GRID.step))
    return lambda t: np.interp(t, EDGES, cum)


def one_phase_model(mus, key="p", outlier_prior=0.0):
    ev = [EvidenceInput(f"{key}{i}", f"{key}c{i}", normal_ll(m), outlier_prior=outlier_prior,
                        outlier_loglik=normal_ll(m, 10 * SD) if outlier_prior else None) for i, m in enumerate(mus)]
    return ev, PhaseInput(key, tuple(f"{key}c{i}" for i in range(len(mus))))


def one_phase_log_z(mus, duration_pdf=None):
    """log p(y) under the one-phase span-uniform prior (1/R)(R - s)^-1 s^-n (Nicholls & Jones 2001), by scipy.

    With ``duration_pdf`` the prior is tilted by ``f(s)`` and normalised again: the span-uniform prior makes
    ``s ~ U(0, R)``, so its normalising constant is ``(1/R) ∫_0^R f(s) ds`` (scipy.integrate.quad).
    """
    parts = [cell_integral(normal_ll(m)) for m in mus]
    n = len(mus)
    # dblquad is slow at tight tolerance; the integrand is smooth, so nested Simpson on a fine grid suffices
    a = np.linspace(L, U, 1601)
    A, B = np.meshgrid(a, a, indexing="ij")
    S = B - A
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.prod([p(B) - p(A) for p in parts], axis=0) / (R * (R - S) * S ** n)
    f = np.where((S > 0) & (S < R), f, 0.0)
    if duration_pdf is not None:
        f = f * duration_pdf(np.clip(S, 0.0, R)) / (integrate.quad(duration_pdf, 0.0, R, limit=200)[0] / R)
    inner = integrate.simpson(f, x=a, axis=1)
    return float(np.log(integrate.simpson(inner, x=a)))


def close_to(estimate, exact):
    # four Monte Carlo errors, plus 0.01 for the integration and the error of the error (6 repeats)
    return abs(estimate.log_ml - exact) <= 4 * estimate.mcse + 0.01


def test_the_ladder_is_at_the_quantiles_of_beta_0_3_1():
    # Xie et al. (2011), Systematic Biology 60(2): beta_k are the k/K quantiles of Beta(0.3, 1)
    K = 10
    expected = stats.beta(0.3, 1.0).ppf(np.arange(K + 1) / K)
    assert np.allclose(beta_ladder(K, 0.3), expected)


def test_log_mean_exp_does_not_overflow():
    assert np.isclose(log_mean_exp(np.array([1000.0, 1000.0 + np.log(3.0)])), 1000.0 + np.log(2.0))


def test_a_tempered_normal_likelihood_gives_the_power_posterior():
    # one event, no phase: prior uniform on [L, U], so at beta the density is N(200, SD^2 / beta) (analytic)
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("e", "c", normal_ll(200.0))],
                      range_lo=L, range_hi=U)
    r = run_chain(tempered(flatten(m), 0.25), chain_seeds(5, 1)[0], iterations=20000, warmup=200)
    assert abs(r.draws[:, 0].mean() - 200.0) < 1.5
    assert abs(r.draws[:, 0].std() - SD / np.sqrt(0.25)) < 1.5


def test_at_temperature_zero_an_event_is_spread_over_the_whole_range():
    # the prior of an unphased event is uniform on [L, U]: Kolmogorov-Smirnov against scipy's uniform
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("e", "c", normal_ll(200.0))],
                      range_lo=L, range_hi=U)
    r = run_chain(tempered(flatten(m), 0.0), chain_seeds(6, 1)[0], iterations=4000, warmup=10)
    assert stats.kstest(r.draws[:, 0], stats.uniform(L, R).cdf).pvalue > 0.001


def test_draw_log_likelihoods_sum_the_evidence_at_each_draw():
    ev, ph = one_phase_model([150.0, 190.0])
    m = compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U)
    f = flatten(m)
    r = run_chain(f, chain_seeds(7, 1)[0], iterations=50, warmup=10)
    cols = [m.event_keys.index(f"ctx:pc{i}") for i in range(2)]
    cells = np.floor(r.draws[:, cols] - EDGES[0]).astype(int)
    expected = normal_ll(150.0)[cells[:, 0]] + normal_ll(190.0)[cells[:, 1]]
    assert np.allclose(draw_log_likelihoods(f, r), expected)


THREE = [150.0, 180.0, 215.0]


@pytest.fixture(scope="module")
def three_events():
    """The stepping-stone estimate for one phase of three events (shared by two tests: it is the slow part)."""
    ev, ph = one_phase_model(THREE)
    m = compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U)
    return stepping_stone(m, entropy=11, settings=SETTINGS)


def test_the_marginal_likelihood_of_one_phase_equals_numerical_integration(three_events):
    assert close_to(three_events, one_phase_log_z(THREE))


def test_the_marginal_likelihood_of_one_phase_of_four_events_equals_numerical_integration():
    mus = [120.0, 140.0, 190.0, 200.0]
    ev, ph = one_phase_model(mus)
    m = compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U)
    est = stepping_stone(m, entropy=12, settings=SETTINGS)
    assert close_to(est, one_phase_log_z(mus))


def test_a_duration_prior_keeps_the_marginal_likelihood_equal_to_numerical_integration():
    # the duration factor is prior, untempered on the ladder; the exact p(y) integrates it, renormalised, by scipy
    from chronology.engine.model_compiler import IntervalPriorInput

    ev, ph = one_phase_model(THREE)
    prior = IntervalPriorInput(ph.key, "duration", "normal", {"mean": 120.0, "sd": 30.0})
    m = compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U, interval_priors=[prior])
    est = stepping_stone(m, entropy=15, settings=SETTINGS)
    exact = one_phase_log_z(THREE, duration_pdf=stats.norm(120.0, 30.0).pdf)
    assert close_to(est, exact)
    assert abs(exact - one_phase_log_z(THREE)) > 0.5  # the factor matters: the plain integral would fail


def test_two_unlinked_phases_have_the_product_of_their_marginal_likelihoods():
    # independent phases: the prior and the likelihood factorise, so p(y) is a product of one-phase integrals
    ev1, ph1 = one_phase_model([100.0, 130.0], key="a")
    ev2, ph2 = one_phase_model([260.0, 300.0], key="b")
    m = compile_model(GRID, phases=[ph1, ph2], order=[], evidence=ev1 + ev2, range_lo=L, range_hi=U)
    est = stepping_stone(m, entropy=13, settings=SETTINGS)
    assert close_to(est, one_phase_log_z([100.0, 130.0]) + one_phase_log_z([260.0, 300.0]))


def test_a_wrong_model_would_be_detected(three_events):
    # the same check fails for the integral of another model: the tolerance is not so loose that anything passes
    assert not close_to(three_events, one_phase_log_z([150.0, 180.0, 245.0]))


def test_an_outlier_mixture_has_the_marginal_likelihood_of_the_mixture():
    # one unphased event: p(y) = (1/R) ∫ [(1 - q) N(y; t, SD) + q N(y; t, 10 SD)] dt, by scipy.integrate.quad
    q, y = 0.1, 200.0
    m = compile_model(GRID, phases=[], order=[], evidence=[
        EvidenceInput("e", "c", normal_ll(y), outlier_prior=q, outlier_loglik=normal_ll(y, 10 * SD))],
        range_lo=L, range_hi=U)
    def mixture(t):
        return ((1 - q) * stats.norm.pdf(y, t, SD) + q * stats.norm.pdf(y, t, 10 * SD)) / R

    exact = np.log(integrate.quad(mixture, L, U, points=[y], limit=200)[0])
    est = stepping_stone(m, entropy=14, settings=SETTINGS)
    assert close_to(est, exact)


def test_the_bayes_factor_of_a_nested_outlier_model_equals_the_savage_dickey_ratio():
    # M0 (no outlier term) is M1 (outlier prior q) with phi = 0; phi is a priori independent of the dates,
    # so BF_01 = P(phi = 0 | y, M1) / P(phi = 0 | M1) (Dickey 1971; Verdinelli & Wasserman 1995)
    q = 0.2
    mus = [150.0, 170.0, 260.0]  # the last is far from the others: a plausible outlier
    ev0, ph = one_phase_model(mus)
    ev1 = list(ev0)
    ev1[2] = EvidenceInput("p2", "pc2", normal_ll(mus[2]), outlier_prior=q, outlier_loglik=normal_ll(mus[2], 10 * SD))
    m0 = compile_model(GRID, phases=[ph], order=[], evidence=ev0, range_lo=L, range_hi=U)
    m1 = compile_model(GRID, phases=[ph], order=[], evidence=ev1, range_lo=L, range_hi=U)
    z0 = stepping_stone(m0, entropy=21, settings=SETTINGS)
    z1 = stepping_stone(m1, entropy=22, settings=SETTINGS)
    comparison = compare({"M0": z0, "M1": z1})
    log_bf = comparison.log_bayes_factor("M0", "M1")
    sd = savage_dickey_outlier(m1, "p2", entropy=23, chains=4, iterations=20000)
    assert abs(log_bf - sd.log_ratio) <= 4 * np.hypot(comparison.log_bayes_factor_mcse("M0", "M1"), sd.mcse) + 0.01


def test_equal_prior_weights_give_posterior_probabilities_that_sum_to_one():
    ev, ph = one_phase_model([150.0, 180.0])
    m = compile_model(GRID, phases=[ph], order=[], evidence=ev, range_lo=L, range_hi=U)
    small = SteppingStoneSettings(stones=8, draws=100, thin=1, warmup=50, repeats=3)
    comparison = compare({"a": stepping_stone(m, entropy=1, settings=small),
                          "b": stepping_stone(m, entropy=2, settings=small)})
    probs = [c["posterior_probability"] for c in comparison.as_dict()["candidates"]]
    assert np.isclose(sum(probs), 1.0)
    assert all(0.3 < p < 0.7 for p in probs)


def test_no_strength_is_claimed_when_the_monte_carlo_error_could_reverse_the_order():
    from types import SimpleNamespace

    from chronology.engine.bayes_factors import UNDETERMINED

    rows = compare({"a": SimpleNamespace(log_ml=-50.0, mcse=0.1),
                    "b": SimpleNamespace(log_ml=-65.0, mcse=14.0)}).as_dict()["candidates"]
    assert rows[1]["strength"] == UNDETERMINED


def test_a_clear_difference_gets_kass_and_raftery_words():
    # Kass & Raftery (1995), §3.2: 2 ln BF above 10 is "very strong"
    from types import SimpleNamespace

    rows = compare({"a": SimpleNamespace(log_ml=-50.0, mcse=0.1),
                    "b": SimpleNamespace(log_ml=-56.0, mcse=0.1)}).as_dict()["candidates"]
    assert rows[1]["strength"] == "very strong"


def test_a_ladder_whose_first_stone_sees_only_zero_likelihood_is_refused_with_the_reason():
    # a terminus-like hard bound: zero likelihood below year 399 of a 400-year range, so prior draws rarely qualify
    from chronology.engine.marginal_likelihood import MarginalLikelihoodError

    ll = np.where(GRID.years >= 399.0, 0.0, -np.inf)
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("t", "c", ll)], range_lo=L, range_hi=U)
    with pytest.raises(MarginalLikelihoodError) as caught:
        stepping_stone(m, entropy=3, settings=SteppingStoneSettings(stones=4, draws=20, thin=1, warmup=5, repeats=2))
    assert caught.value.code == "marginal-likelihood-failed" and 1 in caught.value.details["stones"]
