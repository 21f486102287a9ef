"""Combining determinations on one sample (Ward & Wilson 1978)."""

import pytest
from scipy import stats

from chronology.engine.combination import combine_determinations
from chronology.engine.errors import CalibrationError


def test_weighted_mean_of_the_worked_example():
    # Domain primer §3.6 (after Ward & Wilson 1978): 2450 ± 30 and 2410 ± 35
    # give 2433 ± 23 with T = 0.75.
    c = combine_determinations([2450, 2410], [30, 35], labels=["VXL-0107", "VXL-0108"])
    assert round(c.mean) == 2433
    assert round(c.sigma) == 23
    assert c.statistic == pytest.approx(0.75, abs=0.005)
    assert c.df == 1 and c.consistent


def test_critical_value_for_one_degree_of_freedom_is_3_84():
    # 3.84 is the common handbook value of chi-square(1) at 5%;
    # reference library: scipy.stats.chi2.ppf.
    c = combine_determinations([2450, 2410], [30, 35])
    assert c.critical == pytest.approx(3.84, abs=0.005)
    assert c.critical == pytest.approx(stats.chi2.ppf(0.95, 1))


def test_critical_value_for_three_determinations_is_5_99():
    # Domain primer §3.6: 5.99 for n = 3 (chi-square, 2 df, 5%); scipy.stats.chi2.ppf.
    c = combine_determinations([2450, 2410, 2430], [30, 35, 25])
    assert c.df == 2
    assert c.critical == pytest.approx(5.99, abs=0.005)


def test_verdict_and_p_value_agree_with_scipy_chi2():
    # Reference library: scipy.stats.chi2.sf for the p-value of T.
    c = combine_determinations([2450, 2330, 2400], [30, 35, 25])
    assert c.p_value == pytest.approx(stats.chi2.sf(c.statistic, 2))
    assert c.consistent == (c.statistic <= stats.chi2.ppf(0.95, 2))


def test_failing_test_is_reported_not_hidden():
    c = combine_determinations([2450, 2250], [30, 35], labels=["VXL-0107", "VXL-0108"])
    assert not c.consistent
    assert c.statistic > c.critical
    assert "NOT consistent" in c.verdict and "VXL-0107" in c.verdict
    assert c.mean == pytest.approx((2450 / 900 + 2250 / 1225) / (1 / 900 + 1 / 1225))


def test_a_single_determination_cannot_be_combined():
    with pytest.raises(CalibrationError) as err:
        combine_determinations([2450], [30])
    assert err.value.code == "invalid-combination"


def test_zero_error_is_refused():
    with pytest.raises(CalibrationError):
        combine_determinations([2450, 2410], [30, 0])
