"""Invariants of the coverage sweep (hypothesis): any terrain, any receiver, the sweep's figures are
those of a direct reduction over the radial's samples (line of sight exactly; the worst F1 fraction
exactly under 1 F1 and a lower bound above)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.coverage._kernels import sweep_radials

DEN = 2.0 * 4.0 / 3.0 * 6_371_000.0
LAM = 0.0517


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), roughness=st.floats(0.0, 30.0), n_s=st.integers(3, 300),
       rise=st.floats(-20.0, 80.0), ha_above=st.floats(0.0, 60.0), flat=st.booleans())
def test_sweep_matches_a_direct_reduction(seed, roughness, n_s, rise, ha_above, flat):
    rng = np.random.default_rng(seed)
    dist = np.arange(n_s) * 10.0
    z = 100.0 + rise * dist / max(dist[-1], 1.0) + (0.0 if flat else 1.0) * rng.normal(0.0, roughness + 1e-3, n_s)
    surface = z[None, :]
    ha = z[0] + ha_above
    cell_d = np.sort(rng.uniform(1.0, dist[-1] + 1e-9, 25))
    cell_hb = np.interp(cell_d, dist, z) + rng.uniform(0.0, 30.0, cell_d.size)
    start = np.array([0, cell_d.size], dtype=np.int64)
    q, _, stim, _, los, ok, _, _ = sweep_radials(dist, surface, ha, LAM, DEN, start, cell_d, cell_hb, cell_hb)
    assert ok.all()
    for c, (D, hb) in enumerate(zip(cell_d, cell_hb)):
        inner = dist[1:][dist[1:] < D]
        if inner.size == 0:
            assert los[c] and np.isinf(q[c])
            continue
        zz = z[1:1 + inner.size]
        gap = ha + (hb - ha) * inner / D - (zz + inner * (D - inner) / DEN)
        f1 = np.sqrt(LAM * inner * (D - inner) / D)
        q_ref = np.min(gap / f1)
        if abs(np.min(gap)) > 1e-6:
            assert bool(los[c]) == bool(np.all(gap > 0))
        if q_ref < 1.0 - 1e-9:
            assert abs(q[c] - q_ref) <= 1e-7 * max(1.0, abs(q_ref))
        else:
            assert q[c] <= q_ref + 1e-7 * max(1.0, q_ref)
