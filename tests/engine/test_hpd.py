"""Highest-density regions on a grid (Hyndman 1996)."""

import inspect

import numpy as np
import pytest
from scipy import stats

from chronology.engine.hpd import HPDRange, hpd_regions, hpd_regions_batch

YEARS = np.arange(-1000.0, 1001.0)


def test_signature_is_the_one_the_model_code_calls():
    assert list(inspect.signature(hpd_regions).parameters) == ["years", "density", "mass"]


@pytest.mark.parametrize("k", [1, 2])
def test_normal_density_gives_mean_plus_minus_k_sigma(k):
    # Hyndman 1996: for a unimodal symmetric density the HPD region is the
    # central interval; scipy.stats.norm gives its mass (0.6827, 0.9545).
    mean, sd = 37.0, 80.0
    mass = stats.norm.cdf(k) - stats.norm.cdf(-k)
    (r,) = hpd_regions(YEARS, stats.norm.pdf(YEARS, mean, sd), mass)
    assert r.start == pytest.approx(mean - k * sd, abs=1.0)  # within one grid step
    assert r.end == pytest.approx(mean + k * sd, abs=1.0)
    assert r.probability == pytest.approx(mass, abs=2 * stats.norm.pdf(k) / sd)


def test_bimodal_density_gives_two_ranges_adding_up_to_the_mass():
    density = 0.6 * stats.norm.pdf(YEARS, -400, 40) + 0.4 * stats.norm.pdf(YEARS, 300, 60)
    ranges = hpd_regions(YEARS, density, 0.954)
    assert len(ranges) == 2
    assert ranges[0].end < ranges[1].start
    total = sum(r.probability for r in ranges)
    # At least the mass, exceeding it by no more than the threshold cells.
    assert 0.954 <= total <= 0.954 + 2 * density.max() / density.sum()


def test_each_range_carries_its_own_probability():
    density = 0.6 * stats.norm.pdf(YEARS, -400, 40) + 0.4 * stats.norm.pdf(YEARS, 300, 60)
    first, second = hpd_regions(YEARS, density, 0.954)
    inside = (YEARS >= first.start) & (YEARS <= first.end)
    assert first.probability == pytest.approx(density[inside].sum() / density.sum())
    assert first.probability > second.probability


def test_scaling_the_density_does_not_change_the_region():
    density = stats.norm.pdf(YEARS, 0, 50)
    (a,), (b,) = hpd_regions(YEARS, density, 0.683), hpd_regions(YEARS, 1e6 * density, 0.683)
    assert (a.start, a.end) == (b.start, b.end)
    assert a.probability == pytest.approx(b.probability)


def test_batch_agrees_with_one_at_a_time():
    rows = np.vstack([stats.norm.pdf(YEARS, 0, 50),
                      stats.norm.pdf(YEARS, -300, 20) + stats.norm.pdf(YEARS, 200, 30)])
    batch = hpd_regions_batch(rows, [0.683, 0.954], np.full(2, YEARS[0]), 1.0)
    for mass in (0.683, 0.954):
        for i in range(2):
            single = hpd_regions(YEARS, rows[i], mass)
            assert [(r.start, r.end) for r in batch[mass][i]] == [(r.start, r.end) for r in single]
            np.testing.assert_allclose([r.probability for r in batch[mass][i]],
                                       [r.probability for r in single])


def test_ranges_are_plain_dataclasses():
    (r,) = hpd_regions(YEARS, stats.norm.pdf(YEARS, 0, 50), 0.5)
    assert isinstance(r, HPDRange) and set(r.as_dict()) == {"start", "end", "probability"}


@pytest.mark.parametrize("density, mass", [
    (np.zeros(YEARS.size), 0.5),
    (-np.ones(YEARS.size), 0.5),
    (np.ones(YEARS.size), 0.0),
    (np.ones(YEARS.size), 1.5),
])
def test_unusable_input_is_refused(density, mass):
    with pytest.raises(ValueError):
        hpd_regions(YEARS, density, mass)
