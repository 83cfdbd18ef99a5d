"""Unit tests of profiler.losses.terrain_diffraction and profiler.losses.smooth_earth."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.errors import InputError
from profiler.losses import terrain_diffraction as td
from profiler.losses.multiple_edges import deygout_edges, edge_arrays
from profiler.losses.knife_edge import fresnel_kirchhoff_v, knife_edge_loss_db
from profiler.losses.smooth_earth import (
    GroundConstants,
    first_term_loss_db,
    radio_horizon_m,
    resolve_ground,
    resolve_polarisation,
    smooth_earth_loss_db,
    surface_admittance_k,
)
from profiler.units import EARTH_RADIUS_M


def batch(rows, length_m=None):
    """Pad rows of (distance_m, surface_m) to one (P, N) batch in the engine's convention."""
    n = max(len(d) for d, _ in rows)
    dist = np.empty((len(rows), n))
    surf = np.empty((len(rows), n))
    inner = np.zeros((len(rows), n), bool)
    for i, (d, s) in enumerate(rows):
        m = len(d)
        dist[i, :m], surf[i, :m] = d, s
        dist[i, m:], surf[i, m:] = d[-1], s[-1]
        inner[i, 1 : m - 1] = True
    return dist, surf, inner, dist[:, -1].copy()


def random_rows(rng, count, n_min=3, n_max=40):
    rows = []
    for _ in range(count):
        n = int(rng.integers(n_min, n_max))
        length = rng.uniform(500.0, 40_000.0)
        d = np.sort(rng.uniform(0.0, length, n))
        d[0], d[-1] = 0.0, length
        s = rng.uniform(0.0, 400.0) + np.cumsum(rng.normal(0.0, 15.0, n))
        rows.append((d, s))
    return rows


def args_for(rows, agl_a, agl_b):
    dist, surf, inner, length = batch(rows)
    return dist, surf, inner, surf[:, 0] + agl_a, surf[:, -1] + agl_b, length


# --- method names ---------------------------------------------------------


def test_unknown_method_lists_valid_names():
    dist, surf, inner, length = batch([(np.array([0.0, 500.0, 1000.0]), np.zeros(3))])
    with pytest.raises(InputError) as err:
        td.diffraction_loss_db("fresnel-magic", dist, surf, inner, 10.0, 10.0, length, 1.0, 4 / 3)
    for name in td.DIFFRACTION_METHODS:
        assert name in str(err.value)


def test_default_method_is_delta_bullington_and_listed():
    assert td.DEFAULT_DIFFRACTION_METHOD == "delta-bullington"
    assert set(td.DIFFRACTION_METHODS) >= {"knife-edge", "deygout", "bullington", "delta-bullington"}


@pytest.mark.parametrize("alias, name", [("Knife_Edge", "knife-edge"), (" DEYGOUT ", "deygout"),
                                         ("delta_bullington", "delta-bullington")])
def test_method_names_normalised(alias, name):
    assert td.resolve_method(alias) == name


# --- bad inputs -----------------------------------------------------------


def _one_edge(height=30.0):
    d = np.linspace(0.0, 10_000.0, 101)
    s = np.zeros(101)
    s[50] = height
    return batch([(d, s)])


@pytest.mark.parametrize("field, value, words", [
    ("k", 0.0, "k-factor"), ("k", -1.0, "k-factor"), ("freq", 0.0, "frequency"),
    ("freq", np.nan, "frequency"), ("length", -5.0, "path length"),
])
def test_bad_scalars_raise_input_error(field, value, words):
    dist, surf, inner, length = _one_edge()
    kw = {"freq": 1.0, "k": 4 / 3, "length": length}
    kw[field] = value
    with pytest.raises(InputError, match=words):
        td.diffraction_loss_db("bullington", dist, surf, inner, 10.0, 10.0, kw["length"], kw["freq"], kw["k"])


def test_shape_mismatch_raises():
    dist, surf, inner, length = _one_edge()
    with pytest.raises(InputError, match="shape"):
        td.diffraction_loss_db("knife-edge", dist, surf[:, :-1], inner, 10.0, 10.0, length, 1.0, 4 / 3)
    with pytest.raises(InputError, match="2 paths|1 paths"):
        td.diffraction_loss_db("knife-edge", dist, surf, inner, [10.0, 11.0], 10.0, length, 1.0, 4 / 3)


def test_nan_height_names_path_and_distance():
    dist, surf, inner, length = _one_edge()
    surf[0, 30] = np.nan
    with pytest.raises(InputError, match=r"path 0 .*3\.000 km"):
        td.diffraction_loss_db("deygout", dist, surf, inner, 10.0, 10.0, length, 1.0, 4 / 3)


def test_bad_ground_and_polarisation():
    with pytest.raises(InputError, match="land"):
        resolve_ground("swamp")
    with pytest.raises(InputError, match="horizontal"):
        resolve_polarisation("circular")
    with pytest.raises(InputError):
        GroundConstants(0.5, 0.01)
    assert resolve_polarisation("V") == "vertical"
    dist, surf, inner, length = _one_edge()
    with pytest.raises(InputError):
        td.diffraction_loss_db("delta-bullington", dist, surf, inner, 10.0, 10.0, length, 1.0, 4 / 3, ground="lava")


# --- knife-edge -----------------------------------------------------------


def test_knife_edge_matches_direct_formula_with_bulge():
    """Largest v over interior samples, heights above the antenna line plus d1 d2/(2 k a)."""
    rng = np.random.default_rng(7)
    rows = random_rows(rng, 20)
    dist, surf, inner, ha, hb, length = args_for(rows, 15.0, 25.0)
    freq, k = 5.8, 4 / 3
    got = td.diffraction_loss_db("knife-edge", dist, surf, inner, ha, hb, length, freq, k)
    for i, (d, s) in enumerate(rows):
        d1, d2 = d[1:-1], length[i] - d[1:-1]
        line = ha[i] + (hb[i] - ha[i]) * d1 / length[i]
        h = s[1:-1] + d1 * d2 / (2 * k * EARTH_RADIUS_M) - line
        v = fresnel_kirchhoff_v(h, d1, d2, freq).max() if len(d1) else -np.inf
        assert got[i] == pytest.approx(float(knife_edge_loss_db(v)), abs=1e-9)


def test_no_interior_samples_gives_zero():
    dist, surf, inner, length = batch([(np.array([0.0, 5000.0]), np.array([100.0, 100.0]))])
    out = td.diffraction_by_method(dist, surf, inner, 110.0, 110.0, length, 2.0, 4 / 3)
    for name in ("knife-edge", "deygout", "epstein-peterson", "bullington"):
        assert out[name][0] == 0.0


# --- batches --------------------------------------------------------------


def test_batch_equals_rows_alone_and_padding_is_harmless(monkeypatch):
    rng = np.random.default_rng(11)
    rows = random_rows(rng, 12)
    args = args_for(rows, 20.0, 8.0)
    together = td.diffraction_by_method(*args, 3.0, 4 / 3)
    monkeypatch.setattr(td, "_BLOCK_ELEMENTS", 64)  # forces many small blocks
    blocks = td.diffraction_by_method(*args, 3.0, 4 / 3)
    for i, row in enumerate(rows):
        alone = td.diffraction_by_method(*args_for([row], 20.0, 8.0), 3.0, 4 / 3)
        for name in td.DIFFRACTION_METHODS:
            assert together[name][i] == pytest.approx(alone[name][0], abs=1e-9), name
            assert blocks[name][i] == pytest.approx(alone[name][0], abs=1e-9), name


def test_per_path_frequency_and_k():
    dist, surf, inner, length = _one_edge()
    two = [np.vstack([a, a]) for a in (dist, surf, inner)]
    out = td.diffraction_loss_db("bullington", *two, [10.0, 10.0], [10.0, 10.0], [length[0]] * 2,
                                 [1.0, 10.0], [4 / 3, np.inf])
    assert out[0] == pytest.approx(td.diffraction_loss_db("bullington", dist, surf, inner, 10.0, 10.0,
                                                          length, 1.0, 4 / 3)[0])
    assert out[1] > out[0]


def test_by_method_matches_single_calls():
    rng = np.random.default_rng(3)
    args = args_for(random_rows(rng, 8), 12.0, 30.0)
    every = td.diffraction_by_method(*args, 0.9, 1.0, polarisation="vertical", ground="sea")
    assert tuple(every) == td.DIFFRACTION_METHODS
    for name in td.DIFFRACTION_METHODS:
        one = td.diffraction_loss_db(name, *args, 0.9, 1.0, polarisation="vertical", ground="sea")
        np.testing.assert_allclose(every[name], one, atol=1e-12)
    np.testing.assert_allclose(td.bullington_loss_db(*args, 0.9, 1.0), every["bullington"])
    np.testing.assert_allclose(td.deygout_loss_db(*args, 0.9, 1.0), every["deygout"])


# --- Deygout and Epstein-Peterson ----------------------------------------


def _two_edges(freq_ghz=1.0):
    """Flat earth, 12 km, antennas 10 m, edges 25 m at 4 km and 8 km."""
    d = np.linspace(0.0, 12_000.0, 121)
    s = np.zeros(121)
    s[40] = s[80] = 25.0
    return batch([(d, s)]), freq_ghz


def test_deygout_two_edges_by_hand():
    (dist, surf, inner, length), f = _two_edges()
    got = td.diffraction_loss_db("deygout", dist, surf, inner, 10.0, 10.0, length, f, np.inf)[0]
    # Main edge: both have v = 15 sqrt(2/lam (1/4000 + 1/8000)); the first (at 4 km) is taken.
    vp = fresnel_kirchhoff_v(15.0, 4000.0, 8000.0, f)
    # Side b: edge at 8 km against the line from the main edge top (25 m at 4 km) to antenna b (10 m).
    line = 25.0 + (10.0 - 25.0) * 4000.0 / 8000.0
    vr = fresnel_kirchhoff_v(25.0 - line, 4000.0, 4000.0, f)
    expect = knife_edge_loss_db(vp) + knife_edge_loss_db(vr)  # side a is clear ground
    assert got == pytest.approx(float(expect), abs=1e-9)


def test_epstein_peterson_two_edges_by_hand():
    (dist, surf, inner, length), f = _two_edges()
    got = td.diffraction_loss_db("epstein-peterson", dist, surf, inner, 10.0, 10.0, length, f, np.inf)[0]
    # Each edge against the line joining its neighbours: a->edge2 for edge 1, edge1->b for edge 2.
    v1 = fresnel_kirchhoff_v(25.0 - (10.0 + 15.0 * 4000.0 / 8000.0), 4000.0, 4000.0, f)
    v2 = fresnel_kirchhoff_v(25.0 - (25.0 - 15.0 * 4000.0 / 8000.0), 4000.0, 4000.0, f)
    assert got == pytest.approx(float(knife_edge_loss_db(v1) + knife_edge_loss_db(v2)), abs=1e-9)
    dey = td.diffraction_loss_db("deygout", dist, surf, inner, 10.0, 10.0, length, f, np.inf)[0]
    knife = td.diffraction_loss_db("knife-edge", dist, surf, inner, 10.0, 10.0, length, f, np.inf)[0]
    assert knife < got < dey  # two equal edges: E-P below Deygout (common practice)


def test_deygout_line_of_sight_equals_knife_edge():
    d = np.linspace(0.0, 10_000.0, 101)
    s = 5.0 * np.sin(d / 700.0)
    args = args_for([(d, s)], 12.0, 12.0)
    out = td.diffraction_by_method(*args, 2.0, 4 / 3)
    assert 0.0 < out["knife-edge"][0] < 6.0
    assert out["deygout"][0] == pytest.approx(out["knife-edge"][0], abs=1e-12)
    assert out["epstein-peterson"][0] == pytest.approx(out["knife-edge"][0], abs=1e-12)


def _hills(dip_m, freq_ghz=5.8):
    """Flat earth, 10 km, antennas 10 m, 1 m samples: a rounded summit 40 m high at 5 km
    (a parabola 1.2 km wide) and a second summit 30 m high at 7.5 km, the ground between them
    falling to ``dip_m`` below the second summit's top."""
    d = np.arange(0.0, 10_001.0, 1.0)
    main = 40.0 - 40.0 * ((d - 5000.0) / 600.0) ** 2
    second = 30.0 - 30.0 * ((d - 7500.0) / 600.0) ** 2
    saddle = np.where((d > 5000.0) & (d < 7500.0), 30.0 - dip_m, 0.0)
    s = np.maximum.reduce([main, second, saddle])
    return args_for([(d, s)], 10.0, 10.0), freq_ghz


def test_a_densely_sampled_rounded_summit_is_one_edge():
    # One rounded summit at 1 m spacing: its flanks are not further edges (issue 10 item 7).
    d = np.arange(0.0, 10_001.0, 1.0)
    s = np.maximum(40.0 - 40.0 * ((d - 4000.0) / 800.0) ** 2, 0.0)
    args = args_for([(d, s)], 10.0, 10.0)
    out = td.diffraction_by_method(*args, 5.8, np.inf)
    assert out["knife-edge"][0] > 20.0
    assert out["deygout"][0] == pytest.approx(out["knife-edge"][0], abs=1e-12)
    assert out["epstein-peterson"][0] == pytest.approx(out["knife-edge"][0], abs=1e-12)
    assert out["deygout"][0] <= out["bullington"][0]


def test_an_isolated_thin_edge_on_a_dense_profile_is_j_of_v():
    # ITU-R P.526-15 section 4.1: a single thin edge costs J(v), whatever method builds on it.
    d = np.arange(0.0, 8_001.0, 1.0)
    s = np.zeros_like(d)
    s[3000] = 30.0
    args = args_for([(d, s)], 10.0, 10.0)
    out = td.diffraction_by_method(*args, 2.0, np.inf)
    expect = float(knife_edge_loss_db(fresnel_kirchhoff_v(20.0, 3000.0, 5000.0, 2.0)))
    for m in ("knife-edge", "deygout", "epstein-peterson"):
        assert out[m][0] == pytest.approx(expect, abs=1e-9), m


@pytest.mark.parametrize("dip_m, distinct", [(0.5, False), (25.0, True)])
def test_a_second_summit_counts_only_beyond_a_dip(dip_m, distinct):
    (dist, surf, inner, ha, hb, length), f = _hills(dip_m)
    out = td.diffraction_by_method(dist, surf, inner, ha, hb, length, f, np.inf)
    parts = deygout_edges(edge_arrays(td.PathGeometry(dist, surf, inner, ha, hb, length, f, np.inf)))
    assert int(parts.ip[0]) == 5000
    if distinct:  # a valley 25 m deep between the summits: the second one is an edge of its own
        assert 7300 < int(parts.ir[0]) < 7700
        assert out["deygout"][0] > out["knife-edge"][0] + 1.0
    else:  # a 0.5 m dip (0.6 F1 is about 5 m here): one summit, its flanks are not edges
        assert not np.isfinite(parts.vr[0])
        assert out["deygout"][0] == pytest.approx(out["knife-edge"][0], abs=1e-12)


# --- Bullington and delta-Bullington --------------------------------------


def test_bullington_line_of_sight_uses_largest_v():
    d = np.linspace(0.0, 10_000.0, 101)
    s = np.zeros(101)
    s[50] = 5.0  # below the 10 m line: v < 0
    dist, surf, inner, length = batch([(d, s)])
    v = fresnel_kirchhoff_v(-5.0, 5000.0, 5000.0, 1.0)
    luc = float(knife_edge_loss_db(v))
    assert luc > 0.0
    got = td.bullington_loss_db(dist, surf, inner, 10.0, 10.0, length, 1.0, np.inf)[0]
    assert got == pytest.approx(luc + (1 - np.exp(-luc / 6)) * (10 + 0.02 * 10.0), abs=1e-9)


def test_smooth_surface_of_a_straight_slope_is_that_slope():
    d = np.linspace(0.0, 8000.0, 81)
    s = 100.0 + 0.01 * d
    dist, surf, inner, length = batch([(d, s)])
    hst, hsr = td.smooth_surface_heights_m(dist, surf, inner, 500.0, 500.0, length)
    assert hst[0] == pytest.approx(100.0, abs=1e-9)
    assert hsr[0] == pytest.approx(180.0, abs=1e-9)


def test_smooth_surface_lowered_under_obstacle_and_capped_by_ends():
    d = np.linspace(0.0, 8000.0, 81)
    s = np.full(81, 50.0)
    s[40] = 200.0  # pokes above the 110 m antenna line
    dist, surf, inner, length = batch([(d, s)])
    hst, hsr = td.smooth_surface_heights_m(dist, surf, inner, 110.0, 110.0, length)
    assert hst[0] <= 50.0 and hsr[0] <= 50.0
    assert hst[0] == pytest.approx(hsr[0])  # symmetric profile


def test_delta_bullington_never_below_bullington():
    rng = np.random.default_rng(5)
    args = args_for(random_rows(rng, 30), 10.0, 40.0)
    out = td.diffraction_by_method(*args, 1.5, 4 / 3)
    assert np.all(out["delta-bullington"] >= out["bullington"] - 1e-12)


def test_delta_bullington_on_sea_level_sphere_is_max_of_bullington_and_smooth_earth():
    """Profile on a sea-level sphere: the smooth surface is the profile, so Lbulls = Lbulla."""
    d = np.linspace(0.0, 60_000.0, 601)
    args = args_for([(d, np.zeros(601))], 20.0, 20.0)
    out = td.diffraction_by_method(*args, 2.0, 4 / 3)
    sph = smooth_earth_loss_db(60_000.0, 20.0, 20.0, 2.0, 4 / 3)
    assert sph > 10.0  # beyond the radio horizon (about 37 km)
    assert out["delta-bullington"][0] == pytest.approx(max(out["bullington"][0], float(sph)), abs=1e-9)


def test_polarisation_and_ground_matter_only_to_delta_bullington():
    d = np.linspace(0.0, 60_000.0, 601)
    args = args_for([(d, np.zeros(601))], 20.0, 20.0)
    land = td.diffraction_by_method(*args, 0.03, 4 / 3)
    sea_v = td.diffraction_by_method(*args, 0.03, 4 / 3, polarisation="vertical", ground="sea")
    assert sea_v["delta-bullington"][0] != pytest.approx(land["delta-bullington"][0], abs=5.0)
    assert sea_v["bullington"][0] == land["bullington"][0]


# --- validity warnings ----------------------------------------------------


def test_no_warnings_on_ordinary_path():
    dist, surf, inner, length = _one_edge()
    for name in td.DIFFRACTION_METHODS:
        assert td.diffraction_validity_warnings(name, dist, surf, inner, 10.0, 10.0, length, 6.0, 4 / 3) == [()]


def test_frequency_outside_range_warns_for_bullington_only():
    dist, surf, inner, length = _one_edge()
    res = td.diffraction_with_warnings("delta-bullington", dist, surf, inner, 10.0, 10.0, length, 80.0, 4 / 3)
    assert len(res.warnings) == 1 and "80 GHz" in res.warnings[0][0]
    assert np.isfinite(res.loss_db[0])
    assert td.diffraction_validity_warnings("knife-edge", dist, surf, inner, 10.0, 10.0, length, 80.0, 4 / 3) == [()]


def test_steep_obstacle_and_buried_antenna_warn():
    d = np.linspace(0.0, 1000.0, 11)
    s = np.zeros(11)
    s[5] = 300.0
    dist, surf, inner, length = batch([(d, s), (d, np.full(11, 40.0))])
    warn = td.diffraction_validity_warnings("deygout", dist, surf, inner, [10.0, 30.0], [10.0, 50.0],
                                            length, 2.0, 4 / 3)
    assert any("steep obstacle 0.500 km" in m for m in warn[0])
    assert any("antenna a" in m and "below the surface" in m for m in warn[1])
    assert not any("antenna b" in m for m in warn[1])


# --- smooth earth ---------------------------------------------------------


def test_smooth_earth_zero_with_ample_clearance():
    assert smooth_earth_loss_db(10_000.0, 200.0, 200.0, 5.0, 4 / 3) == 0.0


def test_smooth_earth_continuous_at_radio_horizon():
    """At d = dlos the modified radius aem equals ae (ITU-R P.526-15 section 3.2) [computed]."""
    dlos = float(radio_horizon_m(15.0, 60.0, 4 / 3))
    inside, outside = smooth_earth_loss_db([dlos * (1 - 1e-9), dlos * (1 + 1e-9)], 15.0, 60.0, 3.0, 4 / 3)
    assert inside == pytest.approx(outside, abs=1e-3)
    assert inside > 5.0


def test_first_term_matches_published_mhz_form():
    """ITU-R P.526-15 section 3.1.1 MHz form: X = 2.188 beta f^(1/3) ae^(-2/3) d, Y = 9.575e-3 beta f^(2/3) ae^(-1/3) h
    [read]; the MHz form of K (0.36, 18000 s / f) is converted from the GHz form [computed]."""
    f_mhz, ae_km, d_km, h1, h2 = 900.0, 8495.0, 70.0, 30.0, 80.0
    er, sigma = 22.0, 0.003
    k_h = 0.36 * (ae_km * f_mhz) ** (-1 / 3) * ((er - 1) ** 2 + (18000 * sigma / f_mhz) ** 2) ** (-0.25)
    beta = (1 + 1.6 * k_h**2 + 0.67 * k_h**4) / (1 + 4.5 * k_h**2 + 1.53 * k_h**4)
    x = 2.188 * beta * f_mhz ** (1 / 3) * ae_km ** (-2 / 3) * d_km
    y1 = 9.575e-3 * beta * f_mhz ** (2 / 3) * ae_km ** (-1 / 3) * h1
    y2 = 9.575e-3 * beta * f_mhz ** (2 / 3) * ae_km ** (-1 / 3) * h2
    fx = 11 + 10 * np.log10(x) - 17.6 * x if x >= 1.6 else -20 * np.log10(x) - 5.6488 * x**1.425

    def g(y):
        b = beta * y
        val = 17.6 * (b - 1.1) ** 0.5 - 5 * np.log10(b - 1.1) - 8 if b > 2 else 20 * np.log10(b + 0.1 * b**3)
        return max(val, 2 + 20 * np.log10(k_h))

    expect = -fx - g(y1) - g(y2)
    got = first_term_loss_db(d_km * 1000, h1, h2, f_mhz / 1000, ae_km * 1000)
    assert float(got) == pytest.approx(expect, rel=1e-9)
    assert float(surface_admittance_k(ae_km, f_mhz / 1000)) == pytest.approx(k_h, rel=1e-9)


def test_vertical_admittance_exceeds_horizontal():
    kh = surface_admittance_k(8495.0, 0.1, polarisation="horizontal", ground="sea")
    kv = surface_admittance_k(8495.0, 0.1, polarisation="vertical", ground="sea")
    assert kv > 10 * kh
