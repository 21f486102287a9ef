"""Calibration-curve tables: parsing, validation, checksums, interpolation."""

import numpy as np
import pytest

from chronology.engine.curves import curve_grid, curve_to_csv, interpolate, parse_curve
from chronology.engine.errors import CalibrationError
from chronology.engine.grid import CalendarGrid

TABLE = """\
# name: VML test curve
# citation: invented for tests
# licence: test data
CAL BP,14C age,Sigma,Delta,Sigma
30,25,10,0.1,0.2
20,21,11,0.3,0.4
10,12,12,0.5,0.6
0,0,13,0.7,0.8
"""


def _error(text, **options):
    with pytest.raises(CalibrationError) as err:
        parse_curve(text, name="t", **options)
    return err.value


def test_comments_and_header_are_skipped_and_extra_columns_kept():
    curve = parse_curve(TABLE)
    assert curve.name == "VML test curve"
    assert curve.citation == "invented for tests"
    assert curve.licence == "test data"
    np.testing.assert_array_equal(curve.cal_bp, [0, 10, 20, 30])
    np.testing.assert_array_equal(curve.c14_bp, [0, 12, 21, 25])
    np.testing.assert_array_equal(curve.sigma, [13, 12, 11, 10])
    assert len(curve.extra) == 2
    np.testing.assert_array_equal(curve.extra[0], [0.7, 0.5, 0.3, 0.1])


def test_checksum_depends_on_numbers_not_on_comments_or_row_order():
    plain = "0,0,13\n10,12,12\n20,21,11\n30,25,10\n"
    assert parse_curve(plain, name="other").checksum == parse_curve(TABLE).checksum


def test_checksum_changes_when_a_value_changes():
    changed = TABLE.replace("20,21,11", "20,22,11")
    assert parse_curve(changed).checksum != parse_curve(TABLE).checksum


def test_written_table_reads_back_to_the_same_curve():
    curve = parse_curve(TABLE)
    again = parse_curve(curve_to_csv(curve))
    assert again.checksum == curve.checksum
    assert again.name == curve.name


def test_non_numeric_value_is_reported_with_its_line():
    err = _error("cal,c14,sigma\n0,0,10\n5,5,10\n10,ten,10\n")
    assert err.code == "curve-bad-row"
    assert err.details["line"] == 4
    assert "line 4" in err.message and "'ten'" in err.message


def test_row_with_too_few_columns_is_reported_with_its_line():
    err = _error("0,0,10\n# a comment\n5,5\n10,10,10\n")
    assert err.code == "curve-bad-row"
    assert err.details["line"] == 3


def test_calendar_axis_out_of_order_is_reported_with_its_line():
    err = _error("0,0,10\n5,5,10\n5,6,10\n15,15,10\n")
    assert err.code == "curve-not-monotonic"
    assert err.details["line"] == 3


def test_non_positive_sigma_is_reported_with_its_line():
    err = _error("0,0,10\n5,5,0\n10,10,10\n")
    assert err.code == "curve-bad-sigma"
    assert err.details["line"] == 2


def test_gap_larger_than_the_maximum_step_is_reported_with_its_line():
    err = _error("0,0,10\n5,5,10\n30,30,10\n35,35,10\n", max_step=5)
    assert err.code == "curve-gap"
    assert err.details["line"] == 3


def test_too_few_rows_are_refused():
    err = _error("0,0,10\n5,5,10\n", min_rows=3)
    assert err.code == "curve-too-short"


def test_text_after_the_data_has_begun_is_not_taken_as_a_header():
    err = _error("0,0,10\n5,5,10\nend of table\n")
    assert err.details["line"] == 3


def test_interpolation_is_linear_between_rows():
    curve = parse_curve(TABLE)
    grid = CalendarGrid(1950 - 30, 1.0, 31)  # 30 cal BP .. 0 cal BP
    mu, sigma = interpolate(curve, grid)
    # Reference: numpy.interp on the same rows (linear interpolation).
    np.testing.assert_allclose(mu, np.interp(grid.cal_bp, [0, 10, 20, 30], [0, 12, 21, 25]))
    assert mu[-6] == pytest.approx(6.0)  # 5 cal BP, halfway between 0 and 12
    assert sigma[-6] == pytest.approx(12.5)


def test_interpolation_onto_a_coarser_step_uses_the_same_lines():
    curve = parse_curve(TABLE)
    grid = curve_grid(curve, step=5.0)
    assert grid.n == 7
    mu, _ = interpolate(curve, step=5.0)
    np.testing.assert_allclose(mu, [25, 23, 21, 16.5, 12, 6, 0])


def test_default_grid_is_the_whole_curve_at_one_year():
    mu, sigma = interpolate(parse_curve(TABLE))
    assert mu.size == 31 and mu[0] == 25 and mu[-1] == 0


def test_grid_beyond_the_curve_is_refused():
    curve = parse_curve(TABLE)
    with pytest.raises(CalibrationError) as err:
        interpolate(curve, CalendarGrid(1900.0, 1.0, 100))
    assert err.value.code == "grid-outside-curve"
