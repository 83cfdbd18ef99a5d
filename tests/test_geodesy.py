import numpy as np
import pytest

from profiler.geodesy import path_lines, sample_counts, sample_paths


def test_sample_counts_respects_spacing():
    n = sample_counts(np.array([1000.0, 1001.0, 10.0]), 100.0)
    assert list(n) == [11, 12, 3]
    lengths = np.array([1000.0, 1001.0])
    assert np.all(lengths / (n[:2] - 1) <= 100.0)


def test_sample_paths_end_points_and_spacing():
    lat, lon, dist, n, lines = sample_paths([45.0, 45.0], [7.0, 7.0], [45.05, 45.001], [7.05, 7.001], 30.0)
    for i in range(2):
        k = n[i]
        assert lat[i, 0] == 45.0 and lon[i, 0] == 7.0
        assert dist[i, 0] == 0.0
        assert dist[i, k - 1] == pytest.approx(lines.length_m[i])
        steps = np.diff(dist[i, :k])
        assert np.all(steps <= 30.0 + 1e-9) and np.all(steps > 0)
        # Padding repeats site b.
        assert np.all(dist[i, k - 1 :] == dist[i, k - 1])
    assert lat[0, n[0] - 1] == 45.05 and lon[1, n[1] - 1] == 7.001


def test_samples_lie_on_the_geodesic():
    lat, lon, dist, n, lines = sample_paths([10.0], [20.0], [10.3], [20.4], 500.0)
    back = path_lines(np.full(n[0], 10.0)[1:], np.full(n[0], 20.0)[1:], lat[0, 1:], lon[0, 1:])
    assert np.allclose(back.length_m, dist[0, 1:], atol=1e-6)
    assert np.allclose(back.azimuth_a_to_b_deg, lines.azimuth_a_to_b_deg[0], atol=1e-7)


def test_azimuths_in_0_360():
    lines = path_lines([0.0, 0.0], [0.0, 0.0], [0.0, -1.0], [-1.0, 0.0])
    assert np.all((lines.azimuth_a_to_b_deg >= 0) & (lines.azimuth_a_to_b_deg < 360))
    assert lines.azimuth_a_to_b_deg == pytest.approx([270.0, 180.0])
    assert lines.azimuth_b_to_a_deg == pytest.approx([90.0, 0.0])
