"""F14C and conventional radiocarbon age conversions."""

import math

import numpy as np
import pytest

from chronology.engine.errors import CalibrationError
from chronology.engine.radiocarbon import LIBBY_MEAN_LIFE, cra_from_f14c, f14c_from_cra


def test_half_modern_gives_the_libby_half_life():
    # Stuiver & Polach 1977, Discussion: reporting of 14C data: ages use the
    # Libby half-life of 5568 yr, so F14C = 0.5 is 5568 BP by definition.
    cra, _ = cra_from_f14c(0.5)
    assert cra == pytest.approx(5568.0, abs=1e-9)


def test_age_is_minus_8033_ln_f14c():
    # Stuiver & Polach 1977: CRA = -8033 ln(F); 8033 is 5568/ln 2 rounded,
    # so the two agree to the rounding of the mean life (< 1e-5 relative).
    f = np.array([0.05, 0.2, 0.5, 0.7376, 0.99])
    cra, _ = cra_from_f14c(f)
    np.testing.assert_allclose(cra, -8033.0 * np.log(f), rtol=1e-5)
    assert round(LIBBY_MEAN_LIFE) == 8033


def test_worked_example_from_a_laboratory_method_note():
    # Domain primer §3.1 (confirmed against a laboratory's method note):
    # F14C = 0.7376 ± 0.0027 gives 2445 ± 29 BP.
    cra, sigma = cra_from_f14c(0.7376, 0.0027)
    assert round(cra) == 2445
    assert round(sigma) == 29


def test_error_is_mean_life_times_relative_f14c_error():
    # Stuiver & Polach 1977: sigma_CRA = 8033 sigma_F / F (first-order propagation).
    _, sigma = cra_from_f14c(0.3, 0.003)
    assert sigma == pytest.approx(8033.0 * 0.003 / 0.3, rel=1e-5)


def test_conversion_back_to_f14c_recovers_the_measurement():
    # Inverse of Stuiver & Polach 1977: F = exp(-CRA / 8033).
    f = np.array([0.01, 0.4, 0.9, 1.15])
    s = np.array([0.0002, 0.002, 0.003, 0.004])
    cra, sigma = cra_from_f14c(f, s)
    back, back_sigma = f14c_from_cra(cra, sigma)
    np.testing.assert_allclose(back, f, rtol=1e-12)
    np.testing.assert_allclose(back_sigma, s, rtol=1e-12)


def test_post_bomb_fraction_gives_a_negative_age():
    # Reimer, Brown & Reimer 2004: post-bomb samples have F14C > 1, hence CRA < 0.
    cra, _ = cra_from_f14c(1.2)
    assert cra == pytest.approx(-8033.0 * math.log(1.2), rel=1e-5)
    assert cra < 0


@pytest.mark.parametrize("f", [0.0, -0.1, float("nan")])
def test_non_positive_or_missing_fraction_is_refused(f):
    with pytest.raises(CalibrationError) as err:
        cra_from_f14c(f, 0.001)
    assert err.value.code == "invalid-measurement"
