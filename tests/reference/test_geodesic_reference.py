"""Path length and azimuths against geographiclib (C. F. F. Karney, "Algorithms for
geodesics", J. Geodesy 87, 2013), an independent implementation from the registry."""

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from profiler.geodesy import path_lines, sample_paths

CASES = [
    (45.1021, 7.2113, 45.1830, 7.3050),
    (-30.426077, -20.973967, -30.403493, -20.916715),
    (36.48, -84.13, 36.566, -84.288),
    (59.9, 10.7, 60.4, 5.3),      # a long hop at high latitude
    (0.1, 179.9, -0.1, -179.95),  # across the antimeridian
]


@pytest.mark.parametrize("lat1, lon1, lat2, lon2", CASES)
def test_length_and_azimuths(lat1, lon1, lat2, lon2):
    g = Geodesic.WGS84.Inverse(lat1, lon1, lat2, lon2)
    lines = path_lines(lat1, lon1, lat2, lon2)
    assert lines.length_m[0] == pytest.approx(g["s12"], abs=1e-6)
    assert lines.azimuth_a_to_b_deg[0] == pytest.approx(g["azi1"] % 360, abs=1e-8)
    # geographiclib's azi2 is the forward azimuth at point 2; the back azimuth is azi2 + 180.
    assert lines.azimuth_b_to_a_deg[0] == pytest.approx((g["azi2"] + 180) % 360, abs=1e-8)


@pytest.mark.parametrize("lat1, lon1, lat2, lon2", CASES[:4])
def test_sample_points_on_the_geodesic(lat1, lon1, lat2, lon2):
    lat, lon, dist, n, _ = sample_paths(lat1, lon1, lat2, lon2, 250.0)
    line = Geodesic.WGS84.InverseLine(lat1, lon1, lat2, lon2)
    for j in np.linspace(0, n[0] - 1, 7).astype(int):
        p = line.Position(dist[0, j])
        assert lat[0, j] == pytest.approx(p["lat2"], abs=1e-9)
        assert ((lon[0, j] - p["lon2"] + 180) % 360 - 180) == pytest.approx(0.0, abs=1e-9)
