"""Every compiled kernel gives the bits of its numpy twin (one engine, two speeds).

The pairs come from the registry (profiler.kernels.TWINS); each brings inputs
covering its cases.  A kernel added without a twin or examples fails here.
"""

from __future__ import annotations

import numpy as np
import pytest

from profiler import _compiled, kernels
from profiler.geodesy import _geodesic_nodes, path_lines


def _same(ref, got, where: str) -> None:
    if isinstance(ref, tuple):
        assert isinstance(got, tuple) and len(ref) == len(got), where
        for i, (r, g) in enumerate(zip(ref, got)):
            _same(r, g, f"{where}[{i}]")
        return
    ref, got = np.asarray(ref), np.asarray(got)
    assert ref.shape == got.shape, where
    # Same bits: equal values, NaN in the same places, and the same sign of zero.
    assert np.array_equal(ref, got, equal_nan=True), where
    if ref.dtype.kind == "f":
        assert np.array_equal(np.signbit(ref), np.signbit(got)), where


def test_the_registry_holds_every_kernel():
    assert set(kernels.TWINS) == {"hermite", "affine_gather", "clearance_reductions", "diffraction_reductions",
                                  "confidence_draws", "summit_dips", "coverage_sweep",
                                  "coverage_lattice", "coverage_order"}


@pytest.mark.parametrize("name", sorted(kernels.TWINS))
def test_compiled_kernel_equals_its_numpy_twin_bitwise(name):
    twin = kernels.TWINS[name]
    cases = twin.examples(np.random.default_rng(3))
    assert cases
    for i, args in enumerate(cases):
        _same(twin.numpy(*args), twin.compiled()(*args), f"{name} case {i}")


def test_hermite_twins_agree_on_real_geodesic_nodes():
    rng = np.random.default_rng(3)
    lat_a = rng.uniform(-60, 60, 50)
    lon_a = rng.uniform(-170, 170, 50)
    lat_b = lat_a + rng.uniform(-0.3, 0.3, 50)
    lon_b = lon_a + rng.uniform(-0.3, 0.3, 50)
    lines = path_lines(lat_a, lon_a, lat_b, lon_b)
    offsets, lat, lon, dlat, dlon, step = _geodesic_nodes(lat_a, lon_a, lines.azimuth_a_to_b_deg, lines.length_m)
    dist = np.linspace(0, 1, 700)[None, :] * lines.length_m[:, None]
    args = (dist, offsets, step, lat, lon, dlat, dlon)
    twin = kernels.TWINS["hermite"]
    _same(twin.numpy(*args), twin.compiled()(*args), "hermite")


def test_dispatch_rule(monkeypatch):
    monkeypatch.delenv("TERRAHOP_NO_NUMBA", raising=False)
    assert not kernels.use_numba(_compiled.NUMBA_MIN_SAMPLES - 1)
    assert kernels.use_numba(_compiled.NUMBA_MIN_SAMPLES)
    monkeypatch.setenv("TERRAHOP_NO_NUMBA", "1")
    assert not kernels.use_numba(10 * _compiled.NUMBA_MIN_SAMPLES)


def test_stored_cells_round_trip_and_match_the_plain_gather():
    rng = np.random.default_rng(5)
    block = rng.normal(100, 30, (300, 403))
    block[10:20, 30:40] = np.nan
    cells = kernels.StoredCells.from_array(block, 0, 0, 1.0, None)
    assert np.array_equal(cells.to_array(), block, equal_nan=True)
    transform = (0.001, 0.0, 10.0, 0.0, -0.001, 47.0)
    x = rng.uniform(9.99, 10.41, 5_000)
    y = rng.uniform(46.69, 47.01, 5_000)
    values, inside = kernels.affine_gather_numpy(cells, x, y, transform, 403, 300)
    assert not inside.all() and np.isnan(values).any()
    # The plain row-major gather of the link path gives the same numbers.
    col, row = kernels.pixel_numpy(x[inside], y[inside], transform)
    xx, yy, x0, y0 = kernels.cell_numpy(col, row, 403, 300)
    assert np.array_equal(kernels.gather_bilinear(block, xx, yy, x0, y0), values[inside], equal_nan=True)


@pytest.mark.parametrize("threshold", [10**12, 1])
def test_cells_kept_as_stored_give_the_numbers_of_converted_cells(threshold, monkeypatch):
    """int16 cells with a nodata value and a foot unit: same result as float64 metres with NaN holes."""
    monkeypatch.setattr(_compiled, "NUMBA_MIN_SAMPLES", threshold)
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
    got, _ = kernels.affine_gather(kernels.StoredCells.from_array(raw, 0, 0, factor, -32768.0),
                                   x, y, transform, 250, 200)
    assert np.isnan(ref).any()
    assert np.array_equal(ref, got, equal_nan=True)


def test_summit_dips_mean_the_lowest_point_in_between():
    """min(z_j, top) minus the lowest point strictly between j and the main edge, by a plain loop."""
    elev, ip, ep = kernels.TWINS["summit_dips"].examples(np.random.default_rng(7))[0]
    dips = kernels.summit_dips(elev, ip, ep)
    for row in (0, 1, 2, 5, 10):
        i = int(ip[row])
        for j in range(elev.shape[1]):
            between = elev[row, min(j, i) + 1: max(j, i)]
            expect = -np.inf if j == i or between.size == 0 else min(elev[row, j], ep[row]) - between.min()
            assert dips[row, j] == expect


def test_warm_up_compiles_every_kernel(monkeypatch):
    monkeypatch.delenv("TERRAHOP_NO_NUMBA", raising=False)
    kernels.warm_up((np.float64, np.int16))
    assert set(_compiled._compiled) >= set(kernels.TWINS)
