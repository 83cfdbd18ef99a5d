"""Invariants of the availability estimate (hypothesis)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.availability import ClimateSettings, evaluate_availability

freqs = st.floats(6.0, 45.0)
lengths_km = st.floats(1.0, 60.0)
margins = st.floats(0.5, 80.0)
rates = st.floats(5.0, 150.0)
heights = st.floats(0.0, 2000.0)
climate = st.builds(
    ClimateSettings,
    rain_rate_mm_h=rates,
    polarisation=st.sampled_from(["horizontal", "vertical", "circular"]),
    dn1_n_per_km=st.floats(-600.0, 0.0),
    terrain_roughness_m=st.floats(0.0, 300.0),
)
latitudes = st.one_of(st.none(), st.floats(-80.0, 80.0))
TOL_PCT = 1e-9


def _rain_order(r) -> float:
    """Rain outage as an orderable number: below the P.530-17 range 0, above it 100 (eq. 34 covers 0.001-1 %)."""
    side = int(r.rain_range_side[()])
    return 0.0 if side < 0 else 100.0 if side > 0 else float(r.rain_outage_pct[()])


def _combined(r) -> float:
    """Rain (bound 0.001 % below the range) plus average-year multipath, as the margin solver counts them."""
    side = int(r.rain_range_side[()])
    rain = 0.001 if side < 0 else 100.0 if side > 0 else float(r.rain_outage_pct[()])
    return rain + float(np.nan_to_num(r.multipath_outage_pct[()], nan=0.0))


def _availability(margin, d_km, f, ha, hb, s, lat):
    r = evaluate_availability(
        margin, d_km * 1000.0, f, ha, hb, settings=s, latitude_deg=lat, multipath_outside_range="exclude"
    )
    return r


@settings(max_examples=80, deadline=None)
@given(margins, st.floats(0.0, 20.0), freqs, lengths_km, heights, heights, climate, latitudes)
def test_more_margin_never_lowers_availability(m, extra, f, d_km, ha, hb, s, lat):
    low = _availability(m, d_km, f, ha, hb, s, lat)
    high = _availability(m + extra, d_km, f, ha, hb, s, lat)
    assert _rain_order(high) <= _rain_order(low) + TOL_PCT
    assert int(high.rain_range_side[()]) <= int(low.rain_range_side[()])
    assert bool(high.meets_target[()]) >= bool(low.meets_target[()])
    if np.isfinite(low.multipath_outage_pct[()]):
        assert high.multipath_outage_pct[()] <= low.multipath_outage_pct[()] + TOL_PCT


@settings(max_examples=80, deadline=None)
@given(margins, freqs, lengths_km, heights, heights, climate, st.floats(1.0, 3.0), latitudes)
def test_higher_rain_rate_never_raises_availability(m, f, d_km, ha, hb, s, factor, lat):
    from dataclasses import replace

    wetter = replace(s, rain_rate_mm_h=min(s.rain_rate_mm_h * factor, 300.0))
    dry = _availability(m, d_km, f, ha, hb, s, lat)
    wet = _availability(m, d_km, f, ha, hb, wetter, lat)
    assert _rain_order(wet) >= _rain_order(dry) - TOL_PCT


@pytest.mark.filterwarnings("ignore::profiler.errors.ModelValidityWarning")
@settings(max_examples=80, deadline=None)
@given(margins, freqs, st.floats(1.0, 40.0), st.floats(1.0, 2.0), heights, heights, climate, latitudes)
def test_outage_grows_with_path_length(m, f, d_km, factor, ha, hb, s, lat):
    # The effective rain length is held from falling (profiler.losses.rain.rain_effective_length_m),
    # so rain outage grows with length for any length; multipath too (ITU-R P.530-17 eq. 7, d^3.4)
    # as long as the inclination does not change much (same heights here, up to 40 km).
    longer = d_km * factor
    short = _availability(m, d_km, f, ha, hb, s, lat)
    long = _availability(m, longer, f, ha, hb, s, lat)
    assert _rain_order(long) >= _rain_order(short) - TOL_PCT


@settings(max_examples=40, deadline=None)
@given(freqs, lengths_km, heights, heights, climate, st.sampled_from([99.0, 99.9, 99.99, 99.999]))
def test_required_margin_reaches_target(f, d_km, ha, hb, s, target):
    from dataclasses import replace

    s = replace(s, target_availability_pct=target)
    r = _availability(20.0, d_km, f, ha, hb, s, None)
    need = r.required_fade_margin_db[()]
    if np.isfinite(need):
        at_need = _availability(need, d_km, f, ha, hb, s, None)
        assert _combined(at_need) <= 100.0 - target + 1e-9
        assert bool(at_need.meets_target[()])
        if need > 0.01:
            below = _availability(need - 0.01, d_km, f, ha, hb, s, None)
            assert _combined(below) > 100.0 - target - 1e-9


@settings(max_examples=150, deadline=None)
@given(st.floats(1.0, 100.0), st.floats(0.5, 60.0), st.floats(1.0, 250.0), st.floats(0.01, 60.0),
       st.floats(0.0, 30.0))
def test_rain_inversion_is_monotonic_and_never_the_turning_point(f, d_km, rate, m, extra):
    # ITU-R P.530-17 section 2.4.1 eq. 34, valid for 0.001 <= p <= 1 %: more margin never
    # gives more rain outage, and a figure is only ever given inside that range.
    from profiler.losses.rain import rain_attenuation_001_db, rain_exceedance_pct, rain_percentage_coefficients

    a001 = rain_attenuation_001_db(d_km * 1000.0, f, rate)
    (p_lo, p_hi), (s_lo, s_hi) = rain_exceedance_pct([m, m + extra], a001, f, beyond_range="clip")
    assert p_hi <= p_lo * (1 + 1e-12) and s_hi <= s_lo
    (b_lo, _), (side, _) = rain_exceedance_pct([m, m + extra], a001, f)
    if side == 0:
        assert 0.001 * (1 - 1e-9) <= b_lo <= 1.0 * (1 + 1e-9)
    else:
        assert np.isnan(b_lo)
    _, _, c2, c3 = rain_percentage_coefficients(f)
    turning = 10.0 ** (-c2 / (2.0 * c3))
    assert not np.isclose(p_lo, turning, rtol=1e-6)
