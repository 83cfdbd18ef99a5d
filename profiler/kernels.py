"""Inner loops of sampling (geodesic interpolation, bilinear gather) and of the
profile reductions of the diffraction methods (Bullington, smooth-surface fit).

Each kernel exists twice with the same arithmetic in the same order: a numpy
version (small batches, no compile cost) and a numba version used for large
batches when numba is installed.  Both give bit-identical results (tested in
tests/test_kernels.py), so a link checked alone and the same link screened
among a million give the same numbers.  Pure functions, no I/O.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from .units import EARTH_RADIUS_M

__all__ = [
    "hermite_paths", "gather_bilinear", "affine_gather", "use_numba", "warm_up", "NUMBA_MIN_SAMPLES",
    "StoredCells", "TILE", "diffraction_reductions", "bullington_reductions", "clearance_reductions",
    "summit_dips",
]

#: Batches with at least this many samples use the compiled kernels.
NUMBA_MIN_SAMPLES = 20_000

_compiled: dict[str, object] = {}

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


def use_numba(n_samples: int) -> bool:
    """True when a batch of ``n_samples`` should use the numba kernels (and numba imports)."""
    if os.environ.get("TERRAHOP_NO_NUMBA"):
        return False
    if n_samples < NUMBA_MIN_SAMPLES:
        return False
    return _numba_kernels() is not None


def _numba_kernels() -> dict | None:
    if "failed" in _compiled:
        return None
    if not _compiled:
        try:
            import numba  # noqa: F401
        except ImportError:
            _compiled["failed"] = True
            return None
        _compiled.update(_build())
    return _compiled


# ---------------------------------------------------------------- numpy versions

def hermite_numpy(
    distance_m: np.ndarray, offsets: np.ndarray, step_m: np.ndarray,
    lat: np.ndarray, lon: np.ndarray, dlat: np.ndarray, dlon: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Cubic Hermite interpolation of geodesic nodes at ``distance_m`` (paths, samples).

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


def profile_reductions_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray,
) -> tuple[np.ndarray, ...]:
    """Per-path reductions over a terrain profile at one k-factor, each (P,).

    Inputs: ``d1``, ``surface`` (m, no bulge), ``interior`` (P, N); ``ha``,
    ``hb``, ``length``, ``lam`` (m) and ``k`` (P,).  Over the interior
    samples with 0 < d1 < d (d2 = d - d1), with elev = surface + d1 d2 / (2 k a)
    and h = elev - (ha + (hb - ha) d1 / d) its height above the antenna line:

    * ``stim`` = max (elev - ha) / d1, ``srim`` = max (elev - hb) / d2: the
      Bullington slopes (ITU-R P.526-15 section 4.5.1);
    * ``v_max`` = max v, v = h sqrt(2 / lam (1/d1 + 1/d2)) (ITU-R P.526-15
      eq. 26; equal to Bullington's h sqrt(2 d / (lam d1 d2)) as d1 + d2 = d),
      and ``i_max`` its first column (0 if none);
    * ``v1``, ``v2`` (sums over all steps), ``hobs``, ``aobt``, ``aobr``: the
      smooth-surface fit of ITU-R P.526-15 section 4.5.2 (surface without bulge).

    Maxima over no sample are -inf.  Each quotient by d1, d2, d or 2 k a is a
    product with its reciprocal and sums run left to right, exactly as in the
    compiled twin, so both give the same bits.
    """
    ha_, hb_, len_, lam_, k_ = (np.asarray(x, dtype=float)[:, None] for x in (ha, hb, length, lam, k))
    d2 = len_ - d1
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_den = 1.0 / (2.0 * k_ * EARTH_RADIUS_M)
        inv_d = 1.0 / len_
        slope = (hb_ - ha_) * inv_d
        inv1 = 1.0 / d1
        inv2 = 1.0 / d2
        elev = surface + d1 * d2 * inv_den
        height = elev - (ha_ + d1 * slope)
        inner = interior & (d1 > 0.0) & (d2 > 0.0)
        v = np.where(inner, height * np.sqrt(2.0 / lam_ * (inv1 + inv2)), -np.inf)
        i_max = np.argmax(v, axis=1)
        v_max = v.max(axis=1)
        stim = np.where(inner, (elev - ha_) * inv1, -np.inf).max(axis=1)
        srim = np.where(inner, (elev - hb_) * inv2, -np.inf).max(axis=1)
        h = surface
        step = d1[:, 1:] - d1[:, :-1]
        t1 = step * (h[:, 1:] + h[:, :-1])
        t2 = step * (h[:, 1:] * (2.0 * d1[:, 1:] + d1[:, :-1]) + h[:, :-1] * (d1[:, 1:] + 2.0 * d1[:, :-1]))
        obst = h - (ha_ * d2 + hb_ * d1) * inv_d
        hobs = np.where(inner, obst, -np.inf).max(axis=1)
        aobt = np.where(inner, obst * inv1, -np.inf).max(axis=1)
        aobr = np.where(inner, obst * inv2, -np.inf).max(axis=1)
    v1 = _sum_left_to_right(t1)
    v2 = _sum_left_to_right(t2)
    return stim, srim, v_max, i_max, v1, v2, hobs, aobt, aobr


def _sum_left_to_right(terms: np.ndarray) -> np.ndarray:
    """Row sums added strictly left to right (np.sum adds pairwise: other last bits)."""
    if terms.shape[1] == 0:
        return np.zeros(terms.shape[0])
    return np.cumsum(terms, axis=1)[:, -1]


def bullington_reductions_numpy(
    d1: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``stim``, ``srim``, ``v_max`` of :func:`profile_reductions_numpy` over a bare smooth
    earth (elev = d1 d2 / (2 k a)), antennas ``ha``, ``hb`` above it (ITU-R P.526-15 section 4.5.2)."""
    ha_, hb_, len_, lam_, k_ = (np.asarray(x, dtype=float)[:, None] for x in (ha, hb, length, lam, k))
    d2 = len_ - d1
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_den = 1.0 / (2.0 * k_ * EARTH_RADIUS_M)
        slope = (hb_ - ha_) * (1.0 / len_)
        inv1 = 1.0 / d1
        inv2 = 1.0 / d2
        elev = d1 * d2 * inv_den
        inner = interior & (d1 > 0.0) & (d2 > 0.0)
        stim = np.where(inner, (elev - ha_) * inv1, -np.inf).max(axis=1)
        srim = np.where(inner, (elev - hb_) * inv2, -np.inf).max(axis=1)
        height = elev - (ha_ + d1 * slope)
        v_max = np.where(inner, height * np.sqrt(2.0 / lam_ * (inv1 + inv2)), -np.inf).max(axis=1)
    return stim, srim, v_max



def smooth_heights_numpy(
    v1: np.ndarray, v2: np.ndarray, hobs: np.ndarray, aobt: np.ndarray, aobr: np.ndarray,
    length: np.ndarray, h0: np.ndarray, hn: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Smooth-surface heights hstd, hsrd at a and b (ITU-R P.526-15 section 4.5.2), m, each (P,).

    Least-squares line from the sums ``v1``, ``v2`` (hst = (2 v1 d - v2) / d^2,
    hsr = (v2 - v1 d) / d^2), lowered under the highest obstacle ``hobs`` in
    the ratio of ``aobt`` to ``aobr`` when hobs > 0, capped at the ground ``h0``, ``hn``.
    """
    hst = (2.0 * v1 * length - v2) / (length * length)
    hsr = (v2 - v1 * length) / (length * length)
    with np.errstate(divide="ignore", invalid="ignore"):
        share_t = aobt / (aobt + aobr)
    lower = hobs > 0.0
    hst = np.where(lower, hst - hobs * share_t, hst)
    hsr = np.where(lower, hsr - hobs * (1.0 - share_t), hsr)
    return np.minimum(hst, h0), np.minimum(hsr, hn)


def diffraction_reductions_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray, smooth: bool = True,
) -> tuple[np.ndarray, ...]:
    """What the Bullington-family methods need of each profile at one k, each (P,).

    ``stim``, ``srim``, ``v_max``, ``i_max`` of the profile
    (:func:`profile_reductions_numpy`) and, with ``smooth``, the smooth-surface
    heights ``hstd``, ``hsrd`` (:func:`smooth_heights_numpy`; NaN without).
    The compiled twin makes them in one pass per path, with the same bits.
    """
    stim, srim, v_max, i_max, v1, v2, hobs, aobt, aobr = profile_reductions_numpy(
        d1, surface, interior, ha, hb, length, lam, k)
    if not smooth:
        nan = np.full(stim.shape, np.nan)
        return stim, srim, v_max, i_max, nan, nan
    hstd, hsrd = smooth_heights_numpy(v1, v2, hobs, aobt, aobr, np.asarray(length, dtype=float),
                                      surface[:, 0], surface[:, -1])
    return stim, srim, v_max, i_max, hstd, hsrd

# ---------------------------------------------------------------- numba versions

def summit_dips_numpy(elev: np.ndarray, ip: np.ndarray, ep: np.ndarray) -> np.ndarray:
    """How far the profile dips between each sample and the main edge, m, shape (P, N).

    For column j of row p on either side of the main edge column ``ip[p]``
    (top ``ep[p]``): min(elev_j, ep) minus the lowest ``elev`` strictly
    between j and ``ip``; -inf at ``ip`` itself and where nothing lies between.
    Used by Deygout's distinct-summit rule (profiler.losses.terrain_diffraction).
    """
    n_cols = elev.shape[1]
    cols = np.arange(n_cols)[None, :]
    ipc = ip[:, None]
    epc = ep[:, None]
    dip = np.full(elev.shape, -np.inf)
    with np.errstate(invalid="ignore"):
        before = cols < ipc
        z = np.where(before, elev, np.inf)
        run = np.minimum.accumulate(z[:, ::-1], axis=1)[:, ::-1]  # lowest from j to the edge
        dip[:, :-1] = np.where(before[:, :-1], np.minimum(z[:, :-1], epc) - run[:, 1:], -np.inf)
        after = cols > ipc
        z = np.where(after, elev, np.inf)
        run = np.minimum.accumulate(z, axis=1)
        dip[:, 1:] = np.where(after[:, 1:], np.minimum(z[:, 1:], epc) - run[:, :-1], dip[:, 1:])
    return dip


def _build() -> dict:
    import numba

    @numba.njit(cache=True, nogil=True)
    def hermite_nb(distance_m, offsets, step_m, lat, lon, dlat, dlon):  # pragma: no cover - compiled
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

    @numba.njit(cache=True, nogil=True)
    def affine_gather_nb(tiles, bh, bw, row0, col0, x, y, a, b, c, d, e, f, width, height, factor, nodata,
                         has_nodata):  # pragma: no cover
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
            r00 = tiles[iy // 8, ix // 8, iy % 8, ix % 8]
            r01 = tiles[iy // 8, ix1 // 8, iy % 8, ix1 % 8]
            r10 = tiles[iy1 // 8, ix // 8, iy1 % 8, ix % 8]
            r11 = tiles[iy1 // 8, ix1 // 8, iy1 % 8, ix1 % 8]
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

    # The reductions below first fill row buffers in branch-free loops (which the
    # compiler turns into SIMD code; IEEE operations give the same bits in every
    # lane), then take maxima over the interior in scalar loops.

    @numba.njit(cache=True, nogil=True, error_model="numpy")
    def diffraction_reductions_nb(d1, surface, interior, ha, hb, length, lam, k, radius, smooth):  # pragma: no cover
        n_paths, width = d1.shape
        stim = np.full(n_paths, -np.inf)
        srim = np.full(n_paths, -np.inf)
        v_max = np.full(n_paths, -np.inf)
        i_max = np.zeros(n_paths, dtype=np.int64)
        hstd = np.full(n_paths, np.nan)
        hsrd = np.full(n_paths, np.nan)
        inv1 = np.empty(width)
        inv2 = np.empty(width)
        ob = np.empty(width)
        b1 = np.empty(width)
        b2 = np.empty(width)
        b3 = np.empty(width)
        ok = np.empty(width, dtype=np.bool_)
        for i in range(n_paths):
            a = ha[i]
            b = hb[i]
            d = length[i]
            inv_den = 1.0 / (2.0 * k[i] * radius)
            inv_d = 1.0 / d
            slope = (b - a) * inv_d
            two_over_lam = 2.0 / lam[i]
            # Pass 1 (no k): reciprocals; the smooth-surface sums and obstacle maxima.
            for c in range(width):
                x1 = d1[i, c]
                x2 = d - x1
                ok[c] = interior[i, c] & (x1 > 0.0) & (x2 > 0.0)
                inv1[c] = 1.0 / x1
                inv2[c] = 1.0 / x2
            if smooth:
                for c in range(width):
                    x1 = d1[i, c]
                    o = surface[i, c] - (a * (d - x1) + b * x1) * inv_d
                    ob[c] = o
                    b1[c] = o * inv1[c]
                    b2[c] = o * inv2[c]
                acc1 = 0.0
                acc2 = 0.0
                o_h = -np.inf
                o_t = -np.inf
                o_r = -np.inf
                for c in range(width):
                    if c > 0:
                        x1 = d1[i, c]
                        h = surface[i, c]
                        xp = d1[i, c - 1]
                        hp = surface[i, c - 1]
                        step = x1 - xp
                        acc1 += step * (h + hp)
                        acc2 += step * (h * (2.0 * x1 + xp) + hp * (x1 + 2.0 * xp))
                    if not ok[c]:
                        continue
                    t = ob[c]
                    if t > o_h or t != t:
                        o_h = t
                    t = b1[c]
                    if t > o_t or t != t:
                        o_t = t
                    t = b2[c]
                    if t > o_r or t != t:
                        o_r = t
                hst = (2.0 * acc1 * d - acc2) / (d * d)
                hsr = (acc2 - acc1 * d) / (d * d)
                share_t = o_t / (o_t + o_r)
                if o_h > 0.0:
                    hst = hst - o_h * share_t
                    hsr = hsr - o_h * (1.0 - share_t)
                h0 = surface[i, 0]
                hn = surface[i, width - 1]
                hst = h0 if h0 < hst else hst  # np.minimum: NaN stays NaN
                hsr = hn if hn < hsr else hsr
                hstd[i] = hst
                hsrd[i] = hsr
            # Pass 2 (at k): Bullington over the profile.
            for c in range(width):
                x1 = d1[i, c]
                i1 = inv1[c]
                i2 = inv2[c]
                elev = surface[i, c] + x1 * (d - x1) * inv_den
                b1[c] = (elev - (a + x1 * slope)) * np.sqrt(two_over_lam * (i1 + i2))
                b2[c] = (elev - a) * i1
                b3[c] = (elev - b) * i2
            s_a = -np.inf
            s_b = -np.inf
            s_m = -np.inf
            s_i = 0
            for c in range(width):
                if not ok[c]:
                    continue
                v = b1[c]
                if v > s_m or (v != v and s_m == s_m):
                    s_m = v
                    s_i = c
                t = b2[c]
                if t > s_a or t != t:
                    s_a = t
                t = b3[c]
                if t > s_b or t != t:
                    s_b = t
            stim[i] = s_a
            srim[i] = s_b
            v_max[i] = s_m
            i_max[i] = s_i
        return stim, srim, v_max, i_max, hstd, hsrd

    @numba.njit(cache=True, nogil=True, error_model="numpy")
    def bullington_reductions_nb(d1, interior, ha, hb, length, lam, k, radius):  # pragma: no cover
        n_paths, width = d1.shape
        stim = np.full(n_paths, -np.inf)
        srim = np.full(n_paths, -np.inf)
        v_max = np.full(n_paths, -np.inf)
        b1 = np.empty(width)
        b2 = np.empty(width)
        b3 = np.empty(width)
        ok = np.empty(width, dtype=np.bool_)
        for i in range(n_paths):
            a = ha[i]
            b = hb[i]
            d = length[i]
            inv_den = 1.0 / (2.0 * k[i] * radius)
            slope = (b - a) * (1.0 / d)
            two_over_lam = 2.0 / lam[i]
            for c in range(width):
                x1 = d1[i, c]
                x2 = d - x1
                ok[c] = interior[i, c] & (x1 > 0.0) & (x2 > 0.0)
                i1 = 1.0 / x1
                i2 = 1.0 / x2
                elev = x1 * x2 * inv_den
                b1[c] = (elev - a) * i1
                b2[c] = (elev - b) * i2
                b3[c] = (elev - (a + x1 * slope)) * np.sqrt(two_over_lam * (i1 + i2))
            s_a = -np.inf
            s_b = -np.inf
            s_m = -np.inf
            for c in range(width):
                if not ok[c]:
                    continue
                t = b1[c]
                if t > s_a or t != t:
                    s_a = t
                t = b2[c]
                if t > s_b or t != t:
                    s_b = t
                t = b3[c]
                if t > s_m or t != t:
                    s_m = t
            stim[i] = s_a
            srim[i] = s_b
            v_max[i] = s_m
        return stim, srim, v_max

    @numba.njit(cache=True, nogil=True, error_model="numpy")
    def clearance_reductions_nb(d1, surface, interior, length, ha, hb, lam, den, fraction):  # pragma: no cover
        n_paths, width = d1.shape
        worst = np.zeros(n_paths, dtype=np.int64)
        worst_frac = np.empty(n_paths)
        worst_gap = np.empty(n_paths)
        los = np.empty(n_paths, dtype=np.bool_)
        shortfall = np.full(n_paths, -np.inf)
        fb = np.empty(width)
        gb = np.empty(width)
        qb = np.empty(width)
        for i in range(n_paths):
            d = length[i]
            a = ha[i]
            rise = hb[i] - a
            la = lam[i]
            for c in range(width):
                x1 = d1[i, c]
                x2 = max(d - x1, 0.0)
                s = x1 + x2
                r2 = la * x1 * x2 / s
                f1 = np.sqrt(r2 if s > 0 else 0.0)
                gap = (a + rise * x1 / d) - (surface[i, c] + x1 * x2 / den)
                fb[c] = f1
                gb[c] = gap
                qb[c] = gap / f1
            best = np.inf
            idx = 0
            g_min = np.inf
            short = -np.inf
            for c in range(width):
                if not interior[i, c]:
                    continue
                f1 = fb[c]
                gap = gb[c]
                if f1 > 0 and qb[c] < best:
                    best = qb[c]
                    idx = c
                if gap < g_min or gap != gap:
                    g_min = gap
                t = fraction * f1 - gap
                if t > short or t != t:
                    short = t
            if not interior[i, idx]:
                worst_frac[i] = np.inf
            elif fb[idx] > 0:
                worst_frac[i] = qb[idx]
            else:
                worst_frac[i] = np.nan
            worst[i] = idx
            worst_gap[i] = gb[idx]
            los[i] = g_min > 0.0
            shortfall[i] = short
        return worst, worst_frac, worst_gap, los, shortfall

    @numba.njit(cache=True, nogil=True, error_model="numpy")
    def summit_dips_nb(elev, ip, ep):  # pragma: no cover - compiled
        n_paths, n_cols = elev.shape
        dip = np.empty((n_paths, n_cols))
        for p in range(n_paths):
            i = ip[p]
            e = ep[p]
            for j in range(n_cols):
                dip[p, j] = -np.inf
            low = np.inf
            for j in range(i - 1, -1, -1):
                z = elev[p, j]
                dip[p, j] = (z if z < e else e) - low
                if z < low:
                    low = z
            low = np.inf
            for j in range(i + 1, n_cols):
                z = elev[p, j]
                dip[p, j] = (z if z < e else e) - low
                if z < low:
                    low = z
        return dip

    return {"hermite": hermite_nb, "affine_gather": affine_gather_nb,
            "diffraction_reductions": diffraction_reductions_nb, "bullington_reductions": bullington_reductions_nb,
            "clearance_reductions": clearance_reductions_nb, "summit_dips": summit_dips_nb}


# ---------------------------------------------------------------- dispatch

def hermite_paths(
    distance_m: np.ndarray, offsets: np.ndarray, step_m: np.ndarray,
    lat: np.ndarray, lon: np.ndarray, dlat: np.ndarray, dlon: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Interpolated latitude and longitude of samples (see :func:`hermite_numpy`)."""
    if use_numba(distance_m.size):
        k = _numba_kernels()
        return k["hermite"](np.ascontiguousarray(distance_m), offsets, step_m, lat, lon, dlat, dlon)
    return hermite_numpy(distance_m, offsets, step_m, lat, lon, dlat, dlon)


def affine_gather(
    cells: StoredCells, x: np.ndarray, y: np.ndarray,
    transform: tuple[float, ...], width: int, height: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Bilinear elevation from stored cells at CRS points ``x``, ``y`` (1-D).

    Returns ``(values, inside)``: ``inside`` is False for points beyond the
    raster's outer edge (value NaN).  ``width``/``height``: the whole raster's.
    """
    if use_numba(x.size):
        k = _numba_kernels()
        a, b, c, d, e, f = (float(v) for v in transform)
        return k["affine_gather"](
            cells.tiles, cells.height, cells.width, int(cells.row0), int(cells.col0),
            np.ascontiguousarray(x, dtype=float), np.ascontiguousarray(y, dtype=float),
            a, b, c, d, e, f, int(width), int(height), float(cells.factor),
            0.0 if cells.nodata is None else float(cells.nodata), cells.nodata is not None,
        )
    return affine_gather_numpy(cells, x, y, transform, width, height)


def _columns(*arrays) -> tuple[np.ndarray, ...]:
    return tuple(np.ascontiguousarray(np.asarray(a, dtype=float).reshape(-1)) for a in arrays)


def diffraction_reductions(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray, smooth: bool = True,
) -> tuple[np.ndarray, ...]:
    """Reductions of profiles for the Bullington-family methods (see :func:`diffraction_reductions_numpy`)."""
    if use_numba(d1.size):
        return _numba_kernels()["diffraction_reductions"](
            np.ascontiguousarray(d1, dtype=float), np.ascontiguousarray(surface, dtype=float),
            np.ascontiguousarray(interior, dtype=np.bool_), *_columns(ha, hb, length, lam, k), EARTH_RADIUS_M,
            bool(smooth),
        )
    return diffraction_reductions_numpy(d1, surface, interior, ha, hb, length, lam, k, smooth)


def bullington_reductions(
    d1: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Bullington reductions over a bare smooth earth (see :func:`bullington_reductions_numpy`)."""
    if use_numba(d1.size):
        return _numba_kernels()["bullington_reductions"](
            np.ascontiguousarray(d1, dtype=float), np.ascontiguousarray(interior, dtype=np.bool_),
            *_columns(ha, hb, length, lam, k), EARTH_RADIUS_M,
        )
    return bullington_reductions_numpy(d1, interior, ha, hb, length, lam, k)


def clearance_reductions(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, length: np.ndarray,
    ha: np.ndarray, hb: np.ndarray, lam: np.ndarray, bulge_den: float, fraction: float | None,
) -> tuple[np.ndarray, ...] | None:
    """Worst point, line of sight and shortfall of large batches in one compiled pass, or None.

    The arithmetic is that of :func:`profiler.geometry.clearance` (bulge d1 d2 /
    ``bulge_den``, ``bulge_den`` = 2 k a; F1 = sqrt(lam d1 d2 / (d1 + d2))), in
    the same order, so the numbers are the same bits; None when the batch is
    small or numba is missing (the caller then uses whole arrays).
    """
    if not use_numba(d1.size):
        return None
    return _numba_kernels()["clearance_reductions"](
        np.ascontiguousarray(d1, dtype=float), np.ascontiguousarray(surface, dtype=float),
        np.ascontiguousarray(interior, dtype=np.bool_), *_columns(length, ha, hb, lam),
        float(bulge_den), 0.0 if fraction is None else float(fraction),
    )


def summit_dips(elev: np.ndarray, ip: np.ndarray, ep: np.ndarray) -> np.ndarray:
    """Dip between each sample and the main edge (see :func:`summit_dips_numpy`), m, (P, N)."""
    if use_numba(elev.size):
        return _numba_kernels()["summit_dips"](
            np.ascontiguousarray(elev, dtype=float), np.ascontiguousarray(ip, dtype=np.int64),
            np.ascontiguousarray(ep, dtype=float))
    return summit_dips_numpy(elev, ip, ep)


def warm_up(block_dtypes: tuple = (np.float64,)) -> None:
    """Load (or compile) the numba kernels for these cell types now, not on the first big batch."""
    if os.environ.get("TERRAHOP_NO_NUMBA"):
        return
    k = _numba_kernels()
    if k is None:
        return
    one = np.zeros((1, 2))
    k["hermite"](one, np.array([0, 2], dtype=np.int64), np.ones(1), np.zeros(2), np.zeros(2),
                 np.zeros(2), np.zeros(2))
    for dt in dict.fromkeys(np.dtype(d) for d in block_dtypes):
        k["affine_gather"](np.zeros((1, 1, TILE, TILE), dtype=dt), 2, 2, 0, 0, np.zeros(1), np.zeros(1),
                           1.0, 0.0, 0.0, 0.0, -1.0, 0.0, 2, 2, 1.0, 0.0, False)
    col = np.ones(1)
    for smooth in (True, False):
        k["diffraction_reductions"](np.array([[0.0, 1.0, 2.0]]), np.zeros((1, 3)), np.ones((1, 3), dtype=np.bool_),
                                    col, col, 2.0 * col, col, col, EARTH_RADIUS_M, smooth)
    k["bullington_reductions"](np.array([[0.0, 1.0, 2.0]]), np.ones((1, 3), dtype=np.bool_),
                               col, col, 2.0 * col, col, col, EARTH_RADIUS_M)
    k["clearance_reductions"](np.array([[0.0, 1.0, 2.0]]), np.zeros((1, 3)), np.ones((1, 3), dtype=np.bool_),
                              2.0 * col, col, col, col, 1.0, 0.0)
    k["summit_dips"](np.zeros((1, 3)), np.ones(1, dtype=np.int64), np.zeros(1))
