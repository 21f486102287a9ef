"""Astronomical years, cal BC/AD (no year 0) and cal BP."""

import pytest

from chronology.engine.calendar_scales import (
    format_range, format_year, from_bc_ad, from_cal_bp, round_range_outward, to_bc_ad, to_cal_bp,
)


def test_one_bc_is_followed_by_ad_one():
    # Domain primer §3.5: BC/AD has no year 0; astronomical t = 0 is 1 BC.
    assert to_bc_ad(0) == (1, "BC")
    assert to_bc_ad(1) == (1, "AD")
    assert from_bc_ad(1, "AD") - from_bc_ad(1, "BC") == 1


def test_year_zero_does_not_exist_on_the_bc_ad_scale():
    with pytest.raises(ValueError):
        from_bc_ad(0, "AD")


def test_bc_years_map_to_one_minus_the_year():
    # Domain primer §3.5: t = 1 - y for y BC.
    assert from_bc_ad(500, "BC") == -499
    assert to_bc_ad(-499) == (500, "BC")


def test_500_bc_is_2449_cal_bp():
    # Domain primer §3.5: cal BP = 1950 - t, so 500 BC = 2449 cal BP.
    assert to_cal_bp(from_bc_ad(500, "BC")) == 2449
    assert from_cal_bp(2449) == -499


def test_from_10_bc_to_ad_10_is_19_years():
    # Domain primer §3.5.
    assert from_bc_ad(10, "AD") - from_bc_ad(10, "BC") == 19


def test_every_year_converts_back_to_itself():
    for t in range(-3000, 3000):
        assert from_bc_ad(*to_bc_ad(t)) == t


def test_years_format_with_cal_labels():
    assert format_year(-351) == "352 cal BC"
    assert format_year(41) == "cal AD 41"
    assert format_year(-499, scale="bp") == "2449 cal BP"


def test_a_range_across_the_era_names_both_eras():
    assert format_range(-39, 15) == "40 cal BC – cal AD 15"
    assert format_range(-351, -296) == "352–297 cal BC"


def test_outward_rounding_acts_on_the_printed_years():
    # Millard 2014 (from memory): round outward to 10 years for display.
    start, end = round_range_outward(from_bc_ad(352, "BC"), from_bc_ad(297, "BC"), 10)
    assert to_bc_ad(start) == (360, "BC")
    assert to_bc_ad(end) == (290, "BC")


def test_outward_rounding_across_ad_one_lands_on_a_bc_decade():
    start, end = round_range_outward(from_bc_ad(3, "AD"), from_bc_ad(17, "AD"), 10)
    assert to_bc_ad(start) == (10, "BC")
    assert to_bc_ad(end) == (20, "AD")
