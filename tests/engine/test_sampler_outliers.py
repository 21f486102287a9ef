"""Coverage of boundary ranges on simulated data, and the outlier model."""

import numpy as np
from scipy import stats

from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.priors import sample_one_phase_prior
from chronology.engine.sampler import chain_seeds, flatten, run_chain, run_chains

GRID = CalendarGrid(0.0, 1.0, 1001)
SIGMA = 30.0


def normal_ll(mu, sigma=SIGMA):
    return -0.5 * ((GRID.years - mu) / sigma) ** 2


def test_boundary_ranges_cover_the_truth_at_about_the_nominal_rate():
    # truths drawn from the span-uniform prior itself, so 95.4% credible ranges are calibrated
    # on average (Cook, Gelman & Rubin 2006, simulation-based calibration); tolerant binomial bound
    rng = np.random.default_rng(2024)
    n_sim, hits, trials = 40, 0, 0
    alphas, betas, thetas = sample_one_phase_prior(5, 0.0, 1000.0, n_sim, rng)
    for k in range(n_sim):
        ys = thetas[k] + rng.normal(0.0, SIGMA, 5)
        m = compile_model(GRID, phases=[PhaseInput("P", tuple(range(5)))], order=[],
                          evidence=[EvidenceInput(f"VXL-05{k:02d}{i}", i, normal_ll(y)) for i, y in enumerate(ys)],
                          range_lo=0.0, range_hi=1000.0)
        r = run_chain(flatten(m), chain_seeds(k, 1)[0], iterations=3000, warmup=300)
        for col, truth in ((0, alphas[k]), (1, betas[k])):
            lo, hi = np.quantile(r.draws[:, col], [0.023, 0.977])
            hits += lo <= truth <= hi
            trials += 1
    # P(X <= 68) for X ~ Binomial(80, 0.954) is below 1e-3 (scipy.stats.binom)
    assert stats.binom.cdf(68, trials, 0.954) < 1e-3
    assert hits > 68


def _phase_with_planted_outlier(robust: bool):
    ys = [480.0, 500.0, 495.0, 515.0, 505.0, 490.0, 510.0, 520.0, 850.0]
    ev = []
    for i, y in enumerate(ys):
        ev.append(EvidenceInput(f"VXL-06{i:02d}", i, normal_ll(y), outlier_prior=0.1 if robust else 0.0,
                                # shift ~ N(0, 250^2) integrated out: a broader normal (Christen 1994)
                                outlier_loglik=normal_ll(y, np.hypot(SIGMA, 250.0)) - np.log(np.hypot(SIGMA, 250.0) / SIGMA)
                                if robust else None))
    return compile_model(GRID, phases=[PhaseInput("P", tuple(range(len(ys))))], order=[], evidence=ev,
                         range_lo=0.0, range_hi=1000.0)


def test_planted_outlier_is_found_and_does_not_drag_its_phase():
    m = _phase_with_planted_outlier(True)
    res = run_chains(m, entropy=8, n_chains=2, iterations=6000, warmup=500)
    phi = np.concatenate([r.outliers for r in res])
    draws = np.concatenate([r.draws for r in res])
    keys = res[0].evidence_keys
    p = phi.mean(axis=0)
    assert p[keys.index("VXL-0608")] > 0.8
    assert all(p[keys.index(f"VXL-06{i:02d}")] < 0.2 for i in range(8))
    # the end boundary stays with the eight agreeing dates (about AD 500), not near 850
    end = draws[:, m.event_keys.index("close:P")]
    assert np.median(end) < 600


def test_without_the_outlier_model_the_phase_is_dragged():
    m = _phase_with_planted_outlier(False)
    r = run_chain(m, chain_seeds(8, 1)[0], iterations=3000, warmup=300)
    assert np.median(r.draws[:, m.event_keys.index("close:P")]) > 700
