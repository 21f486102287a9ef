"""Informative priors on phase durations and gaps, multiplying the span-uniform prior."""

import numpy as np
import pytest
from scipy import stats

from chronology.engine.errors import ModelError
from chronology.engine.grid import CalendarGrid
from chronology.engine.interval_priors import check_parameters, interval_log_density, log_density_ceiling
from chronology.engine.model import Model
from chronology.engine.model_compiler import IntervalPriorInput, PhaseInput, compile_model
from chronology.engine.priors import log_prior, prior_structure
from chronology.engine.sampler import chain_seeds, flatten, run_chain
from chronology.engine.sampler_start import initial_state

GRID = CalendarGrid(0.0, 1.0, 1001)
R = 1000.0


def one_phase(prior, members=(1, 2, 3), **kw):
    return compile_model(GRID, phases=[PhaseInput("A", members)], order=[], evidence=[], range_lo=0.0,
                         range_hi=R, prior_only=True, interval_priors=[prior], **kw)


def duration(model, draws, phase="A"):
    keys = model.event_keys
    p = model.phase(phase)
    return draws[:, keys.index(p.end)] - draws[:, keys.index(p.start)]


@pytest.mark.parametrize("name, params, frozen", [
    ("uniform", {"min": 50, "max": 250}, stats.uniform(50, 200)),
    ("normal", {"mean": 150, "sd": 40}, stats.norm(150, 40)),
    ("lognormal", {"median": 150, "sd_log": 0.4}, stats.lognorm(0.4, scale=150)),
])
def test_interval_densities_match_scipy(name, params, frozen):
    # scipy.stats logpdf of the same families
    code = ["uniform", "normal", "lognormal"].index(name)
    p1, p2 = check_parameters(name, params)
    for d in (60.0, 149.0, 240.0):
        assert interval_log_density(d, code, p1, p2) == pytest.approx(frozen.logpdf(d), rel=1e-12)


def test_a_uniform_interval_has_no_density_outside_its_bounds():
    assert interval_log_density(251.0, 0, 50.0, 250.0) == -np.inf


@pytest.mark.parametrize("name, params, field", [
    ("uniform", {"min": 250, "max": 50}, "max"),
    ("normal", {"mean": 150, "sd": 0}, "sd"),
    ("lognormal", {"median": -1, "sd_log": 0.4}, "median"),
    ("normal", {"mean": 150}, "sd"),
])
def test_bad_parameters_are_refused_naming_the_parameter(name, params, field):
    with pytest.raises(ModelError) as info:
        check_parameters(name, params)
    assert info.value.details["parameter"] == field


def test_the_ceiling_is_the_density_at_the_mode_inside_the_range():
    assert log_density_ceiling(1, 150.0, 40.0, R) == pytest.approx(stats.norm(150, 40).logpdf(150))
    assert log_density_ceiling(1, 1500.0, 40.0, R) == pytest.approx(stats.norm(1500, 40).logpdf(R))


def test_models_without_interval_priors_keep_their_json():
    m = compile_model(GRID, phases=[PhaseInput("A", (1,))], order=[], evidence=[], range_lo=0.0, range_hi=R,
                      prior_only=True)
    assert "interval_priors" not in m.as_dict()


def test_interval_priors_survive_the_model_json():
    m = one_phase(IntervalPriorInput("A", "duration", "normal", {"mean": 150, "sd": 40}))
    again = Model.from_json(m.to_json())
    assert again.interval_priors == m.interval_priors
    assert again.spec_hash() == m.spec_hash()


def test_the_factor_adds_the_duration_density_to_the_log_prior():
    plain = compile_model(GRID, phases=[PhaseInput("A", (1,))], order=[], evidence=[], range_lo=0.0,
                          range_hi=R, prior_only=True)
    tilted = one_phase(IntervalPriorInput("A", "duration", "normal", {"mean": 150, "sd": 40}), members=(1,))
    x = np.array([100.0, 260.0, 150.0])
    diff = log_prior(prior_structure(tilted), x) - log_prior(prior_structure(plain), x)
    assert diff == pytest.approx(stats.norm(150, 40).logpdf(160.0))


def test_a_gap_prior_needs_a_sequential_arrangement():
    with pytest.raises(ModelError):
        compile_model(GRID, phases=[PhaseInput("A", (1,), "contiguous"), PhaseInput("B", (2,))], order=[],
                      evidence=[], range_lo=0.0, range_hi=R, prior_only=True,
                      interval_priors=[IntervalPriorInput("A", "gap", "uniform", {"min": 0, "max": 50})])


def test_a_gap_prior_spans_the_close_to_the_next_beginning():
    m = compile_model(GRID, phases=[PhaseInput("A", (1,), "sequential"), PhaseInput("B", (2,))], order=[],
                      evidence=[], range_lo=0.0, range_hi=R, prior_only=True,
                      interval_priors=[IntervalPriorInput("A", "gap", "uniform", {"min": 0, "max": 50})])
    (gap,) = m.interval_priors
    assert (gap.earlier, gap.later) == (m.phase("A").end, m.phase("B").start)


def test_the_start_lies_inside_a_narrow_uniform_duration():
    m = one_phase(IntervalPriorInput("A", "duration", "uniform", {"min": 400, "max": 410}))
    f = flatten(m)
    rng = np.random.default_rng(3)
    for _ in range(20):
        x = initial_state(f, rng)
        assert np.isfinite(log_prior(prior_structure(m), x))


def test_prior_only_durations_follow_the_normal_truncated_to_the_range():
    # Derivation in chronology.engine.priors: one phase's span is U(0, R) under the span-uniform prior,
    # so with a factor f the duration is f truncated to [0, R]; scipy.stats.kstest against truncnorm
    mean, sd = 150.0, 120.0
    m = one_phase(IntervalPriorInput("A", "duration", "normal", {"mean": mean, "sd": sd}))
    r = run_chain(m, chain_seeds(21, 1)[0], iterations=40000, warmup=1000, thin=20)
    truth = stats.truncnorm((0.0 - mean) / sd, (R - mean) / sd, loc=mean, scale=sd)
    assert stats.kstest(duration(m, r.draws), truth.cdf).pvalue > 1e-3


def test_prior_only_durations_follow_a_uniform_duration_prior():
    # scipy.stats.kstest against U(50, 250): inside [0, R] the truncation leaves it unchanged
    m = one_phase(IntervalPriorInput("A", "duration", "uniform", {"min": 50, "max": 250}))
    r = run_chain(m, chain_seeds(22, 1)[0], iterations=40000, warmup=1000, thin=20)
    assert stats.kstest(duration(m, r.draws), stats.uniform(50, 200).cdf).pvalue > 1e-3


def test_the_kernel_evaluates_the_same_tilted_prior_as_the_reference_function():
    from chronology.engine.sampler_updates import full_log_prior

    m = compile_model(GRID, phases=[PhaseInput("A", (1,), "sequential"), PhaseInput("B", (2,))], order=[],
                      evidence=[], range_lo=0.0, range_hi=R, prior_only=True,
                      interval_priors=[IntervalPriorInput("A", "duration", "lognormal", {"median": 150, "sd_log": 0.4}),
                                       IntervalPriorInput("A", "gap", "normal", {"mean": 20, "sd": 10})])
    f = flatten(m)
    x = np.array([100.0, 260.0, 300.0, 500.0, 150.0, 400.0])
    kernel = full_log_prior(x, f.phase_start, f.phase_end, f.phase_n, f.block_first, f.block_last, f.block_k,
                            f.block_group, f.group_ptr, f.group_blocks, R, f.interval_earlier, f.interval_later,
                            f.interval_code, f.interval_p1, f.interval_p2)
    assert np.isfinite(kernel) and kernel == pytest.approx(log_prior(prior_structure(m), x), rel=1e-12)


def test_the_start_reaches_a_uniform_duration_narrower_than_the_dispersed_members():
    # two members whose likelihoods are far apart at first draws: only the softened sweeps bring them in
    from chronology.engine.model_compiler import EvidenceInput

    ll = -0.5 * ((GRID.years - 500.0) / 60.0) ** 2
    ev = [EvidenceInput(f"e{i}", i, ll) for i in (1, 2, 3)]
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2, 3))], order=[], evidence=ev, range_lo=0.0, range_hi=R,
                      interval_priors=[IntervalPriorInput("A", "duration", "uniform", {"min": 5, "max": 20})])
    x = initial_state(flatten(m), np.random.default_rng(4))
    assert np.isfinite(log_prior(prior_structure(m), x))


def test_with_the_plain_order_prior_only_the_interval_factor_remains():
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2))], order=[], evidence=[], range_lo=0.0, range_hi=R,
                      prior_only=True, prior="uniform",
                      interval_priors=[IntervalPriorInput("A", "duration", "normal", {"mean": 150, "sd": 40})])
    x = np.array([100.0, 260.0, 150.0, 200.0])
    assert log_prior(prior_structure(m), x) == pytest.approx(stats.norm(150, 40).logpdf(160.0))


def test_in_a_chain_the_lengths_follow_the_priors_tilted_by_the_span_factor():
    # Derivation in chronology.engine.priors: a chain's lengths have density S^-(k-2) prod f_i(l_i);
    # two phases in sequence (k = 4) with uniform priors on both durations and the gap: the exact
    # reference is rejection from the uniform box with acceptance (S_min / S)^2; two-sample
    # Kolmogorov-Smirnov (scipy.stats.ks_2samp) of the first duration
    box = dict(durations=(50.0, 250.0), gap=(0.0, 100.0))
    priors = [IntervalPriorInput("A", "duration", "uniform", {"min": 50, "max": 250}),
              IntervalPriorInput("B", "duration", "uniform", {"min": 50, "max": 250}),
              IntervalPriorInput("A", "gap", "uniform", {"min": 0, "max": 100})]
    m = compile_model(GRID, phases=[PhaseInput("A", (1,), "sequential"), PhaseInput("B", (2,))], order=[],
                      evidence=[], range_lo=0.0, range_hi=R, prior_only=True, interval_priors=priors)
    r = run_chain(m, chain_seeds(23, 1)[0], iterations=40000, warmup=1000, thin=20)
    rng = np.random.default_rng(24)
    lo, hi = box["durations"]
    d1, d2, g = rng.uniform(lo, hi, 200000), rng.uniform(lo, hi, 200000), rng.uniform(*box["gap"], 200000)
    keep = rng.uniform(size=d1.size) < (2 * lo / (d1 + d2 + g)) ** 2
    reference = d1[keep][:5000]
    assert stats.ks_2samp(duration(m, r.draws), reference).pvalue > 1e-3
    # and the factor matters: the untilted box (independent uniform lengths) is rejected
    assert stats.ks_2samp(duration(m, r.draws), d1[:5000]).pvalue < 1e-3
