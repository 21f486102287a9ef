"""Calibration of radiocarbon determinations against a curve on a grid."""

import math

import numpy as np
import pytest
from scipy import stats

from chronology.engine.calibration import (
    ReservoirOffset, calibrate, calibrate_many, curve_on_grid, log_likelihood, mixed_curve,
)
from chronology.engine.curves import Curve, curve_grid
from chronology.engine.errors import CalibrationError
from chronology.engine.synthetic_curve import synthetic_curve


def _straight(sigma=10.0, offset=0.0, name="straight test line"):
    bp = np.arange(0.0, 10001.0, 5.0)
    return Curve(name, "test", "test", bp, bp + offset, np.full(bp.size, sigma))


@pytest.fixture(scope="module")
def straight():
    return curve_on_grid(_straight())


@pytest.fixture(scope="module")
def synthetic():
    return curve_on_grid(synthetic_curve(0, 12000))


def test_straight_line_curve_gives_the_analytic_normal(straight):
    # With mu(t) = cal BP and constant curve sigma the calibrated density is
    # N(1950 - y, sqrt(sigma^2 + sigma_c^2)) in calendar years; reference
    # scipy.stats.norm.pdf.
    date = calibrate(3000, 30, straight)
    expected = stats.norm.pdf(date.years, 1950 - 3000, math.hypot(30, 10))
    np.testing.assert_allclose(date.density, expected, atol=1e-9)


def test_median_of_a_symmetric_density_is_its_centre(straight):
    assert calibrate(3000, 30, straight).median == pytest.approx(-1050, abs=0.05)


def test_hpd_of_the_analytic_normal_is_mean_plus_minus_one_sigma(straight):
    date = calibrate(3000, 30, straight, masses=[stats.norm.cdf(1) - stats.norm.cdf(-1)])
    ((r,),) = date.hpd.values()
    sd = math.hypot(30, 10)
    assert r.start == pytest.approx(-1050 - sd, abs=1.0)
    assert r.end == pytest.approx(-1050 + sd, abs=1.0)


def test_density_is_normalised_per_year(synthetic):
    date = calibrate(2450, 30, synthetic)
    assert date.density.sum() * date.step == pytest.approx(1.0)


def test_window_holds_all_the_non_negligible_likelihood(synthetic):
    date = calibrate(2450, 30, synthetic)
    full = date.density_on(synthetic.grid)
    assert full.sum() == pytest.approx(1.0)
    assert max(date.density[0], date.density[-1]) < 1e-6 * date.density.max()


def test_log_likelihood_matches_the_normal_with_added_variances(synthetic):
    # Christen & Pérez 2009: lab and curve variances add; reference scipy.stats.norm.logpdf.
    ll = log_likelihood(2450, 30, synthetic)
    expected = stats.norm.logpdf(2450, synthetic.mu, np.sqrt(30 ** 2 + synthetic.variance))
    np.testing.assert_allclose(ll, expected, rtol=1e-12)


def test_reservoir_offset_shifts_the_curve_and_adds_its_variance(straight):
    # Offset treatment (from memory): mu + dR, variance + sigma_dR^2.
    date = calibrate(3000, 30, straight, offset=ReservoirOffset(200, 40))
    expected = stats.norm.pdf(date.years, 1950 - 2800, math.sqrt(30 ** 2 + 10 ** 2 + 40 ** 2))
    np.testing.assert_allclose(date.density, expected, atol=1e-9)


def test_mixture_follows_the_stated_combination():
    # mu = (1-p) mu_t + p (mu_m + dR); var = (1-p)^2 s_t^2 + p^2 (s_m^2 + s_dR^2) (from memory).
    terr = curve_on_grid(_straight(10.0))
    marine = curve_on_grid(_straight(20.0, offset=400.0, name="marine test line"))
    mix = mixed_curve(terr, marine, 0.25, ReservoirOffset(100, 30))
    np.testing.assert_allclose(mix.mu, 0.75 * terr.mu + 0.25 * (marine.mu + 100))
    np.testing.assert_allclose(mix.variance, 0.75 ** 2 * 100 + 0.25 ** 2 * (400 + 900))


def test_mixture_at_the_ends_is_each_curve():
    terr = curve_on_grid(_straight(10.0))
    marine = curve_on_grid(_straight(20.0, offset=400.0, name="marine test line"))
    np.testing.assert_allclose(mixed_curve(terr, marine, 0.0).mu, terr.mu)
    np.testing.assert_allclose(mixed_curve(terr, marine, 1.0, ReservoirOffset(50, 0)).mu,
                               marine.mu + 50)


def test_many_at_once_agree_with_one_at_a_time(synthetic):
    cras, sigmas = [2450, 2300, 9500, 150, 4100], [30, 25, 60, 20, 35]
    batch = calibrate_many(cras, sigmas, synthetic, labels=list("abcde"))
    for date, cra, sd in zip(batch, cras, sigmas):
        one = calibrate(cra, sd, synthetic)
        assert date.first_year == one.first_year
        np.testing.assert_allclose(date.density, one.density)
        assert date.median == pytest.approx(one.median)
        for mass, ranges in one.hpd.items():
            assert [(r.start, r.end) for r in date.hpd[mass]] == [(r.start, r.end) for r in ranges]
            np.testing.assert_allclose([r.probability for r in date.hpd[mass]],
                                       [r.probability for r in ranges])


def test_windowed_density_matches_the_full_grid_calculation(synthetic):
    # Reference: the same likelihood on every grid year, normalised there.
    ll = log_likelihood(4100, 35, synthetic)
    full = np.exp(ll - ll.max())
    full /= full.sum()
    np.testing.assert_allclose(calibrate(4100, 35, synthetic).density_on(synthetic.grid), full,
                               atol=1e-9)


def test_windows_keep_all_the_likelihood_across_the_whole_curve():
    # Reference: the full-grid likelihood, normalised over all 55,001 years.
    full_curve = curve_on_grid(synthetic_curve())
    cal_bp = np.linspace(200, 50000, 12)
    mu = np.interp(cal_bp, full_curve.grid.cal_bp[::-1], full_curve.mu[::-1])
    sigmas = 20 + 0.005 * mu
    dates = calibrate_many(mu, sigmas, full_curve)
    for date, cra, sd in zip(dates, mu, sigmas):
        ll = log_likelihood(cra, sd, full_curve)
        full = np.exp(ll - ll.max())
        full /= full.sum()
        np.testing.assert_allclose(date.density_on(full_curve.grid), full, atol=1e-8)


def test_a_coarser_grid_step_is_supported():
    coarse = curve_on_grid(_straight(), step=5.0)
    assert coarse.grid == curve_grid(_straight(), 5.0)
    date = calibrate(3000, 30, coarse)
    assert date.step == 5.0
    assert date.density.sum() * 5.0 == pytest.approx(1.0)
    assert date.median == pytest.approx(-1050, abs=0.5)


@pytest.mark.parametrize("cra", [-800.0, 30000.0])
def test_determination_beyond_the_curve_is_an_outside_curve_error(synthetic, cra):
    with pytest.raises(CalibrationError) as err:
        calibrate_many([2450, cra], [30, 30], synthetic, labels=["VXL-0101", "VXL-0199"])
    assert err.value.code == "outside-curve"
    assert err.value.details["labels"] == ["VXL-0199"]


def test_outside_determinations_can_be_skipped(synthetic):
    dates = calibrate_many([2450, -800.0], [30, 30], synthetic, on_outside="none")
    assert dates[0] is not None and dates[1] is None


def test_date_touching_the_end_of_the_curve_is_marked_truncated(synthetic):
    assert calibrate(20, 30, synthetic).truncated
    assert not calibrate(2450, 30, synthetic).truncated


def test_non_positive_error_is_refused(synthetic):
    with pytest.raises(CalibrationError) as err:
        calibrate(2450, 0, synthetic)
    assert err.value.code == "invalid-determination"


def test_synthetic_curve_is_carried_into_the_result(synthetic):
    date = calibrate(2450, 30, synthetic)
    assert date.synthetic and "SYNTHETIC" in date.curve_label
