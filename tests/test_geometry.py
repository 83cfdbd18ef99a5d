import numpy as np
import pytest

from profiler import _compiled
from profiler.geometry import clearance, earth_bulge_m, fresnel_radius_m, line_height_m


def test_bulge_zero_at_ends_and_symmetric():
    assert earth_bulge_m(0.0, 10_000.0, 4 / 3) == 0.0
    assert earth_bulge_m(3_000.0, 7_000.0, 1.0) == pytest.approx(earth_bulge_m(7_000.0, 3_000.0, 1.0))


def test_bulge_scales_inversely_with_k():
    assert earth_bulge_m(5e3, 5e3, 2 / 3) == pytest.approx(2 * earth_bulge_m(5e3, 5e3, 4 / 3))


def test_fresnel_radius_zero_at_ends_max_mid():
    d1 = np.linspace(0, 10_000, 101)
    r = fresnel_radius_m(d1, 10_000 - d1, 5.0)
    assert r[0] == 0 and r[-1] == 0
    assert np.argmax(r) == 50


def test_line_height():
    h = line_height_m(np.array([[0.0, 500.0, 1000.0]]), np.array([1000.0]), np.array([10.0]), np.array([30.0]))
    assert h.tolist() == [[10.0, 20.0, 30.0]]


def test_clearance_flat_ground_matches_hand_computation():
    length = 10_000.0
    d = np.linspace(0, length, 11)[None, :]
    surface = np.zeros_like(d)
    interior = np.zeros_like(d, dtype=bool)
    interior[:, 1:-1] = True
    c = clearance(d, surface, interior, np.array([length]), np.array([50.0]), np.array([50.0]), 10.0, 4 / 3)
    expected_gap = 50.0 - earth_bulge_m(d, length - d, 4 / 3)
    assert np.allclose(c.clearance_m, expected_gap)
    # Worst fraction on flat ground with equal masts is at the midpoint.
    assert c.worst_distance_m[0] == pytest.approx(5_000.0)
    assert c.line_of_sight[0]


def test_clearance_detects_obstruction():
    d = np.linspace(0, 1_000, 11)[None, :]
    surface = np.zeros_like(d)
    surface[0, 4] = 40.0
    interior = np.zeros_like(d, dtype=bool)
    interior[:, 1:-1] = True
    c = clearance(d, surface, interior, np.array([1_000.0]), np.array([30.0]), np.array([30.0]), 5.0, 4 / 3)
    assert not c.line_of_sight[0]
    assert c.worst_index[0] == 4
    assert c.worst_clearance_m[0] == pytest.approx(30.0 - 40.0 - earth_bulge_m(400.0, 600.0, 4 / 3))
    assert c.worst_f1_fraction[0] < 0


@pytest.mark.parametrize("k", [4.0 / 3.0, 2.0 / 3.0, np.inf])
def test_compiled_clearance_pass_gives_the_same_bits_as_the_full_arrays(k, monkeypatch):
    """Large batches take one compiled pass (worst point, line of sight, shortfall); small ones use
    whole arrays.  Same numbers to the bit, and the lazily made arrays are those of the small path."""
    from .test_terrain_diffraction import batch, random_rows

    rng = np.random.default_rng(11)
    dist, surf, inner, length = batch(random_rows(rng, 400, n_min=3, n_max=90))
    ha = surf[:, 0] + rng.choice([1.0, 10.0, 60.0, 300.0], 400)
    hb = surf[:, -1] + rng.choice([1.0, 10.0, 60.0, 300.0], 400)
    freq = rng.choice([2.4, 5.8, 23.0], 400)
    out = {}
    for threshold in (10**12, 1):
        monkeypatch.setattr(_compiled, "NUMBA_MIN_SAMPLES", threshold)
        out[threshold] = clearance(dist, surf, inner, length, ha, hb, freq, k, 0.6)
    small, large = out[10**12], out[1]
    for name in ("worst_index", "worst_f1_fraction", "worst_clearance_m", "worst_distance_m", "line_of_sight",
                 "shortfall_m", "f1_m", "clearance_m", "f1_fraction", "bulge_m", "line_m"):
        assert np.array_equal(getattr(small, name), getattr(large, name)), name
    # The shortfall is the largest 0.6 F1 - clearance over the interior: some paths lack it, some do not.
    ref = np.max(np.where(inner, 0.6 * small.f1_m - small.clearance_m, -np.inf), axis=1)
    assert np.array_equal(large.shortfall_m, ref)
    assert np.any(ref > 0) and np.any(ref < 0) and np.any(~large.line_of_sight) and np.any(large.line_of_sight)
