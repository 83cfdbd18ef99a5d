"""The numba and numpy kernels give bit-identical results (one engine, two speeds)."""

from __future__ import annotations

import numpy as np
import pytest

from profiler import kernels
from profiler.geodesy import _geodesic_nodes, path_lines

numba = pytest.importorskip("numba")


def _nodes(n_paths=50, seed=3):
    rng = np.random.default_rng(seed)
    lat_a = rng.uniform(-60, 60, n_paths)
    lon_a = rng.uniform(-170, 170, n_paths)
    lat_b = lat_a + rng.uniform(-0.3, 0.3, n_paths)
    lon_b = lon_a + rng.uniform(-0.3, 0.3, n_paths)
    lines = path_lines(lat_a, lon_a, lat_b, lon_b)
    return lines, _geodesic_nodes(lat_a, lon_a, lines.azimuth_a_to_b_deg, lines.length_m)


def test_hermite_numba_equals_numpy_bitwise():
    lines, (offsets, lat, lon, dlat, dlon, step) = _nodes()
    frac = np.linspace(0, 1, 700)[None, :]
    dist = frac * lines.length_m[:, None]
    ref = kernels.hermite_numpy(dist, offsets, step, lat, lon, dlat, dlon)
    got = kernels._numba_kernels()["hermite"](dist, offsets, step, lat, lon, dlat, dlon)
    assert np.array_equal(ref[0], got[0]) and np.array_equal(ref[1], got[1])


def _numba_gather(cells, x, y, transform, width, height):
    a, b, c, d, e, f = transform
    return kernels._numba_kernels()["affine_gather"](
        cells.tiles, cells.height, cells.width, cells.row0, cells.col0, x, y, a, b, c, d, e, f,
        width, height, cells.factor, 0.0 if cells.nodata is None else cells.nodata, cells.nodata is not None)


def test_affine_gather_numba_equals_numpy_bitwise_with_nodata_and_outside_points():
    rng = np.random.default_rng(5)
    block = rng.normal(100, 30, (300, 403))
    block[10:20, 30:40] = np.nan
    cells = kernels.StoredCells.from_array(block, 0, 0, 1.0, None)
    assert np.array_equal(cells.to_array(), block, equal_nan=True)
    transform = (0.001, 0.0, 10.0, 0.0, -0.001, 47.0)
    x = rng.uniform(9.99, 10.41, 50_000)
    y = rng.uniform(46.69, 47.01, 50_000)
    ref_v, ref_in = kernels.affine_gather_numpy(cells, x, y, transform, 403, 300)
    got_v, got_in = _numba_gather(cells, x, y, transform, 403, 300)
    assert np.array_equal(ref_in, got_in)
    assert not ref_in.all() and np.isnan(ref_v).any()
    assert np.array_equal(ref_v, got_v, equal_nan=True)
    # The plain row-major gather of the link path gives the same numbers.
    inside = ref_in
    col, row = kernels.pixel_numpy(x[inside], y[inside], transform)
    xx, yy, x0, y0 = kernels.cell_numpy(col, row, 403, 300)
    assert np.array_equal(kernels.gather_bilinear(block, xx, yy, x0, y0), ref_v[inside], equal_nan=True)


def test_dispatch_uses_numpy_for_small_batches(monkeypatch):
    assert not kernels.use_numba(10)
    monkeypatch.setenv("TERRAHOP_NO_NUMBA", "1")
    assert not kernels.use_numba(10 * kernels.NUMBA_MIN_SAMPLES)


@pytest.mark.parametrize("compiled", [False, True])
def test_cells_kept_as_stored_give_the_numbers_of_converted_cells(compiled):
    """int16 cells with a nodata value and a foot unit: same result as float64 metres with NaN holes."""
    rng = np.random.default_rng(9)
    raw = rng.integers(-100, 3000, (200, 250)).astype(np.int16)
    raw[50:60, 70:90] = -32768
    factor = 0.3048
    metres = np.where(raw == -32768, np.nan, raw.astype(np.float64) * factor)
    transform = (30.0, 0.0, 500_000.0, 0.0, -30.0, 6_000_000.0)
    x = rng.uniform(500_000, 500_000 + 250 * 30, 30_000)
    y = rng.uniform(6_000_000 - 200 * 30, 6_000_000, 30_000)
    ref, _ = kernels.affine_gather_numpy(kernels.StoredCells.from_array(metres, 0, 0, 1.0, None),
                                         x, y, transform, 250, 200)
    stored = kernels.StoredCells.from_array(raw, 0, 0, factor, -32768.0)
    if compiled:
        got, _ = _numba_gather(stored, x, y, transform, 250, 200)
    else:
        got, _ = kernels.affine_gather_numpy(stored, x, y, transform, 250, 200)
    assert np.isnan(ref).any()
    assert np.array_equal(ref, got, equal_nan=True)


def test_summit_dips_numba_equals_numpy_bitwise():
    # Deygout's distinct-summit rule: random rough profiles, main edges anywhere (ends included),
    # plateaus of equal heights (ties) and padding that repeats the last sample.
    rng = np.random.default_rng(7)
    elev = np.round(np.cumsum(rng.normal(0.0, 3.0, (60, 97)), axis=1), 1)
    elev[5, 20:40] = 50.0
    elev[6, 80:] = elev[6, 79]
    ip = rng.integers(0, 97, 60)
    ip[:3] = (0, 96, 48)
    ep = elev[np.arange(60), ip] + rng.normal(0.0, 1.0, 60)
    ref = kernels.summit_dips_numpy(elev, ip, ep)
    got = kernels._numba_kernels()["summit_dips"](elev, ip.astype(np.int64), ep)
    np.testing.assert_array_equal(got, ref)
    # The meaning, by a plain loop on one row: min(z_j, top) minus the lowest point in between.
    row, i = 10, int(ip[10])
    for j in range(97):
        between = elev[row, min(j, i) + 1: max(j, i)]
        expect = -np.inf if j == i or between.size == 0 else min(elev[row, j], ep[row]) - between.min()
        assert ref[row, j] == expect
