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
    rain_effective_length_m,
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


def test_exceedance_beyond_range_is_bounded_or_clipped():
    # ITU-R P.530-17 section 2.4.1: eq. 34 holds for 0.001 <= p <= 1 % only.
    a001 = rain_attenuation_001_db(12_000.0, 18.0, 60.0)
    huge, small = 3 * a001, 0.05 * a001
    pct, side = rain_exceedance_pct([huge, small], a001, 18.0)
    np.testing.assert_array_equal(side, [-1, 1])
    assert np.isnan(pct).all()
    clipped, _ = rain_exceedance_pct([huge, small], a001, 18.0, beyond_range="clip")
    np.testing.assert_allclose(clipped, [0.001, 1.0])
    with pytest.raises(InputError):
        rain_exceedance_pct(1.0, a001, 18.0, beyond_range="wrap")


@pytest.mark.parametrize("f", [1.5, 5.8, 8.0, 11.0, 23.0, 38.0, 80.0])
@pytest.mark.parametrize("rate", [10.0, 42.0, 120.0])
def test_inversion_is_monotonic_and_never_the_turning_point(f, rate):
    # ITU-R P.530-17 section 2.4.1 eq. 34 peaks at p = 10^(-C2 / (2 C3)) (about 4.5e-6 %
    # below 10 GHz); a margin beyond A_0.001 must read "below 0.001 %", never that peak.
    a001 = rain_attenuation_001_db(8_000.0, f, rate)
    _, _, c2, c3 = rain_percentage_coefficients(f)
    turning = 10.0 ** (-c2 / (2.0 * c3))
    margins = np.linspace(0.01, 40.0, 4001) * a001
    clipped, side = rain_exceedance_pct(margins, a001, f, beyond_range="clip")
    assert np.all(np.diff(clipped) <= 1e-15)  # non-increasing in the margin
    assert np.all(np.diff(side) <= 0)  # above the range, then inside, then below
    assert (side == -1).any() and (side == 0).any() and (side == 1).any()
    bounded, _ = rain_exceedance_pct(margins, a001, f)
    assert np.all(np.isnan(bounded[side != 0]))
    inside = bounded[side == 0]
    assert np.all((inside >= 0.001 * (1 - 1e-9)) & (inside <= 1.0 * (1 + 1e-9)))
    assert not np.any(np.isclose(clipped, turning, rtol=1e-3))


def test_exceedance_of_non_positive_margin_is_100_pct():
    pct, _ = rain_exceedance_pct([0.0, -3.0], 20.0, 18.0)
    np.testing.assert_array_equal(pct, [100.0, 100.0])


def test_effective_length_grows_then_saturates():
    # ITU-R P.530-17 eq. 32: d_eff = r d grows with d over ordinary hop lengths but,
    # as published, levels off and dips before 60 km when R0.01 is low (here 20 mm/h,
    # 20 GHz: peak near 55 km); rain_effective_length_m holds it at the peak.
    _, alpha = rain_coefficients(20.0)
    d = np.linspace(1_000.0, 60_000.0, 119)
    d_eff = rain_distance_factor(d, 20.0, 20.0, alpha) * d
    assert np.all(np.diff(d_eff[d <= 40_000.0]) > 0)
    assert d_eff[-1] < d_eff.max()
    held = rain_effective_length_m(d, 20.0, 20.0, alpha)
    assert held[-1] == pytest.approx(d_eff.max(), rel=1e-4)
    np.testing.assert_allclose(held[d <= 20_000.0], d_eff[d <= 20_000.0], rtol=1e-12)


def test_effective_length_is_exact_below_the_turn():
    # The turn of r d lies beyond 38 km for 1-100 GHz and 0.1-300 mm/h, so below 20 km
    # (where rain_effective_length_m skips its search) eq. 32 is used as published.
    for f in np.geomspace(1.0, 100.0, 25):
        _, alpha = rain_coefficients(f)
        for rate in np.geomspace(0.1, 300.0, 25):
            d = np.linspace(100.0, 38_000.0, 400)
            h = rain_distance_factor(d, rate, f, alpha) * d
            assert np.all(np.diff(h) > 0), (f, rate)


@pytest.mark.parametrize("f", [1.0, 2.4, 5.8, 7.0, 11.0, 18.0, 23.0, 38.0, 60.0, 100.0])
@pytest.mark.parametrize("rate", [1.0, 12.0, 42.0, 95.0, 250.0])
def test_a001_never_falls_as_the_path_grows(f, rate):
    # Issue check for ITU-R P.530-17 section 2.4.1: A0.01 at 11 GHz, 42 mm/h fell from
    # 25.9 dB at 60 km to 24.9 dB at 85 km; rain attenuation must not fall with length.
    d = np.linspace(500.0, 400_000.0, 1500)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        a = rain_attenuation_001_db(d, f, rate)
    assert np.all(np.diff(a) >= -1e-9 * a[1:])


def test_a001_at_11_ghz_holds_from_60_to_85_km():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        a60, a85 = rain_attenuation_001_db([60_000.0, 85_000.0], 11.0, 42.0)
    assert a85 >= a60 >= 25.8
