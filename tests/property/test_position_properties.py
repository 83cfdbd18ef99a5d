"""Properties of the one position rule (profiler/validation.py)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.geodesy import WGS84
from profiler.validation import MIN_PATH_M, normalise_positions, position_problem, too_close

lats = st.floats(-90.0, 90.0, allow_nan=False)
lons = st.floats(-180.0, 360.0, allow_nan=False)


@given(lats, lons)
@settings(max_examples=300, deadline=None)
def test_normalised_longitude_is_in_range_and_the_same_point(lat, lon):
    assert position_problem(lat, lon) is None
    la, lo = normalise_positions(lat, lon)
    assert -180.0 <= float(lo) <= 180.0
    assert float(la) == lat
    # The same place on the ellipsoid (pyproj.Geod.inv), within a micrometre.
    _, _, d = WGS84.inv(lon, lat, float(lo), lat)
    assert d < 1e-6 or abs(lat) == 90.0


@given(lats, lons)
@settings(max_examples=200, deadline=None)
def test_normalisation_is_idempotent(lat, lon):
    la, lo = normalise_positions(lat, lon)
    la2, lo2 = normalise_positions(la, lo)
    assert float(lo2) == float(lo) and float(la2) == float(la)


@given(st.floats(-180.0, 180.0, allow_nan=False), lats)
@settings(max_examples=200, deadline=None)
def test_in_range_longitudes_are_kept_bit_for_bit(lon, lat):
    if abs(lat) == 90.0:
        return
    _, lo = normalise_positions(lat, lon)
    assert float(lo) == lon


@given(lats, lons, lats, lons)
@settings(max_examples=200, deadline=None)
def test_too_close_is_symmetric_and_agrees_with_the_distance(lat_a, lon_a, lat_b, lon_b):
    s1, d1 = too_close([lat_a], [lon_a], [lat_b], [lon_b])
    s2, d2 = too_close([lat_b], [lon_b], [lat_a], [lon_a])
    assert bool(s1[0]) == bool(s2[0])
    assert abs(d1[0] - d2[0]) < 1e-6
    assert bool(s1[0]) == bool(d1[0] < MIN_PATH_M)


@given(lats, st.floats(-180.0, 0.0, allow_nan=False))
@settings(max_examples=200, deadline=None)
def test_a_point_and_its_0_360_twin_are_the_same_place(lat, lon):
    short, _ = too_close([lat], [lon], [lat], [lon + 360.0])
    assert short[0]


@given(lons, lons)
@settings(max_examples=100, deadline=None)
def test_every_longitude_at_a_pole_is_one_place(lon_a, lon_b):
    assert too_close([90.0], [lon_a], [90.0], [lon_b])[0][0]
    assert too_close([-90.0], [lon_a], [-90.0], [lon_b])[0][0]
