"""The per-path reductions behind Bullington, delta-Bullington and the knife-edge
method give the same losses whichever twin runs (numpy for small batches,
compiled for large ones), and the validity warning names the edge of largest v."""

from __future__ import annotations

import numpy as np
import pytest

from profiler import _compiled
from profiler.losses import terrain_diffraction as td

from .test_terrain_diffraction import batch, random_rows


def _cases(seed, count=300):
    rng = np.random.default_rng(seed)
    rows = random_rows(rng, count, n_min=3, n_max=120)
    dist, surf, inner, length = batch(rows)
    agl_a = rng.choice([0.5, 5.0, 30.0, 200.0], count)
    agl_b = rng.choice([0.5, 5.0, 30.0, 200.0], count)
    freq = rng.choice([0.2, 2.4, 5.8, 18.0, 38.0], count)
    return dist, surf, inner, surf[:, 0] + agl_a, surf[:, -1] + agl_b, length, freq


@pytest.mark.parametrize("k", [4.0 / 3.0, 2.0 / 3.0, np.inf])
def test_both_twins_give_the_same_losses_end_to_end(k, monkeypatch):
    g = td.PathGeometry(*_cases(0), k)
    out = {}
    for threshold in (10**12, 1):
        monkeypatch.setattr(_compiled, "NUMBA_MIN_SAMPLES", threshold)
        out[threshold] = (td.diffraction_by_method(g), td.smooth_surface_heights_m(*_cases(0)[:6], 1.0, k))
    for m in td.DIFFRACTION_METHODS:
        assert np.array_equal(out[10**12][0][m], out[1][0][m]), m
        assert np.all(np.isfinite(out[1][0][m])), m
    assert np.array_equal(out[10**12][1], out[1][1])
    # The cases cover line-of-sight and obstructed paths, with and without a smooth-earth excess.
    loss = out[1][0]
    assert np.any(loss["bullington"] == 0.0) and np.any(loss["bullington"] > 6.0)
    if np.isfinite(k):
        assert np.any(loss["delta-bullington"] > loss["bullington"] + 0.1)


def test_warnings_point_at_the_edge_of_largest_v():
    dist, surf, inner, ha, hb, length, freq = _cases(7, count=60)
    surf = surf.copy()
    surf[3, 5] += 3000.0  # a steep spike: by far the largest v of its path, the warning names its distance
    warnings = td.diffraction_validity_warnings("delta-bullington", dist, surf, inner, ha, hb, length, freq, 4 / 3)
    assert any(f"steep obstacle {dist[3, 5] / 1000.0:.3f} km" in w for w in warnings[3])
    result = td.diffraction_with_warnings("delta-bullington", dist, surf, inner, ha, hb, length, freq, 4 / 3)
    assert result.warnings == tuple(warnings)
    loss = td.diffraction_loss_db("delta-bullington", dist, surf, inner, ha, hb, length, freq, 4 / 3)
    assert np.array_equal(result.loss_db, loss)
