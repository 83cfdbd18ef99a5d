"""Invariants of the geometry, losses and sampling on random inputs (hypothesis)."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from profiler.budget import Radio
from profiler.geodesy import PathLines
from profiler.geometry import clearance, earth_bulge_m
from profiler.losses.diffraction import knife_edge_loss_db
from profiler.losses.free_space import free_space_loss_db
from profiler.losses.terrain_diffraction import diffraction_loss_db
from profiler.profile import Profiles
from profiler.terrain import bilinear_gather

heights = arrays(np.float64, st.integers(3, 60), elements=st.floats(0, 500))
mast = st.floats(0.0, 100.0)
freq = st.floats(0.1, 80.0)
kf = st.floats(0.3, 5.0)
length = st.floats(200.0, 80_000.0)


def _profiles(surface: np.ndarray, length_m: float) -> Profiles:
    n = surface.size
    d = np.linspace(0.0, length_m, n)[None, :]
    return Profiles(
        lat_deg=np.zeros_like(d), lon_deg=np.zeros_like(d), distance_m=d, ground_m=surface[None, :],
        clutter_m=np.zeros_like(d), n_samples=np.array([n]),
        lines=PathLines(np.array([length_m]), np.zeros(1), np.zeros(1)), spacing_m=np.array([length_m / (n - 1)]),
        problems=(None,),
    )


def _dominant_edge_loss_db(p, antenna_a_amsl_m, antenna_b_amsl_m, freq_ghz, clear):
    """Single knife edge at the point of largest v (ITU-R P.526-15 section 4.1), at ``clear.k``."""
    return diffraction_loss_db("knife-edge", p.distance_m, p.surface_m, p.interior, antenna_a_amsl_m,
                               antenna_b_amsl_m, p.length_m, float(freq_ghz), clear.k)


def _evaluate(surface, length_m, ha, hb, f, k):
    p = _profiles(surface, length_m)
    c = clearance(p.distance_m, p.surface_m, p.interior, p.length_m, np.array([surface[0] + ha]),
                  np.array([surface[-1] + hb]), f, k)
    loss = _dominant_edge_loss_db(p, np.array([surface[0] + ha]), np.array([surface[-1] + hb]), f, c)
    return c, loss


@settings(max_examples=60, deadline=None)
@given(heights, length, mast, mast, freq, kf)
def test_swapping_ends_changes_nothing(surface, length_m, ha, hb, f, k):
    c1, l1 = _evaluate(surface, length_m, ha, hb, f, k)
    c2, l2 = _evaluate(surface[::-1].copy(), length_m, hb, ha, f, k)
    assert np.isclose(c1.worst_f1_fraction[0], c2.worst_f1_fraction[0], rtol=1e-9, atol=1e-9)
    assert c1.line_of_sight[0] == c2.line_of_sight[0] or abs(c1.worst_clearance_m[0]) < 1e-9
    assert np.isclose(l1[0], l2[0], atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(heights, length, mast, mast, st.floats(0.1, 50.0), freq, kf)
def test_raising_a_mast_never_reduces_clearance_or_adds_loss(surface, length_m, ha, hb, extra, f, k):
    c1, l1 = _evaluate(surface, length_m, ha, hb, f, k)
    c2, l2 = _evaluate(surface, length_m, ha + extra, hb, f, k)
    assert c2.worst_f1_fraction[0] >= c1.worst_f1_fraction[0] - 1e-9
    assert l2[0] <= l1[0] + 1e-9


@settings(max_examples=60, deadline=None)
@given(heights, length, mast, mast, freq, st.floats(0.3, 2.0), st.floats(1.01, 4.0))
def test_lower_k_never_helps(surface, length_m, ha, hb, f, k, factor):
    c_low, l_low = _evaluate(surface, length_m, ha, hb, f, k)
    c_high, l_high = _evaluate(surface, length_m, ha, hb, f, k * factor)
    assert c_high.worst_f1_fraction[0] >= c_low.worst_f1_fraction[0] - 1e-9
    assert l_high[0] <= l_low[0] + 1e-9


@given(st.floats(-5, 20), st.floats(0.001, 5))
def test_knife_edge_loss_monotone_and_non_negative(v, dv):
    assert knife_edge_loss_db(v) >= 0.0
    assert knife_edge_loss_db(v + dv) >= knife_edge_loss_db(v) - 1e-12


@given(st.floats(1.0, 1e6), st.floats(1.0, 1e6), st.floats(0.01, 100.0))
def test_free_space_loss_monotone_in_distance(d1, d2, f):
    lo, hi = sorted((d1, d2))
    assert free_space_loss_db(hi, f) >= free_space_loss_db(lo, f)


@given(st.floats(0, 1e5), st.floats(0, 1e5), st.floats(0.2, 10.0))
def test_bulge_non_negative_and_symmetric(d1, d2, k):
    b = earth_bulge_m(d1, d2, k)
    assert b >= 0.0 and np.isclose(b, earth_bulge_m(d2, d1, k))


@given(arrays(np.float64, (4, 5), elements=st.floats(-500, 9000)), st.floats(0, 3.999), st.floats(0, 2.999))
def test_bilinear_stays_within_neighbours(block, x, y):
    x0, y0 = np.array([int(x)]), np.array([int(y)])
    v = bilinear_gather(block, np.array([x]), np.array([y]), x0, y0)[0]
    nb = block[y0[0]:y0[0] + 2, x0[0]:x0[0] + 2]
    assert nb.min() - 1e-6 <= v <= nb.max() + 1e-6


@settings(max_examples=30, deadline=None)
@given(st.floats(0.5, 80.0), st.floats(-20, 40), st.floats(0, 40))
def test_budget_is_linear_in_loss(f, p, g):
    from profiler.budget import link_budget

    r = Radio(freq_ghz=f, tx_power_dbm=p, gain_a_dbi=g)
    b = link_budget(r, np.array([100.0, 110.0]))
    assert np.isclose(b.rx_level_dbm[0] - b.rx_level_dbm[1], 10.0)
    assert np.isclose(b.fade_margin_db[0] - b.fade_margin_db[1], 10.0)
