"""Unit tests of profiler.losses.rain (ITU-R P.838-3, P.530-17 section 2.4.1)."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from profiler.errors import InputError, ModelValidityError, ModelValidityWarning
from profiler.losses.rain import (
    polarisation_tilt_deg,
    rain_attenuation_001_db,
    rain_attenuation_exceeded_db,
    rain_coefficients,
    rain_coefficients_hv,
    rain_distance_factor,
    rain_exceedance_pct,
    rain_percentage_coefficients,
    rain_specific_attenuation_db_km,
)


@pytest.mark.parametrize(
    "name,tau", [("horizontal", 0.0), ("Vertical", 90.0), ("circular", 45.0), ("30", 30.0), (12.5, 12.5)]
)
def test_polarisation_names(name, tau):
    assert polarisation_tilt_deg(name) == tau


@pytest.mark.parametrize("bad", ["slanted", "", 200.0])
def test_bad_polarisation_is_refused(bad):
    with pytest.raises(InputError):
        polarisation_tilt_deg(bad)


def test_polarisation_combination_limits():
    # ITU-R P.838-3 eq. 4-5: tau = 0 on a horizontal path gives the H coefficients,
    # tau = 90 the V ones; at 90 deg elevation polarisation no longer matters.
    k_h, a_h, k_v, a_v = rain_coefficients_hv(18.0)
    k, a = rain_coefficients(18.0, 0.0, 0.0)
    assert (k, a) == pytest.approx((k_h, a_h), rel=1e-12)
    k, a = rain_coefficients(18.0, 0.0, 90.0)
    assert (k, a) == pytest.approx((k_v, a_v), rel=1e-12)
    k1, a1 = rain_coefficients(18.0, 90.0, 0.0)
    k2, a2 = rain_coefficients(18.0, 90.0, 90.0)
    assert k1 == pytest.approx(k2) and a1 == pytest.approx(a2)
    k_c, _ = rain_coefficients(18.0, 0.0, 45.0)
    assert k_c == pytest.approx((k_h + k_v) / 2)


def test_horizontal_polarisation_attenuates_more_than_vertical():
    # Common practice (oblate drops): at 10-40 GHz gamma_H > gamma_V.
    f = np.array([10.0, 15.0, 23.0, 38.0])
    assert np.all(rain_specific_attenuation_db_km(40.0, f, 0.0, 0.0) > rain_specific_attenuation_db_km(40.0, f, 0.0, 90.0))


def test_no_rain_no_attenuation():
    assert rain_specific_attenuation_db_km(0.0, 20.0) == 0.0
    assert rain_attenuation_001_db(10_000.0, 20.0, 0.0) == 0.0
    pct, outside = rain_exceedance_pct(10.0, 0.0, 20.0)
    assert pct == 0.0 and not outside


def test_distance_factor_is_capped_at_2_5():
    _, alpha = rain_coefficients(20.0)
    r = rain_distance_factor([100.0, 1000.0, 20_000.0], 42.0, 20.0, alpha)
    assert r[0] == 2.5
    assert np.all(r <= 2.5)
    # ITU-R P.530-17 eq. 32 written out for 20 km
    d = 20.0
    expected = 1 / (0.477 * d**0.633 * 42.0 ** (0.073 * alpha) * 20.0**0.123 - 10.579 * (1 - math.exp(-0.024 * d)))
    assert r[2] == pytest.approx(expected, rel=1e-12)


def test_c0_below_and_above_10_ghz():
    c0, c1, c2, c3 = rain_percentage_coefficients([8.0, 10.0, 20.0])
    assert c0[0] == 0.12 and c0[1] == pytest.approx(0.12)
    assert c0[2] == pytest.approx(0.12 + 0.4 * math.log10(2.0**0.8))
    # the power law returns A0.01 at p = 0.01 % within 0.5 % (P.530-17 eq. 34, by design)
    ratio = c1 * 0.01 ** -(c2 + c3 * math.log10(0.01))
    np.testing.assert_allclose(ratio, 1.0, atol=0.005)


def test_exceeded_attenuation_falls_with_percentage():
    p = np.array([0.001, 0.003, 0.01, 0.03, 0.1, 0.3, 1.0])
    a = rain_attenuation_exceeded_db(15_000.0, 23.0, 50.0, p)
    assert np.all(np.diff(a) < 0)


@pytest.mark.parametrize("p", [0.0005, 1.5, 50.0])
def test_percentage_outside_method_range_is_refused(p):
    with pytest.raises(ModelValidityError, match="0.001-1 %"):
        rain_attenuation_exceeded_db(10_000.0, 18.0, 42.0, p)


@pytest.mark.parametrize("f", [0.5, 120.0])
def test_frequency_outside_method_range_is_refused(f):
    with pytest.raises(ModelValidityError, match="GHz"):
        rain_attenuation_001_db(10_000.0, f, 42.0)


def test_p838_fit_range_is_enforced():
    with pytest.raises(ModelValidityError, match="P.838"):
        rain_coefficients_hv(1200.0)


def test_bad_inputs_are_refused():
    with pytest.raises(InputError, match="rain rate"):
        rain_specific_attenuation_db_km(-1.0, 10.0)
    with pytest.raises(InputError, match="path length"):
        rain_attenuation_001_db(0.0, 10.0, 42.0)


def test_long_paths_warn():
    with pytest.warns(ModelValidityWarning, match="60 km"):
        rain_attenuation_001_db(75_000.0, 7.0, 42.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        rain_attenuation_001_db(50_000.0, 7.0, 42.0)


def test_exceedance_inverts_the_power_law():
    p = np.array([0.001, 0.002, 0.01, 0.05, 0.2, 1.0])
    for f in (8.0, 18.0, 38.0):
        a001 = rain_attenuation_001_db(12_000.0, f, 60.0)
        a = rain_attenuation_exceeded_db(12_000.0, f, 60.0, p)
        back, outside = rain_exceedance_pct(a, a001, f)
        np.testing.assert_allclose(back, p, rtol=1e-9)
        assert not outside.any()


def test_exceedance_beyond_range_is_flagged_extended_or_clipped():
    a001 = rain_attenuation_001_db(12_000.0, 18.0, 60.0)
    huge, small = 3 * a001, 0.05 * a001
    pct, outside = rain_exceedance_pct([huge, small], a001, 18.0)
    assert outside.all()
    assert pct[0] < 0.001 and pct[1] > 1.0
    clipped, _ = rain_exceedance_pct([huge, small], a001, 18.0, beyond_range="clip")
    np.testing.assert_allclose(clipped, [0.001, 1.0])
    with pytest.raises(InputError):
        rain_exceedance_pct(1.0, a001, 18.0, beyond_range="wrap")


def test_exceedance_of_non_positive_margin_is_100_pct():
    pct, _ = rain_exceedance_pct([0.0, -3.0], 20.0, 18.0)
    np.testing.assert_array_equal(pct, [100.0, 100.0])


def test_effective_length_grows_then_saturates():
    # ITU-R P.530-17 eq. 32: d_eff = r d grows with d over ordinary hop lengths but
    # levels off and dips slightly before 60 km when R0.01 is low (here 20 mm/h,
    # 20 GHz: peak near 55 km).  A property of the published formula, kept as is.
    _, alpha = rain_coefficients(20.0)
    d = np.linspace(1_000.0, 60_000.0, 119)
    d_eff = rain_distance_factor(d, 20.0, 20.0, alpha) * d
    assert np.all(np.diff(d_eff[d <= 40_000.0]) > 0)
    assert d_eff[-1] < d_eff.max()
