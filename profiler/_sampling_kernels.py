"""Kernels of terrain sampling: geodesic interpolation and the bilinear gather.

Each compiled loop sits beside its numpy twin (same arithmetic, same bits) and
runs by the rule of :mod:`profiler._compiled`.  Used by
:mod:`profiler.geodesy` (sample positions) and :mod:`profiler.terrain`
(heights from stored raster cells).  Pure functions, no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._compiled import twin

__all__ = [
    "TILE", "StoredCells", "hermite_paths", "hermite_numpy", "pixel_numpy", "cell_numpy",
    "gather_bilinear", "gather_bilinear_stored", "affine_gather", "affine_gather_numpy",
]

#: Side of the square tiles cached rasters are stored in, cells.  Neighbouring
#: cells above and below then share cache lines, which matters for paths running
#: north-south (a row-major raster puts each row of their path on a new line).
TILE = 8


@dataclass(frozen=True)
class StoredCells:
    """A raster window kept in memory: cells as stored, in TILE x TILE tiles.

    ``tiles`` has shape (ceil(height/TILE), ceil(width/TILE), TILE, TILE); cell
    (r, c) of the window is ``tiles[r // TILE, c // TILE, r % TILE, c % TILE]``.
    Each cell means float64(cell) * ``factor`` metres, NaN where it equals ``nodata``.
    """

    row0: int
    col0: int
    height: int
    width: int
    tiles: np.ndarray
    factor: float
    nodata: float | None

    @classmethod
    def from_array(cls, cells: np.ndarray, row0: int, col0: int, factor: float,
                   nodata: float | None) -> "StoredCells":
        """Tile a (height, width) array of cells whose top-left is (``row0``, ``col0``) of the raster."""
        h, w = cells.shape
        th, tw = -(-h // TILE), -(-w // TILE)
        padded = np.zeros((th * TILE, tw * TILE), dtype=cells.dtype)
        padded[:h, :w] = cells
        tiles = np.ascontiguousarray(padded.reshape(th, TILE, tw, TILE).swapaxes(1, 2))
        return cls(row0, col0, h, w, tiles, factor, nodata)

    def to_array(self) -> np.ndarray:
        """The cells as a plain (height, width) array, as stored."""
        th, tw = self.tiles.shape[:2]
        return self.tiles.swapaxes(1, 2).reshape(th * TILE, tw * TILE)[: self.height, : self.width]


# ---------------------------------------------------------------- geodesic interpolation

def hermite_numpy(
    distance_m: np.ndarray, offsets: np.ndarray, step_m: np.ndarray,
    lat: np.ndarray, lon: np.ndarray, dlat: np.ndarray, dlon: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Cubic Hermite interpolation of geodesic nodes at ``distance_m`` (paths, samples), degrees.

    Node j of path i sits at ``offsets[i] + j``, ``step_m[i]`` apart, with
    positions ``lat``/``lon`` and derivatives ``dlat``/``dlon`` per metre.
    Basis functions h00, h10, h01, h11 of the cubic Hermite spline
    (any numerical analysis text, e.g. Burden & Faires, Numerical Analysis, 3.5).
    """
    segments = (np.diff(offsets) - 1)[:, None]
    h = step_m[:, None]
    seg = np.minimum(np.floor(distance_m / h).astype(np.int64), segments - 1)
    t = (distance_m - seg * h) / h
    j0 = offsets[:-1, None] + seg
    j1 = j0 + 1
    t2 = t * t
    t3 = t2 * t
    h00 = 2.0 * t3 - 3.0 * t2 + 1.0
    h10 = t3 - 2.0 * t2 + t
    h01 = -2.0 * t3 + 3.0 * t2
    h11 = t3 - t2
    out_lat = h00 * lat[j0] + h10 * h * dlat[j0] + h01 * lat[j1] + h11 * h * dlat[j1]
    out_lon = h00 * lon[j0] + h10 * h * dlon[j0] + h01 * lon[j1] + h11 * h * dlon[j1]
    return out_lat, out_lon


def _hermite_examples(rng: np.random.Generator) -> list[tuple]:
    n_paths, nodes = 40, 9
    offsets = np.arange(n_paths + 1, dtype=np.int64) * nodes
    step = rng.uniform(50.0, 5000.0, n_paths)
    size = n_paths * nodes
    lat, lon = rng.uniform(-60, 60, size), rng.uniform(-170, 170, size)
    dlat, dlon = rng.normal(0, 1e-5, size), rng.normal(0, 1e-5, size)
    dist = np.linspace(0.0, 1.0, 301)[None, :] * (step * (nodes - 1))[:, None]
    return [(dist, offsets, step, lat, lon, dlat, dlon)]


def _hermite_warm(_dtypes: tuple) -> list[tuple]:
    return [(np.zeros((1, 2)), np.array([0, 2], dtype=np.int64), np.ones(1), np.zeros(2), np.zeros(2),
             np.zeros(2), np.zeros(2))]


@twin("hermite", hermite_numpy, _hermite_examples, _hermite_warm)
def _hermite_loop(distance_m, offsets, step_m, lat, lon, dlat, dlon):  # pragma: no cover - compiled
    n_paths, width = distance_m.shape
    out_lat = np.empty((n_paths, width))
    out_lon = np.empty((n_paths, width))
    for i in range(n_paths):
        h = step_m[i]
        segments = offsets[i + 1] - offsets[i] - 1
        for c in range(width):
            dist = distance_m[i, c]
            seg = np.int64(np.floor(dist / h))
            if seg > segments - 1:
                seg = segments - 1
            t = (dist - seg * h) / h
            j0 = offsets[i] + seg
            j1 = j0 + 1
            t2 = t * t
            t3 = t2 * t
            h00 = 2.0 * t3 - 3.0 * t2 + 1.0
            h10 = t3 - 2.0 * t2 + t
            h01 = -2.0 * t3 + 3.0 * t2
            h11 = t3 - t2
            out_lat[i, c] = h00 * lat[j0] + h10 * h * dlat[j0] + h01 * lat[j1] + h11 * h * dlat[j1]
            out_lon[i, c] = h00 * lon[j0] + h10 * h * dlon[j0] + h01 * lon[j1] + h11 * h * dlon[j1]
    return out_lat, out_lon


def hermite_paths(
    distance_m: np.ndarray, offsets: np.ndarray, step_m: np.ndarray,
    lat: np.ndarray, lon: np.ndarray, dlat: np.ndarray, dlon: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Interpolated latitude and longitude of samples, degrees (see :func:`hermite_numpy`)."""
    return _hermite_loop(distance_m.size, np.ascontiguousarray(distance_m), offsets, step_m, lat, lon, dlat, dlon)


# ---------------------------------------------------------------- bilinear gather

def pixel_numpy(
    x: np.ndarray, y: np.ndarray, transform: tuple[float, ...]
) -> tuple[np.ndarray, np.ndarray]:
    """Fractional column and row of CRS coordinates under an affine geotransform."""
    a, b, c, d, e, f = transform
    det = a * e - b * d
    xs = x - c
    ys = y - f
    col = (e * xs - b * ys) / det
    row = (-d * xs + a * ys) / det
    return col, row


def cell_numpy(
    col: np.ndarray, row: np.ndarray, width: int, height: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Cell-centre coordinates (edge value held) and lower-left neighbour indices."""
    x = np.clip(col - 0.5, 0.0, width - 1.0)
    y = np.clip(row - 0.5, 0.0, height - 1.0)
    x0 = np.minimum(np.floor(x).astype(np.int64), max(width - 2, 0))
    y0 = np.minimum(np.floor(y).astype(np.int64), max(height - 2, 0))
    return x, y, x0, y0


def gather_bilinear(
    block: np.ndarray, x: np.ndarray, y: np.ndarray, x0: np.ndarray, y0: np.ndarray
) -> np.ndarray:
    """Bilinear interpolation of ``block`` at fractional cell-centre coordinates.

    ``x``, ``y`` are positions in cell-centre units within ``block``; ``x0``,
    ``y0`` the integer lower-left neighbours.  Any NaN neighbour makes the
    result NaN (bilinear interpolation: e.g. Press et al., Numerical Recipes, 3.6).
    """
    h, w = block.shape
    x1 = np.minimum(x0 + 1, w - 1)
    y1 = np.minimum(y0 + 1, h - 1)
    fx = x - x0
    fy = y - y0
    v00 = block[y0, x0]
    v01 = block[y0, x1]
    v10 = block[y1, x0]
    v11 = block[y1, x1]
    top = v00 + (v01 - v00) * fx
    bottom = v10 + (v11 - v10) * fx
    return top + (bottom - top) * fy


def gather_bilinear_stored(
    cells: StoredCells, x: np.ndarray, y: np.ndarray, x0: np.ndarray, y0: np.ndarray
) -> np.ndarray:
    """:func:`gather_bilinear` on stored cells: each corner is float64(cell) * factor, NaN if nodata."""
    h, w = cells.height, cells.width
    tiles, factor, nodata = cells.tiles, cells.factor, cells.nodata
    x1 = np.minimum(x0 + 1, w - 1)
    y1 = np.minimum(y0 + 1, h - 1)
    fx = x - x0
    fy = y - y0

    def corner(rows, cols):
        raw = tiles[rows // TILE, cols // TILE, rows % TILE, cols % TILE]
        v = raw.astype(np.float64) * factor
        return v if nodata is None else np.where(raw == nodata, np.nan, v)

    v00 = corner(y0, x0)
    v01 = corner(y0, x1)
    v10 = corner(y1, x0)
    v11 = corner(y1, x1)
    top = v00 + (v01 - v00) * fx
    bottom = v10 + (v11 - v10) * fx
    return top + (bottom - top) * fy


def affine_gather_numpy(
    cells: StoredCells, x: np.ndarray, y: np.ndarray,
    transform: tuple[float, ...], width: int, height: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Elevation from stored cells at CRS points: ``(values, inside)``; NaN outside.

    ``width``/``height`` are the whole raster's; the cells hold a window of it.
    """
    col, row = pixel_numpy(x, y, transform)
    inside = (col >= 0) & (col <= width) & (row >= 0) & (row <= height)
    r0, c0 = cells.row0, cells.col0
    if inside.all():
        xx, yy, x0, y0 = cell_numpy(col, row, width, height)
        return gather_bilinear_stored(cells, xx - c0, yy - r0, x0 - c0, y0 - r0), inside
    out = np.full(col.shape, np.nan)
    xx, yy, x0, y0 = cell_numpy(col[inside], row[inside], width, height)
    out[inside] = gather_bilinear_stored(cells, xx - c0, yy - r0, x0 - c0, y0 - r0)
    return out, inside


def _affine_gather_flat_numpy(tiles, bh, bw, row0, col0, x, y, a, b, c, d, e, f, width, height, factor,
                              nodata, has_nodata):
    """:func:`affine_gather_numpy` with the compiled loop's flat arguments."""
    cells = StoredCells(row0, col0, bh, bw, tiles, factor, nodata if has_nodata else None)
    return affine_gather_numpy(cells, x, y, (a, b, c, d, e, f), width, height)


def _flat(cells: StoredCells, x: np.ndarray, y: np.ndarray, transform: tuple[float, ...],
          width: int, height: int) -> tuple:
    a, b, c, d, e, f = (float(v) for v in transform)
    return (cells.tiles, cells.height, cells.width, int(cells.row0), int(cells.col0),
            np.ascontiguousarray(x, dtype=float), np.ascontiguousarray(y, dtype=float),
            a, b, c, d, e, f, int(width), int(height), float(cells.factor),
            0.0 if cells.nodata is None else float(cells.nodata), cells.nodata is not None)


def _gather_examples(rng: np.random.Generator) -> list[tuple]:
    # Float cells with NaN holes and points beyond the edge; int16 cells with a nodata
    # value and a foot factor; a window that starts inside the raster.
    block = rng.normal(100, 30, (300, 403))
    block[10:20, 30:40] = np.nan
    transform = (0.001, 0.0, 10.0, 0.0, -0.001, 47.0)
    x = rng.uniform(9.99, 10.41, 20_000)
    y = rng.uniform(46.69, 47.01, 20_000)
    raw = rng.integers(-100, 3000, (200, 250)).astype(np.int16)
    raw[50:60, 70:90] = -32768
    t2 = (30.0, 0.0, 500_000.0, 0.0, -30.0, 6_000_000.0)
    x2 = rng.uniform(500_000, 500_000 + 250 * 30, 20_000)
    y2 = rng.uniform(6_000_000 - 200 * 30, 6_000_000, 20_000)
    window = StoredCells.from_array(raw[40:, 60:], 40, 60, 0.3048, -32768.0)
    x3 = rng.uniform(500_000 + 61 * 30, 500_000 + 249 * 30, 20_000)
    y3 = rng.uniform(6_000_000 - 199 * 30, 6_000_000 - 41 * 30, 20_000)
    return [_flat(StoredCells.from_array(block, 0, 0, 1.0, None), x, y, transform, 403, 300),
            _flat(StoredCells.from_array(raw, 0, 0, 0.3048, -32768.0), x2, y2, t2, 250, 200),
            _flat(window, x3, y3, t2, 250, 200)]


def _gather_warm(dtypes: tuple) -> list[tuple]:
    return [(np.zeros((1, 1, TILE, TILE), dtype=dt), 2, 2, 0, 0, np.zeros(1), np.zeros(1),
             1.0, 0.0, 0.0, 0.0, -1.0, 0.0, 2, 2, 1.0, 0.0, False)
            for dt in dict.fromkeys(np.dtype(d) for d in dtypes)]


@twin("affine_gather", _affine_gather_flat_numpy, _gather_examples, _gather_warm)
def _affine_gather_loop(tiles, bh, bw, row0, col0, x, y, a, b, c, d, e, f, width, height, factor, nodata,
                        has_nodata):  # pragma: no cover - compiled
    n = x.size
    out = np.empty(n)
    inside = np.empty(n, dtype=np.bool_)
    det = a * e - b * d
    wmax = width - 1.0
    hmax = height - 1.0
    x0max = max(width - 2, 0)
    y0max = max(height - 2, 0)
    for k in range(n):
        xs = x[k] - c
        ys = y[k] - f
        colk = (e * xs - b * ys) / det
        rowk = (-d * xs + a * ys) / det
        ok = (colk >= 0) and (colk <= width) and (rowk >= 0) and (rowk <= height)
        inside[k] = ok
        if not ok:
            out[k] = np.nan
            continue
        xx = min(max(colk - 0.5, 0.0), wmax)
        yy = min(max(rowk - 0.5, 0.0), hmax)
        ix = min(np.int64(np.floor(xx)), x0max)
        iy = min(np.int64(np.floor(yy)), y0max)
        xr = xx - col0
        yr = yy - row0
        ix -= col0
        iy -= row0
        ix1 = min(ix + 1, bw - 1)
        iy1 = min(iy + 1, bh - 1)
        fx = xr - ix
        fy = yr - iy
        r00 = tiles[iy // TILE, ix // TILE, iy % TILE, ix % TILE]
        r01 = tiles[iy // TILE, ix1 // TILE, iy % TILE, ix1 % TILE]
        r10 = tiles[iy1 // TILE, ix // TILE, iy1 % TILE, ix % TILE]
        r11 = tiles[iy1 // TILE, ix1 // TILE, iy1 % TILE, ix1 % TILE]
        v00 = np.float64(r00) * factor
        v01 = np.float64(r01) * factor
        v10 = np.float64(r10) * factor
        v11 = np.float64(r11) * factor
        if has_nodata:
            if r00 == nodata:
                v00 = np.nan
            if r01 == nodata:
                v01 = np.nan
            if r10 == nodata:
                v10 = np.nan
            if r11 == nodata:
                v11 = np.nan
        top = v00 + (v01 - v00) * fx
        bottom = v10 + (v11 - v10) * fx
        out[k] = top + (bottom - top) * fy
    return out, inside


def affine_gather(
    cells: StoredCells, x: np.ndarray, y: np.ndarray,
    transform: tuple[float, ...], width: int, height: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Bilinear elevation from stored cells at CRS points ``x``, ``y`` (1-D), m.

    Returns ``(values, inside)``: ``inside`` is False for points beyond the
    raster's outer edge (value NaN).  ``width``/``height``: the whole raster's.
    """
    return _affine_gather_loop(x.size, *_flat(cells, x, y, transform, width, height))
