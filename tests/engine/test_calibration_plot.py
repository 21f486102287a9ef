"""The calibration plot: SVG and PNG, labelled with its curve and cautions."""

import numpy as np
import pytest

from chronology.engine.calibration import calibrate, curve_on_grid
from chronology.engine.curves import Curve
from chronology.engine.plots import CAUTION, OKABE_ITO, calibration_plot
from chronology.engine.synthetic_curve import synthetic_curve


@pytest.fixture(scope="module")
def synthetic_plot():
    curve = curve_on_grid(synthetic_curve(0, 6000))
    return calibration_plot(calibrate(2420, 30, curve, label="VXL-0101"), curve)


def test_plot_returns_svg_and_png_bytes(synthetic_plot):
    assert synthetic_plot.png.startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature (ISO/IEC 15948)
    assert b"<svg" in synthetic_plot.svg[:2000]


def test_plot_names_the_curve_and_says_it_is_synthetic(synthetic_plot):
    svg = synthetic_plot.svg.decode()
    assert "TELLSTACK-SYNTHETIC-1" in svg
    assert "not for dating real samples" in svg


def test_plot_carries_the_review_caution(synthetic_plot):
    assert CAUTION in synthetic_plot.svg.decode()


def test_plot_uses_the_colour_blind_safe_palette(synthetic_plot):
    # Okabe & Ito 2008 palette (from memory): the HPD shading colours appear.
    svg = synthetic_plot.svg.decode().lower()
    assert OKABE_ITO["orange"].lower() in svg and OKABE_ITO["bluish_green"].lower() in svg


def test_plot_of_a_non_synthetic_curve_has_no_synthetic_warning():
    bp = np.arange(0.0, 6001.0, 5.0)
    curve = curve_on_grid(Curve("VML straight test line", "test", "test", bp, bp,
                                np.full(bp.size, 15.0)))
    svg = calibration_plot(calibrate(2420, 30, curve), curve).svg.decode()
    assert "VML straight test line" in svg
    assert "not for dating real samples" not in svg
    assert CAUTION in svg
