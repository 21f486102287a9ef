"""Calendar dating evidence as log-likelihoods on one grid."""

import math

import numpy as np
import pytest
from scipy import stats

from chronology.engine.calibration import curve_on_grid, log_likelihood
from chronology.engine.errors import CalibrationError, EvidenceError
from chronology.engine.evidence_likelihoods import (
    Likelihood, fixed_date, normal_date, radiocarbon_likelihood, terminus_ante_quem,
    terminus_post_quem, uniform_date,
)
from chronology.engine.grid import CalendarGrid
from chronology.engine.synthetic_curve import synthetic_curve

GRID = CalendarGrid.spanning(-800.0, 200.0)


def test_terminus_post_quem_allows_the_year_and_after_only():
    tpq = terminus_post_quem(GRID, -120, label="coin, robber-trench backfill")
    years = GRID.years
    assert np.all(tpq.log_values[years >= -120] == 0.0)
    assert np.all(np.isneginf(tpq.log_values[years < -120]))


def test_terminus_ante_quem_allows_the_year_and_before_only():
    taq = terminus_ante_quem(GRID, 43)
    years = GRID.years
    assert np.all(taq.log_values[years <= 43] == 0.0)
    assert np.all(np.isneginf(taq.log_values[years > 43]))


def test_normal_date_is_the_normal_log_density():
    # Reference library: scipy.stats.norm.logpdf.
    lik = normal_date(GRID, -250, 20)
    np.testing.assert_allclose(lik.log_values, stats.norm.logpdf(GRID.years, -250, 20))


def test_uniform_date_has_equal_weight_inside_the_range_only():
    lik = uniform_date(GRID, -60, 20)
    inside = (GRID.years >= -60) & (GRID.years <= 20)
    assert np.allclose(lik.log_values[inside], -math.log(80))
    assert np.all(np.isneginf(lik.log_values[~inside]))
    assert lik.density().sum() * GRID.step == pytest.approx(1.0)


def test_fixed_date_puts_all_weight_on_one_year():
    lik = fixed_date(GRID, -17)
    assert np.count_nonzero(np.isfinite(lik.log_values)) == 1
    assert GRID.years[np.argmax(lik.log_values)] == -17


def test_every_kind_shares_one_type_on_one_grid():
    curve = curve_on_grid(synthetic_curve(0, 5000), GRID)
    evidence = [radiocarbon_likelihood(GRID, 2300, 30, curve, label="VXL-0101"),
                terminus_post_quem(GRID, -100), terminus_ante_quem(GRID, 100),
                normal_date(GRID, 0, 30), uniform_date(GRID, -50, 50), fixed_date(GRID, 10)]
    assert all(isinstance(e, Likelihood) and e.log_values.shape == (GRID.n,) for e in evidence)
    assert {e.kind for e in evidence} == {"radiocarbon", "tpq", "taq", "normal", "uniform", "fixed"}


def test_radiocarbon_evidence_is_the_calibration_log_likelihood():
    curve = curve_on_grid(synthetic_curve(0, 5000), GRID)
    lik = radiocarbon_likelihood(GRID, 2300, 30, synthetic_curve(0, 5000))
    np.testing.assert_allclose(lik.log_values, log_likelihood(2300, 30, curve))


def test_radiocarbon_evidence_beyond_the_curve_on_this_grid_is_refused():
    with pytest.raises(CalibrationError) as err:
        radiocarbon_likelihood(GRID, 4000, 30, synthetic_curve(0, 5000))
    assert err.value.code == "outside-curve"


def test_terminus_after_the_grid_leaves_no_possible_year():
    with pytest.raises(EvidenceError) as err:
        terminus_post_quem(GRID, 500)
    assert err.value.code == "evidence-outside-grid"


def test_uniform_range_must_run_forward():
    with pytest.raises(EvidenceError) as err:
        uniform_date(GRID, 20, -60)
    assert err.value.code == "invalid-evidence"
