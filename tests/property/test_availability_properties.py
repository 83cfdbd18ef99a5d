"""Invariants of the availability estimate (hypothesis)."""

from __future__ import annotations

import numpy as np
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
    assert high.availability_pct[()] >= low.availability_pct[()] - TOL_PCT
    assert high.rain_outage_pct[()] <= low.rain_outage_pct[()] + TOL_PCT
    assert high.multipath_outage_pct[()] <= low.multipath_outage_pct[()] + TOL_PCT


@settings(max_examples=80, deadline=None)
@given(margins, freqs, lengths_km, heights, heights, climate, st.floats(1.0, 3.0), latitudes)
def test_higher_rain_rate_never_raises_availability(m, f, d_km, ha, hb, s, factor, lat):
    from dataclasses import replace

    wetter = replace(s, rain_rate_mm_h=min(s.rain_rate_mm_h * factor, 300.0))
    dry = _availability(m, d_km, f, ha, hb, s, lat)
    wet = _availability(m, d_km, f, ha, hb, wetter, lat)
    assert wet.availability_pct[()] <= dry.availability_pct[()] + TOL_PCT


@settings(max_examples=80, deadline=None)
@given(margins, freqs, st.floats(1.0, 40.0), st.floats(1.0, 2.0), heights, heights, climate, latitudes)
def test_outage_grows_with_path_length(m, f, d_km, factor, ha, hb, s, lat):
    # Up to 40 km: beyond, the effective rain length r d of ITU-R P.530-17 eq. 32
    # levels off and dips slightly for low R0.01 (tests/test_rain.py), and with
    # negligible multipath the total may then fall by ~1e-8 % as a path grows.
    longer = min(d_km * factor, 40.0)
    short = _availability(m, d_km, f, ha, hb, s, lat)
    long = _availability(m, longer, f, ha, hb, s, lat)
    assert long.total_outage_pct[()] >= short.total_outage_pct[()] - TOL_PCT
    assert long.rain_outage_pct[()] >= short.rain_outage_pct[()] - TOL_PCT


@settings(max_examples=40, deadline=None)
@given(freqs, lengths_km, heights, heights, climate, st.sampled_from([99.0, 99.9, 99.99, 99.999]))
def test_required_margin_reaches_target(f, d_km, ha, hb, s, target):
    from dataclasses import replace

    s = replace(s, target_availability_pct=target)
    r = _availability(20.0, d_km, f, ha, hb, s, None)
    need = r.required_fade_margin_db[()]
    if np.isfinite(need):
        at_need = _availability(need, d_km, f, ha, hb, s, None)
        assert at_need.total_outage_pct[()] <= 100.0 - target + 1e-9
        assert bool(at_need.meets_target[()])
        if need > 0.01:
            below = _availability(need - 0.01, d_km, f, ha, hb, s, None)
            assert not bool(below.meets_target[()])
