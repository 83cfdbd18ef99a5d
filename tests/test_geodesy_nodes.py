"""The interpolated geodesic of profiler.geodesy against geographiclib (Karney's exact algorithms)."""

from __future__ import annotations

import numpy as np
from geographiclib.geodesic import Geodesic

from profiler.geodesy import NODE_SPACING_M, sample_paths


def _max_error_m(lat_a, lon_a, lat_b, lon_b, spacing_m):
    lat, lon, dist, n, _ = sample_paths(lat_a, lon_a, lat_b, lon_b, spacing_m)
    worst = 0.0
    for i in range(len(lat_a)):
        inv = Geodesic.WGS84.Inverse(lat_a[i], lon_a[i], lat_b[i], lon_b[i])
        line = Geodesic.WGS84.Line(lat_a[i], lon_a[i], inv["azi1"])
        for j in range(0, int(n[i]), 7):
            p = line.Position(dist[i, j])
            err = Geodesic.WGS84.Inverse(p["lat2"], p["lon2"], lat[i, j], lon[i, j])["s12"]
            worst = max(worst, err)
    return worst


def test_interpolated_samples_lie_on_the_geodesic_within_a_centimetre():
    # Karney (2013), J. Geodesy 87: geographiclib is accurate to nanometres; the
    # interpolation must stay well under a metre (here: under 1 cm).
    rng = np.random.default_rng(11)
    k = 25
    lat_a = rng.uniform(-80, 80, k)
    lon_a = rng.uniform(-180, 180, k)
    az = rng.uniform(0, 360, k)
    dist = rng.uniform(500, 120_000, k)
    ends = [Geodesic.WGS84.Direct(la, lo, a, d) for la, lo, a, d in zip(lat_a, lon_a, az, dist)]
    lat_b = np.array([e["lat2"] for e in ends])
    lon_b = np.array([e["lon2"] for e in ends])
    assert _max_error_m(lat_a, lon_a, lat_b, lon_b, 250.0) < 0.01


def test_path_across_the_antimeridian():
    err = _max_error_m(np.array([10.0]), np.array([179.8]), np.array([10.2]), np.array([-179.7]), 100.0)
    assert err < 0.01
    lat, lon, *_ = sample_paths([10.0], [179.8], [10.2], [-179.7], 100.0)
    assert np.all((lon >= -180) & (lon <= 180))


def test_polar_path_is_sampled_exactly():
    err = _max_error_m(np.array([89.5]), np.array([0.0]), np.array([89.6]), np.array([170.0]), 200.0)
    assert err < 1e-6


def test_end_points_are_the_sites_and_spacing_is_respected():
    lat, lon, dist, n, lines = sample_paths([46.1, 46.2], [10.1, 10.3], [46.5, 46.25], [10.6, 10.31], 30.0)
    rows = np.arange(2)
    assert np.array_equal(lat[rows, n - 1], [46.5, 46.25])
    assert np.array_equal(lon[:, 0], [10.1, 10.3])
    assert np.all(np.diff(dist[0, : n[0]]) <= 30.0 + 1e-9)
    assert lines.length_m[0] > 2 * NODE_SPACING_M  # more than one interpolation segment
