"""Invariants of the drawn link lines (hypothesis): ends kept, steps of at most 1 km, cut only at +-180."""

from __future__ import annotations

import numpy as np
from geographiclib.geodesic import Geodesic
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.io.geolines import MAX_STEP_M, geodesic_parts

WGS84 = Geodesic.WGS84


@settings(max_examples=60, deadline=None)
@given(lat=st.floats(-75.0, 75.0), lon=st.floats(-180.0, 180.0), azimuth=st.floats(0.0, 360.0),
       length_m=st.floats(1.0, 150_000.0), near_180=st.booleans())
def test_parts_keep_the_ends_step_under_1_km_and_stay_in_range(lat, lon, azimuth, length_m, near_180):
    if near_180:  # start within a link's length of the antimeridian, heading across it half the time
        lon = 179.9 if azimuth < 180 else -179.9
    end = WGS84.Direct(lat, lon, azimuth, length_m)
    (parts,) = geodesic_parts(lon, lat, end["lon2"], end["lat2"])
    assert 1 <= len(parts) <= 2
    assert tuple(parts[0][0]) == (lon, lat)
    assert np.allclose(parts[-1][-1], (end["lon2"], end["lat2"]), atol=1e-12)
    for part in parts:
        assert (np.abs(part[:, 0]) <= 180.0).all()
        assert (np.abs(np.diff(part[:, 0])) < 180.0).all()  # no part jumps across the map
        steps = [WGS84.Inverse(part[j, 1], part[j, 0], part[j + 1, 1], part[j + 1, 0])["s12"]
                 for j in range(len(part) - 1)]
        assert max(steps) <= MAX_STEP_M + 1e-6
    if len(parts) == 2:
        assert abs(parts[0][-1, 0]) == 180.0 and parts[1][0, 0] == -parts[0][-1, 0]
        assert parts[0][-1, 1] == parts[1][0, 1]
