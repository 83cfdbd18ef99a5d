"""The per-path reductions behind Bullington and delta-Bullington give the numbers of
the full-array computation they replaced (to ~1e-9 dB), and the compiled and numpy
twins give the same bits."""

from __future__ import annotations

import numpy as np
import pytest

from profiler import kernels
from profiler.losses import terrain_diffraction as td
from profiler.losses.diffraction import fresnel_kirchhoff_v, knife_edge_loss_db
from profiler.losses.smooth_earth import smooth_earth_loss_db
from profiler.units import EARTH_RADIUS_M, wavelength_m

from .test_terrain_diffraction import batch, random_rows


# --- the full-array computation the reductions replaced (kept here as the reference) ---

def _reference(dist, surf, inner, ha, hb, length, freq, k):
    """Bullington (ITU-R P.526-15 section 4.5.1), delta-Bullington (section 4.5.2),
    knife-edge (section 4.1) and the smooth-surface heights, with (P, N) temporaries."""
    ha, hb, length, freq, k = (np.broadcast_to(np.asarray(x, float), (dist.shape[0],))[:, None]
                               for x in (ha, hb, length, freq, k))
    d1, d2 = dist, length - dist
    lam = wavelength_m(freq)
    with np.errstate(divide="ignore", invalid="ignore"):
        elev = surf + d1 * d2 / (2.0 * k * EARTH_RADIUS_M)
        height = elev - (ha + (hb - ha) * d1 / length)
        v = fresnel_kirchhoff_v(height, d1, d2, freq)
    inner = inner & (d1 > 0.0) & (d2 > 0.0)
    v = np.where(inner, v, -np.inf)

    def bull(el, a, b):
        with np.errstate(divide="ignore", invalid="ignore"):
            stim = np.where(inner, (el - a) / d1, -np.inf).max(axis=1)
            s_tr = ((b - a) / length)[:, 0]
            srim = np.where(inner, (el - b) / d2, -np.inf).max(axis=1)
            h_line = el - (a + (b - a) * d1 / length)
            v_los = np.where(inner, h_line * np.sqrt(2.0 * length / (lam * d1 * d2)), -np.inf).max(axis=1)
            a1, b1, d, lam1 = a[:, 0], b[:, 0], length[:, 0], lam[:, 0]
            denom = stim + srim
            dbp = (b1 - a1 + srim * d) / denom
            h_bp = a1 + stim * dbp - (a1 * (d - dbp) + b1 * dbp) / d
            v_b = h_bp * np.sqrt(2.0 * d / (lam1 * dbp * (d - dbp)))
        nlos = (stim > s_tr) & (denom > 0.0) & np.isfinite(v_b)
        luc = knife_edge_loss_db(np.where(nlos, v_b, v_los))
        return luc + (1.0 - np.exp(-luc / 6.0)) * (10.0 + 0.02 * d / 1000.0)

    step = np.diff(d1, axis=1)
    h = surf
    v1 = np.sum(step * (h[:, 1:] + h[:, :-1]), axis=1)
    v2 = np.sum(step * (h[:, 1:] * (2.0 * d1[:, 1:] + d1[:, :-1]) + h[:, :-1] * (d1[:, 1:] + 2.0 * d1[:, :-1])), axis=1)
    L = length[:, 0]
    hst = (2.0 * v1 * L - v2) / L**2
    hsr = (v2 - v1 * L) / L**2
    with np.errstate(divide="ignore", invalid="ignore"):
        obst = h - (ha * d2 + hb * d1) / length
        hobs = np.where(inner, obst, -np.inf).max(axis=1)
        aobt = np.where(inner, obst / d1, -np.inf).max(axis=1)
        aobr = np.where(inner, obst / d2, -np.inf).max(axis=1)
        share_t = aobt / (aobt + aobr)
    lower = hobs > 0.0
    hst = np.minimum(np.where(lower, hst - hobs * share_t, hst), h[:, 0])
    hsr = np.minimum(np.where(lower, hsr - hobs * (1.0 - share_t), hsr), h[:, -1])
    l_bulla = bull(elev, ha, hb)
    hts, hrs = ha[:, 0] - hst, hb[:, 0] - hsr
    with np.errstate(divide="ignore", invalid="ignore"):
        bulge = d1 * d2 / (2.0 * k * EARTH_RADIUS_M)
    l_bulls = bull(bulge, hts[:, None], hrs[:, None])
    l_dsph = smooth_earth_loss_db(L, hts, hrs, freq[:, 0], k[:, 0])
    return {
        "knife-edge": knife_edge_loss_db(v.max(axis=1)),
        "bullington": l_bulla,
        "delta-bullington": l_bulla + np.maximum(l_dsph - l_bulls, 0.0),
        "smooth": (hst, hsr),
        "edge": np.argmax(v, axis=1),
    }


def _cases(seed, count=300):
    rng = np.random.default_rng(seed)
    rows = random_rows(rng, count, n_min=3, n_max=120)
    dist, surf, inner, length = batch(rows)
    agl_a = rng.choice([0.5, 5.0, 30.0, 200.0], count)
    agl_b = rng.choice([0.5, 5.0, 30.0, 200.0], count)
    freq = rng.choice([0.2, 2.4, 5.8, 18.0, 38.0], count)
    return dist, surf, inner, surf[:, 0] + agl_a, surf[:, -1] + agl_b, length, freq


@pytest.mark.parametrize("k", [4.0 / 3.0, 2.0 / 3.0, np.inf])
@pytest.mark.parametrize("seed", [0, 1])
def test_reductions_give_the_full_array_numbers(k, seed, monkeypatch):
    dist, surf, inner, ha, hb, length, freq = _cases(seed)
    ref = _reference(dist, surf, inner, ha, hb, length, freq, k)
    # Both twins: numpy for small batches, numba (when installed) for large ones.
    for threshold in (10**12, 1):
        monkeypatch.setattr(kernels, "NUMBA_MIN_SAMPLES", threshold)
        for method in ("knife-edge", "bullington", "delta-bullington"):
            got = td.diffraction_loss_db(method, dist, surf, inner, ha, hb, length, freq, k)
            assert np.all(np.isfinite(got))
            np.testing.assert_allclose(got, ref[method], rtol=0, atol=1e-9, err_msg=method)
        hst, hsr = td.smooth_surface_heights_m(dist, surf, inner, ha, hb, length, freq, k)
        np.testing.assert_allclose(hst, ref["smooth"][0], rtol=0, atol=1e-9)
        np.testing.assert_allclose(hsr, ref["smooth"][1], rtol=0, atol=1e-9)
    # The cases cover line-of-sight and obstructed paths, with and without a smooth-earth excess.
    assert np.any(ref["bullington"] == 0.0) and np.any(ref["bullington"] > 6.0)
    if np.isfinite(k):
        assert np.any(ref["delta-bullington"] > ref["bullington"] + 0.1)


def test_compiled_and_numpy_reductions_give_the_same_bits():
    pytest.importorskip("numba")
    dist, surf, inner, ha, hb, length, freq = _cases(5)
    lam = wavelength_m(freq)
    for k in (np.full(length.shape, 4.0 / 3.0), np.full(length.shape, np.inf)):
        for smooth in (True, False):
            ref = kernels.diffraction_reductions_numpy(dist, surf, inner, ha, hb, length, lam, k, smooth)
            got = kernels._numba_kernels()["diffraction_reductions"](dist, surf, inner, ha, hb, length, lam, k,
                                                                      EARTH_RADIUS_M, smooth)
            assert len(ref) == len(got) == 6
            for r, g in zip(ref, got):
                np.testing.assert_array_equal(r, g)
            assert np.all(np.isfinite(ref[4])) == smooth
        ref = kernels.bullington_reductions_numpy(dist, inner, ha - 3.0, hb + 2.0, length, lam, k)
        got = kernels._numba_kernels()["bullington_reductions"](dist, inner, ha - 3.0, hb + 2.0, length, lam, k,
                                                                EARTH_RADIUS_M)
        for r, g in zip(ref, got):
            np.testing.assert_array_equal(r, g)


def test_warnings_point_at_the_edge_of_largest_v():
    dist, surf, inner, ha, hb, length, freq = _cases(7, count=60)
    surf = surf.copy()
    surf[3, 5] += 3000.0  # a steep spike: the warning names its distance
    ref = _reference(dist, surf, inner, ha, hb, length, freq, 4.0 / 3.0)
    assert ref["edge"][3] == 5
    warnings = td.diffraction_validity_warnings("delta-bullington", dist, surf, inner, ha, hb, length, freq, 4 / 3)
    assert any(f"steep obstacle {dist[3, 5] / 1000.0:.3f} km" in w for w in warnings[3])
    result = td.diffraction_with_warnings("delta-bullington", dist, surf, inner, ha, hb, length, freq, 4 / 3)
    assert result.warnings == tuple(warnings)
    np.testing.assert_allclose(result.loss_db, ref["delta-bullington"], rtol=0, atol=1e-9)
