"""Unit tests of profiler.losses.multipath (ITU-R P.530-17 section 2.3)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from profiler.errors import InputError, ModelValidityError
from profiler.losses.multipath import (
    SHALLOW_PEAK_MIN_P0_PCT,
    check_multipath_validity,
    deep_fade_exceedance_pct,
    fade_exceedance_envelope_pct,
    fade_exceedance_pct,
    geoclimatic_factor,
    multipath_occurrence_factor_pct,
    path_inclination_mrad,
    shallow_fade_peak,
    worst_month_to_year_db,
)


def test_geoclimatic_factor_formula():
    # ITU-R P.530-17 eq. 4: K = 10^(-4.4 - 0.0027 dN1) (10 + sa)^-0.46
    assert geoclimatic_factor(-200.0, 40.0) == pytest.approx(10 ** (-4.4 + 0.54) * 50.0**-0.46, rel=1e-12)
    assert geoclimatic_factor(-400.0, 0.0) > geoclimatic_factor(-100.0, 0.0)
    assert geoclimatic_factor(-200.0, 10.0) > geoclimatic_factor(-200.0, 200.0)


def test_path_inclination_in_mrad():
    # ITU-R P.530-17 eq. 5: |hr - he| / d, metres over kilometres
    assert path_inclination_mrad(100.0, 400.0, 30_000.0) == pytest.approx(10.0)
    assert path_inclination_mrad(400.0, 100.0, 30_000.0) == pytest.approx(10.0)


def test_occurrence_factor_written_out():
    # ITU-R P.530-17 eq. 7 at A = 0: pw = K d^3.4 (1 + ep)^-1.03 f^0.8 10^(-0.00076 hL)
    d, f, he, hr, dn1, sa = 30.0, 8.0, 200.0, 500.0, -200.0, 40.0
    k = 10 ** (-4.4 - 0.0027 * dn1) * (10 + sa) ** -0.46
    ep = abs(hr - he) / d
    expected = k * d**3.4 * (1 + ep) ** -1.03 * f**0.8 * 10 ** (-0.00076 * min(he, hr))
    got = multipath_occurrence_factor_pct(d * 1000, f, he, hr, dn1, sa)
    assert got == pytest.approx(expected, rel=1e-12)
    assert deep_fade_exceedance_pct(30.0, got) == pytest.approx(expected * 1e-3, rel=1e-12)


def _p530_any_depth(a: float, p0: float) -> float:
    """Fade depth a exceeded for p % of the worst month: ITU-R P.530-17 (12/2017) section 2.3.2 (equations 10-13, numbers from memory),
    coded here again one scalar at a time, independently of profiler.losses.multipath, as a cross-check."""
    at = 25 + 1.2 * math.log10(p0)
    if a >= at:
        return p0 * 10 ** (-a / 10)
    pt = p0 * 10 ** (-at / 10)
    qa_ = -20 * math.log10(-math.log((100 - pt) / 100)) / at
    qt = (qa_ - 2) / ((1 + 0.3 * 10 ** (-at / 20)) * 10 ** (-0.016 * at)) - 4.3 * (10 ** (-at / 20) + at / 800)
    qa = 2 + (1 + 0.3 * 10 ** (-a / 20)) * 10 ** (-0.016 * a) * (qt + 4.3 * (10 ** (-a / 20) + a / 800))
    return 100 * (1 - math.exp(-(10 ** (-qa * a / 20))))


@pytest.mark.parametrize("p0", [0.01, 0.7, 5.0, 80.0, 900.0])
def test_any_depth_method_matches_written_out_formula(p0):
    depths = [0.0, 1.0, 5.0, 12.0, 20.0, 24.0, 30.0, 45.0]
    got = fade_exceedance_pct(depths, p0)
    np.testing.assert_allclose(got, [_p530_any_depth(a, p0) for a in depths], rtol=1e-9)


def test_any_depth_is_continuous_at_transition_and_starts_at_63_pct():
    p0 = 4.0
    at = 25 + 1.2 * math.log10(p0)
    below, above = fade_exceedance_pct([at - 1e-9, at + 1e-9], p0)
    assert below == pytest.approx(above, rel=1e-6)
    # at A = 0: 100 (1 - e^-1) %
    assert fade_exceedance_pct(0.0, p0) == pytest.approx(100 * (1 - math.exp(-1)))


def test_deep_fade_tail_falls_10_db_per_decade():
    p = fade_exceedance_pct([40.0, 50.0], 2.0)
    assert p[0] / p[1] == pytest.approx(10.0)


def test_envelope_equals_curve_where_it_falls():
    depths = np.linspace(0, 60, 601)
    for p0 in (0.1, 10.0, 1000.0):
        np.testing.assert_array_equal(fade_exceedance_envelope_pct(depths, p0), fade_exceedance_pct(depths, p0))
        peak_a, _ = shallow_fade_peak(p0)
        assert peak_a == -np.inf


def test_curve_falls_everywhere_below_the_peak_search_threshold():
    # Justifies skipping the peak search below SHALLOW_PEAK_MIN_P0_PCT (and shows a margin:
    # the ITU-R P.530-17 section 2.3.2 curve keeps falling up to 2000 %).
    p0 = np.geomspace(1e-6, 2000.0, 120)[:, None]
    depths = np.linspace(0.0, 60.0, 3001)[None, :]
    assert SHALLOW_PEAK_MIN_P0_PCT <= 2000.0
    assert np.all(np.diff(fade_exceedance_pct(depths, p0), axis=1) <= 1e-12)


def test_envelope_is_monotone_for_very_large_occurrence_factor():
    depths = np.linspace(0, 60, 6001)
    raw = fade_exceedance_pct(depths, 1e4)
    assert np.any(np.diff(raw) > 0)  # P.530 interpolation rises for p0 this large
    env = fade_exceedance_envelope_pct(depths, 1e4)
    assert np.all(np.diff(env) <= 1e-12)
    assert np.all(env >= raw)
    peak_a, peak_pw = shallow_fade_peak(1e4)
    both_a, both_pw = shallow_fade_peak([[5.0, 1e4], [3000.0, 5e4]])
    assert both_a[0, 0] == -np.inf and both_a[0, 1] == pytest.approx(peak_a)
    assert np.all(np.isfinite(both_a[1])) and both_pw[1, 1] > both_pw[1, 0]
    assert raw.max(initial=0, where=depths > 1.0) == pytest.approx(peak_pw, rel=1e-6)
    assert 5.0 < peak_a < 20.0


def test_worst_month_to_year():
    # ITU-R P.530-17 eq. 23 (from memory), latitude 45 deg: cos(90 deg) = 0
    dg = worst_month_to_year_db(45.0, 40_000.0, 2.0)
    assert dg == pytest.approx(10.5 - 5.6 * math.log10(1.1) - 2.7 * math.log10(40.0) + 1.7 * math.log10(3.0))
    assert worst_month_to_year_db(89.0, 1000.0, 0.0) == 10.8  # capped
    north, south = worst_month_to_year_db([50.0, -50.0], 30_000.0, 1.0)
    assert north == south
    with pytest.raises(InputError):
        worst_month_to_year_db(95.0, 30_000.0, 1.0)


def test_validity_range_15_over_d_to_45_ghz():
    check_multipath_validity([10_000.0, 50_000.0], [1.5, 45.0])
    with pytest.raises(ModelValidityError, match="15/d"):
        check_multipath_validity(5_000.0, 2.4)  # needs 3 GHz or more
    with pytest.raises(ModelValidityError, match="45 GHz"):
        multipath_occurrence_factor_pct(2_000.0, 60.0, 10.0, 20.0, -200.0, 40.0)
    with pytest.raises(InputError):
        check_multipath_validity(0.0, 10.0)


def test_bad_inputs_are_refused():
    with pytest.raises(InputError):
        geoclimatic_factor(-200.0, -5.0)
    with pytest.raises(InputError):
        fade_exceedance_pct(-1.0, 1.0)
    with pytest.raises(InputError):
        fade_exceedance_pct(10.0, 0.0)
