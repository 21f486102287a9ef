"""The sampler against numerical integration, and its reproducibility."""

import arviz as az
import numpy as np
import pytest
from scipy import integrate

from chronology.engine.diagnostics import diagnose, stack_chains, to_inference_data
from chronology.engine.errors import SamplingCancelled
from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.sampler import chain_seeds, run_chain, run_chains

GRID = CalendarGrid(0.0, 1.0, 1001)
L, U = 0.0, 1000.0


def normal_ll(mu, sigma=30.0):
    return -0.5 * ((GRID.years - mu) / sigma) ** 2


def quantile_tolerance(x, prob):
    # 4 Monte Carlo standard errors of the quantile (arviz.mcse, method="quantile") plus half a cell
    return 4 * float(np.squeeze(az.mcse(x, method="quantile", prob=prob))) + 0.5


def check_against(draws, ref_mean, ref_lo, ref_hi):
    """draws: (chain, draw); reference mean and central 95% interval."""
    mean_mcse = float(np.squeeze(az.mcse(draws, method="mean")))
    assert abs(draws.mean() - ref_mean) < 4 * mean_mcse + 0.1
    assert abs(np.quantile(draws, 0.025) - ref_lo) < quantile_tolerance(draws, 0.025)
    assert abs(np.quantile(draws, 0.975) - ref_hi) < quantile_tolerance(draws, 0.975)


def grid_summary(t, density):
    p = density / density.sum()
    c = np.cumsum(p)
    return float((t * p).sum()), float(np.interp(0.025, c, t)), float(np.interp(0.975, c, t))


@pytest.fixture(scope="module")
def ordered_pair():
    m = compile_model(GRID, phases=[], order=[("a", "b", True)],
                      evidence=[EvidenceInput("VXL-0201", "a", normal_ll(520)),
                                EvidenceInput("VXL-0202", "b", normal_ll(480))],
                      range_lo=L, range_hi=U)
    res = run_chains(m, entropy=11, n_chains=4, iterations=8000, warmup=500)
    dates, _ = stack_chains(res)
    return m, dates


def test_ordered_pair_matches_dense_grid_integration(ordered_pair):
    # reference: dense 2-D grid (numpy) of N(a;520,30) N(b;480,30) 1[a < b] (Buck, Litton & Smith 1992)
    m, dates = ordered_pair
    t = np.arange(300.0, 700.0, 0.5)
    A, B = np.meshgrid(t, t, indexing="ij")
    post = np.exp(-0.5 * ((A - 520) / 30) ** 2 - 0.5 * ((B - 480) / 30) ** 2) * (A < B)
    ia, ib = m.event_keys.index("ctx:a"), m.event_keys.index("ctx:b")
    check_against(dates[:, :, ia], *grid_summary(t, post.sum(axis=1)))
    check_against(dates[:, :, ib], *grid_summary(t, post.sum(axis=0)))


def _B(s, R):
    # second antiderivative of 1/((R - s) s^3), by partial fractions (derived here)
    tail = np.where(R - s > 0, (R - s) * np.log(np.maximum(R - s, 1e-300)), 0.0) - (R - s)
    return 1 / (2 * R * s) - np.log(s) / R**2 + (s * np.log(s) - s) / R**3 + tail / R**3


def phase_weight(m_, M_, R=U - L):
    """Integral over L<=alpha<=m, M<=beta<=U of (R-(beta-alpha))^-1 (beta-alpha)^-3."""
    return _B(U - L, R) - _B(U - m_, R) - _B(M_ - L, R) + _B(M_ - m_, R)


def test_boundary_integral_formula_matches_scipy_dblquad():
    # scipy.integrate.dblquad of the span-uniform prior factor (Nicholls & Jones 2001)
    R = U - L
    for m_, M_ in ((480.0, 530.0), (100.0, 900.0)):
        ref, _ = integrate.dblquad(lambda b, a: 1 / ((R - (b - a)) * (b - a) ** 3), L, m_, M_, U,
                                  epsabs=1e-14, epsrel=1e-10)
        assert phase_weight(m_, M_) == pytest.approx(ref, rel=1e-6)


@pytest.fixture(scope="module")
def one_phase():
    mus = {"x": 470.0, "y": 500.0, "z": 540.0}
    m = compile_model(GRID, phases=[PhaseInput("P", tuple(mus))], order=[],
                      evidence=[EvidenceInput(f"VXL-03{i}", c, normal_ll(mu)) for i, (c, mu) in enumerate(mus.items())],
                      range_lo=L, range_hi=U)
    res = run_chains(m, entropy=12, n_chains=4, iterations=8000, warmup=500)
    dates, _ = stack_chains(res)
    return m, mus, dates


def test_one_phase_events_match_numerical_integration(one_phase):
    # reference: 3-D grid of the likelihoods times the boundary prior integrated out in closed form
    m, mus, dates = one_phase
    t = np.arange(350.0, 660.0, 2.0)
    X, Y, Z = np.meshgrid(t, t, t, indexing="ij")
    lo, hi = np.minimum(np.minimum(X, Y), Z), np.maximum(np.maximum(X, Y), Z)
    with np.errstate(divide="ignore", invalid="ignore"):
        w = np.where(hi > lo, phase_weight(lo, hi), 0.0)
    post = w * np.exp(-0.5 * (((X - mus["x"]) / 30) ** 2 + ((Y - mus["y"]) / 30) ** 2 + ((Z - mus["z"]) / 30) ** 2))
    for axis, c in enumerate("xyz"):
        marg = post.sum(axis=tuple(a for a in range(3) if a != axis))
        check_against(dates[:, :, m.event_keys.index(f"ctx:{c}")], *grid_summary(t, marg))


def test_draws_satisfy_every_constraint(one_phase):
    m, _, dates = one_phase
    k = {key: i for i, key in enumerate(m.event_keys)}
    for c in m.constraints:
        assert (dates[:, :, k[c.earlier]] <= dates[:, :, k[c.later]]).all()


def test_same_seed_gives_identical_draws():
    m = compile_model(GRID, phases=[PhaseInput("P", ("x", "y"))], order=[],
                      evidence=[EvidenceInput("VXL-0401", "x", normal_ll(400)), EvidenceInput("VXL-0402", "y", normal_ll(450))],
                      range_lo=L, range_hi=U)
    a = run_chains(m, entropy=5, n_chains=2, iterations=500, warmup=100, workers=2)
    b = run_chains(m, entropy=5, n_chains=2, iterations=500, warmup=100, workers=1)
    assert all(np.array_equal(x.draws, y.draws) for x, y in zip(a, b))


def test_different_seeds_agree_within_monte_carlo_error(one_phase):
    m, _, dates = one_phase
    res = run_chains(m, entropy=99, n_chains=4, iterations=8000, warmup=500)
    other, _ = stack_chains(res)
    d1 = diagnose(to_inference_data(dates, m.event_keys))
    d2 = diagnose(to_inference_data(other, m.event_keys))
    for q1, q2 in zip(d1.quantities, d2.quantities):
        assert abs(q1.mean - q2.mean) < 4 * np.hypot(q1.mcse, q2.mcse)


def test_chains_start_from_different_valid_states(one_phase):
    m = one_phase[0]
    res = run_chains(m, entropy=3, n_chains=3, iterations=10, warmup=0)
    k = {key: i for i, key in enumerate(m.event_keys)}
    starts = np.array([r.initial for r in res])
    assert len({round(s[0], 6) for s in starts}) == 3
    for c in m.constraints:
        assert (starts[:, k[c.earlier]] <= starts[:, k[c.later]]).all()


def test_progress_is_reported_and_cancel_stops_the_chain(one_phase):
    m = one_phase[0]
    seen = []
    run_chain(m, chain_seeds(1, 1)[0], iterations=300, warmup=100, check_every=100, progress=seen.append)
    assert seen == [100, 200, 300, 400]
    with pytest.raises(SamplingCancelled):
        run_chain(m, chain_seeds(1, 1)[0], iterations=300, warmup=100, check_every=100,
                  cancel=lambda: len(seen) > 4, progress=seen.append)


def test_residual_sample_stays_older_than_its_context():
    # a residual sample only bounds its context from below (Bronk Ramsey 2009b, one-sided offset)
    m = compile_model(GRID, phases=[PhaseInput("P", ("x", "y"))], order=[],
                      evidence=[EvidenceInput("VXL-0501", "x", normal_ll(500)),
                                EvidenceInput("VXL-0502", "y", normal_ll(300), usage="residual"),
                                EvidenceInput("VXL-0503", "y", normal_ll(520))],
                      range_lo=L, range_hi=U)
    r = run_chain(m, chain_seeds(4, 1)[0], iterations=3000, warmup=300)
    k = m.event_keys
    sample, ctx = r.draws[:, k.index("sample:VXL-0502")], r.draws[:, k.index("ctx:y")]
    assert (sample <= ctx).all()
    assert abs(np.median(sample) - 300) < 30 and abs(np.median(ctx) - 515) < 30
