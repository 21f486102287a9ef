"""The labelled synthetic calibration curve."""

import numpy as np

from chronology.engine.curves import parse_curve
from chronology.engine.synthetic_curve import synthetic_curve, write_synthetic_csv


def test_generator_is_deterministic():
    a, b = synthetic_curve(), synthetic_curve()
    assert a.checksum == b.checksum
    np.testing.assert_array_equal(a.c14_bp, b.c14_bp)


def test_checksum_is_pinned_so_a_formula_change_is_noticed():
    # Regression pin (project value): a new formula must bump the version in the name.
    # Values are rounded to 0.1 year, so last-bit differences of libm do not show.
    assert synthetic_curve(0, 5000, 5).checksum.startswith("0c5fae94f5004370")


def test_curve_is_labelled_synthetic_everywhere():
    curve = synthetic_curve()
    assert "SYNTHETIC" in curve.name
    assert curve.synthetic
    for text in (curve.citation, curve.licence):
        assert "SYNTHETIC" in text and "not for dating real samples" in text


def test_default_extent_is_0_to_55000_cal_bp_in_5_year_rows():
    curve = synthetic_curve()
    assert curve.cal_bp[0] == 0 and curve.cal_bp[-1] == 55000
    assert curve.n_rows == 11001
    assert np.all(np.diff(curve.cal_bp) == 5)


def test_written_table_reads_back_identically_and_still_synthetic(tmp_path):
    path = tmp_path / "synthetic.csv"
    text = write_synthetic_csv(path, end_bp=2000)
    curve = parse_curve(path.read_text())
    assert curve.checksum == synthetic_curve(end_bp=2000).checksum
    assert curve.synthetic and "SYNTHETIC" in curve.name
    assert "not for dating real samples" in text


def test_shape_follows_calendar_age_with_drift_plateaus_and_growing_error():
    curve = synthetic_curve()
    bp, mu = curve.cal_bp, curve.c14_bp
    old = bp > 1000
    ratio = mu[old] / bp[old]
    assert np.all((ratio > 0.8) & (ratio < 1.1))  # roughly CRA ≈ cal BP with drift
    slope_200 = (mu[40:] - mu[:-40]) / 200.0  # over 200-year spans
    assert (slope_200 < 0.4).sum() > 0  # at least one plateau
    assert np.all(np.diff(curve.sigma) >= 0) and curve.sigma[-1] > 10 * curve.sigma[0]

