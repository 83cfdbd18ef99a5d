"""Invariants of the diffraction methods on random profiles (hypothesis).

Limits and symmetries that follow from ITU-R P.526-15 sections 3.2, 4.1 and
4.5 and from the geometry of each construction (Deygout 1966, Epstein and
Peterson 1953): a clear path costs nothing, one thin edge costs J(v), the
loss does not fall as an obstacle rises, and swapping the ends changes
nothing.
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from profiler.losses import terrain_diffraction as td
from profiler.losses.diffraction import fresnel_kirchhoff_v, knife_edge_loss_db
from profiler.losses.smooth_earth import radio_horizon_m, smooth_earth_loss_db
from profiler.units import EARTH_RADIUS_M

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
K_VALUES = st.sampled_from([0.5, 2.0 / 3.0, 1.0, 4.0 / 3.0, 2.0, float("inf")])
FREQ = st.floats(0.05, 40.0)


@st.composite
def profiles(draw, n_min=3, n_max=30):
    """One terrain profile: strictly rising distances from 0 to the path length, heights in m."""
    n = draw(st.integers(n_min, n_max))
    length = draw(st.floats(300.0, 40_000.0))
    cuts = sorted(draw(st.lists(st.floats(0.01, 0.99), min_size=n - 2, max_size=n - 2, unique=True)))
    d = np.array([0.0, *cuts, 1.0]) * length
    assume(np.all(np.diff(d) > 1e-3))
    base = draw(st.floats(0.0, 1500.0))
    heights = np.array(draw(st.lists(st.floats(-60.0, 60.0), min_size=n, max_size=n)))
    s = base + np.cumsum(heights) * draw(st.floats(0.0, 1.0))
    return d, s


def as_batch(d, s):
    inner = np.zeros(len(d), bool)
    inner[1:-1] = True
    return d[None], s[None], inner[None], np.array([d[-1]])


@SETTINGS
@given(profiles(), st.floats(1.0, 100.0), st.floats(1.0, 100.0), FREQ, K_VALUES)
def test_swapping_ends_gives_same_loss(profile, agl_a, agl_b, freq, k):
    d, s = profile
    dist, surf, inner, length = as_batch(d, s)
    fwd = td.diffraction_by_method(dist, surf, inner, s[0] + agl_a, s[-1] + agl_b, length, freq, k)
    dist_r, surf_r, inner_r, _ = as_batch(d[-1] - d[::-1], s[::-1])
    rev = td.diffraction_by_method(dist_r, surf_r, inner_r, s[-1] + agl_b, s[0] + agl_a, length, freq, k)
    for name in td.DIFFRACTION_METHODS:
        assert np.isfinite(fwd[name][0]) and fwd[name][0] >= 0.0
        np.testing.assert_allclose(rev[name], fwd[name], rtol=1e-7, atol=1e-7, err_msg=name)


@SETTINGS
@given(profiles(), FREQ, K_VALUES, st.floats(0.0, 3000.0))
def test_ample_clearance_costs_nothing(profile, freq, k, extra_m):
    """Antennas far above every point (beyond the first Fresnel zone by far): 0 dB for every method."""
    d, s = profile
    dist, surf, inner, length = as_batch(d, s)
    bulge = (length[0] / 2) ** 2 / (2 * min(k, 1e9) * EARTH_RADIUS_M)
    fresnel_m = 17.32 * np.sqrt(length[0] / 1000.0 / (4 * freq))  # ITU-R P.530 F1 at mid-path
    top = s.max() + bulge + 3 * fresnel_m + 20.0 + extra_m
    out = td.diffraction_by_method(dist, surf, inner, top, top, length, freq, k)
    for name in td.DIFFRACTION_METHODS:
        assert out[name][0] == 0.0, name


@SETTINGS
@given(st.floats(1_000.0, 40_000.0), st.floats(0.05, 0.95), st.floats(-30.0, 40.0), FREQ, K_VALUES)
def test_isolated_thin_edge_is_j_of_v(length_m, where, above_line_m, freq, k):
    """One thin edge on flat ground far below the path: knife-edge, Deygout, Epstein-Peterson = J(v)."""
    n = 81
    d = np.linspace(0.0, length_m, n)
    i = int(np.clip(round(where * (n - 1)), 1, n - 2))
    d1, d2 = d[i], length_m - d[i]
    antenna = 800.0
    bulge = 0.0 if np.isinf(k) else d1 * d2 / (2 * k * EARTH_RADIUS_M)
    s = np.zeros(n)
    s[i] = antenna + above_line_m - bulge
    expect = float(knife_edge_loss_db(fresnel_kirchhoff_v(above_line_m, d1, d2, freq)))
    dist, surf, inner, length = as_batch(d, s)
    for name in ("knife-edge", "deygout", "epstein-peterson"):
        got = td.diffraction_loss_db(name, dist, surf, inner, antenna, antenna, length, freq, k)[0]
        np.testing.assert_allclose(got, expect, atol=1e-6, err_msg=name)


@SETTINGS
@given(profiles(n_min=4), st.floats(1.0, 60.0), st.floats(1.0, 60.0), FREQ, K_VALUES,
       st.data())
def test_raising_a_sample_never_lowers_knife_edge_or_bullington(profile, agl_a, agl_b, freq, k, data):
    d, s = profile
    i = data.draw(st.integers(1, len(d) - 2))
    rise = data.draw(st.floats(0.0, 200.0))
    s2 = s.copy()
    s2[i] += rise
    for name in ("knife-edge", "bullington"):
        lo = td.diffraction_loss_db(name, *as_batch(d, s)[:3], s[0] + agl_a, s[-1] + agl_b, [d[-1]], freq, k)[0]
        hi = td.diffraction_loss_db(name, *as_batch(d, s2)[:3], s[0] + agl_a, s[-1] + agl_b, [d[-1]], freq, k)[0]
        assert hi >= lo - 1e-9, name


@SETTINGS
@given(st.floats(2_000.0, 40_000.0), st.floats(0.1, 0.9), FREQ, K_VALUES,
       st.lists(st.floats(-40.0, 60.0), min_size=2, max_size=8))
def test_rising_obstacle_on_rolling_ground(length_m, where, freq, k, tops):
    """One obstacle on rolling ground rising step by step.

    Knife-edge and Bullington never fall (one edge, or the crossing of the two
    horizon rays, can only rise), and delta-Bullington stays at or above
    Bullington.  Delta-Bullington itself may fall a little, because its fitted
    smooth surface is lowered under the rising obstacle (ITU-R P.526-15
    section 4.5.2); Deygout and Epstein-Peterson may fall because their choice
    of edges jumps.  The next test covers the case where all of them rise.
    """
    n = 101
    d = np.linspace(0.0, length_m, n)
    ground = 20.0 * np.sin(d / 900.0)
    i = int(round(where * (n - 1)))
    losses = []
    for top in sorted(tops):
        s = ground.copy()
        s[i] = 40.0 + top
        losses.append(td.diffraction_by_method(*as_batch(d, s)[:3], 40.0, 40.0, [length_m], freq, k))
    for name in ("knife-edge", "bullington"):
        seq = np.array([x[name][0] for x in losses])
        assert np.all(np.diff(seq) >= -1e-9), (name, seq)
    for x in losses:
        assert x["delta-bullington"][0] >= x["bullington"][0] - 1e-9


@SETTINGS
@given(st.floats(1_000.0, 40_000.0), st.floats(0.05, 0.95), FREQ, K_VALUES,
       st.lists(st.floats(-30.0, 40.0), min_size=2, max_size=8))
def test_rising_thin_edge_over_low_ground_raises_every_method(length_m, where, freq, k, tops):
    """A thin edge rising on flat ground far below the path: no method's loss falls."""
    n = 81
    d = np.linspace(0.0, length_m, n)
    i = int(np.clip(round(where * (n - 1)), 1, n - 2))
    seqs = {name: [] for name in td.DIFFRACTION_METHODS}
    for top in sorted(tops):
        s = np.zeros(n)
        s[i] = 800.0 + top
        out = td.diffraction_by_method(*as_batch(d, s)[:3], 800.0, 800.0, [length_m], freq, k)
        for name in td.DIFFRACTION_METHODS:
            seqs[name].append(out[name][0])
    for name, seq in seqs.items():
        assert np.all(np.diff(seq) >= -1e-9), (name, seq)


@SETTINGS
@given(st.floats(10.0, 200.0), st.floats(10.0, 200.0), st.sampled_from([2.0 / 3.0, 1.0, 4.0 / 3.0, 2.0]),
       st.floats(2.0, 30.0), st.floats(1.5, 4.0), st.floats(1.01, 1.5))
def test_smooth_earth_beyond_horizon_grows_with_distance_and_frequency(ha, hb, k, freq, beyond, step):
    """ITU-R P.526-15 section 3.2, first-term regime: past 1.5 radio horizons, antennas 10 m or more,
    2-30 GHz.  (Lower and lower, the height-gain G(Y) grows faster with frequency than the distance
    term, and the loss may fall with frequency: 5 m antennas at 1-1.5 GHz do so.)"""
    d = float(radio_horizon_m(ha, hb, k)) * beyond
    base = float(smooth_earth_loss_db(d, ha, hb, freq, k))
    assert base > 0.0
    assert float(smooth_earth_loss_db(d * step, ha, hb, freq, k)) > base
    assert float(smooth_earth_loss_db(d, ha, hb, freq * step, k)) > base


@settings(max_examples=25, deadline=None)
@given(st.lists(profiles(), min_size=2, max_size=6), FREQ, K_VALUES)
def test_batch_equals_each_path_alone(rows, freq, k):
    n = max(len(d) for d, _ in rows)
    dist = np.array([np.pad(d, (0, n - len(d)), mode="edge") for d, _ in rows])
    surf = np.array([np.pad(s, (0, n - len(s)), mode="edge") for _, s in rows])
    inner = np.array([[0 < j < len(d) - 1 for j in range(n)] for d, _ in rows])
    ha = surf[:, 0] + 10.0
    hb = surf[:, -1] + 25.0
    together = td.diffraction_by_method(dist, surf, inner, ha, hb, dist[:, -1], freq, k)
    for i, (d, s) in enumerate(rows):
        alone = td.diffraction_by_method(*as_batch(d, s)[:3], ha[i], hb[i], [d[-1]], freq, k)
        for name in td.DIFFRACTION_METHODS:
            np.testing.assert_allclose(together[name][i], alone[name][0], rtol=1e-12, atol=1e-12)
