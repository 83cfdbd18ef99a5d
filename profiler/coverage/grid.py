"""The output grid of a coverage run and where each of its cells lies as seen from the hub.

Directions and distances from the hub come from PROJ's azimuthal equidistant
projection centred on the hub (ellipsoidal form: distance and azimuth from the
centre are those of the WGS84 geodesic).  Projecting every cell would cost
about a microsecond a point, so points are projected exactly on a coarse
lattice and interpolated bilinearly between its nodes: the projected
coordinates are smooth functions of the position, and the lattice is refined
until the interpolation error measured at the lattice's cell midpoints is
under :data:`LATTICE_TOLERANCE_M` (checked on every run, not assumed).
Pure computation on arrays (pyproj), no file I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ._kernels import lattice_interp

__all__ = ["Grid", "Lattice", "LATTICE_TOLERANCE_M", "aeqd_crs", "raster_grid", "hub_grid", "fold_lon"]

#: Largest interpolation error accepted for a lattice-mapped point, m (our own bound: far below any cell).
LATTICE_TOLERANCE_M = 0.01


def aeqd_crs(lat_deg: float, lon_deg: float) -> str:
    """PROJ string of the azimuthal equidistant projection centred on a point (WGS84)."""
    return f"+proj=aeqd +lat_0={lat_deg:.10f} +lon_0={lon_deg:.10f} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs"


@dataclass(frozen=True)
class Grid:
    """A north-up raster grid: CRS (WKT or PROJ string), affine (a, b, c, d, e, f), width, height."""

    crs: str
    transform: tuple[float, float, float, float, float, float]
    width: int
    height: int

    @property
    def n_cells(self) -> int:
        return self.width * self.height

    def centres(self, rows: np.ndarray, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre coordinates in the grid's CRS."""
        a, b, c, d, e, f = self.transform
        x = cols + 0.5
        y = rows + 0.5
        return a * x + b * y + c, d * x + e * y + f

    @property
    def cell_size(self) -> tuple[float, float]:
        a, b, _, d, e, _ = self.transform
        return float(math.hypot(a, d)), float(math.hypot(b, e))


class Lattice:
    """Coordinates of one CRS mapped to another by exact projection on a lattice plus bilinear interpolation.

    ``bounds`` (xmin, ymin, xmax, ymax) in the source CRS; the lattice is
    refined until the error at its cell midpoints is under ``tolerance``
    (measured in the target CRS's units scaled by ``metres_per_unit``).
    """

    def __init__(self, src: str, dst: str, bounds: tuple[float, float, float, float], step: float,
                 metres_per_unit: float = 1.0, tolerance_m: float = LATTICE_TOLERANCE_M,
                 lon_about: float | None = None) -> None:
        from pyproj import Transformer

        tr = Transformer.from_crs(src, dst, always_xy=True)
        x0, y0, x1, y1 = bounds
        for _ in range(8):
            nx = max(int(math.ceil((x1 - x0) / step)), 1) + 1
            ny = max(int(math.ceil((y1 - y0) / step)), 1) + 1
            xs = np.linspace(x0, x1, nx)
            ys = np.linspace(y0, y1, ny)
            gx, gy = np.meshgrid(xs, ys)
            u, v = tr.transform(gx, gy)
            u = _unwrap(np.asarray(u, dtype=float), lon_about)
            self.x0, self.y0 = x0, y0
            self.dx = (x1 - x0) / (nx - 1) if nx > 1 else 1.0
            self.dy = (y1 - y0) / (ny - 1) if ny > 1 else 1.0
            self.u, self.v = np.asarray(u, dtype=float), np.asarray(v, dtype=float)
            if not (np.isfinite(self.u).all() and np.isfinite(self.v).all()):
                raise InputError("the coverage area cannot be projected around the hub (too near a pole?)")
            mx = (xs[:-1] + xs[1:]) / 2.0 if nx > 1 else xs
            my = (ys[:-1] + ys[1:]) / 2.0 if ny > 1 else ys
            px, py = np.meshgrid(mx, my)
            eu, ev = tr.transform(px, py)
            eu = _unwrap(np.asarray(eu, dtype=float), lon_about)
            iu, iv = self(px.ravel(), py.ravel())
            err = np.hypot(iu - np.ravel(eu), iv - np.ravel(ev)) * metres_per_unit
            self.error_m = float(np.max(err)) if err.size else 0.0
            if self.error_m <= tolerance_m:
                return
            step /= 2.0
        raise InputError("the coverage area cannot be mapped finely enough around the hub (too near a pole?)")

    def __call__(self, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Interpolated target coordinates of source points (bilinear in the lattice)."""
        return lattice_interp(x, y, self.x0, self.y0, self.dx, self.dy, self.u, self.v)


def _unwrap(lon: np.ndarray, about: float | None) -> np.ndarray:
    """Longitudes within 180 degrees of ``about`` (so a lattice across the antimeridian stays smooth)."""
    if about is None:
        return lon
    return about + np.mod(lon - about + 180.0, 360.0) - 180.0


def fold_lon(lon: np.ndarray) -> np.ndarray:
    """Longitudes folded into -180..180 degrees (returned as they are when all already lie there)."""
    lon = np.asarray(lon, dtype=float)
    if lon.size and lon.min() >= -180.0 and lon.max() < 180.0:
        return lon  # the usual case, far from the antimeridian: no rounding added
    return np.mod(lon + 180.0, 360.0) - 180.0


def hub_grid(lat_deg: float, lon_deg: float, radius_m: float, cell_m: float) -> Grid:
    """A square grid of ``cell_m`` cells in the hub's azimuthal equidistant projection, covering the disk."""
    n = int(math.ceil(radius_m / cell_m))
    return Grid(aeqd_crs(lat_deg, lon_deg), (cell_m, 0.0, -n * cell_m, 0.0, -cell_m, n * cell_m), 2 * n, 2 * n)


def raster_grid(source, lat_deg: float, lon_deg: float, radius_m: float) -> tuple[Grid, bool]:
    """The terrain raster's own grid cut to the disk's bounding box, and whether the disk overruns the raster.

    ``source``: a :class:`profiler.terrain.RasterSource` (north-up, no rotation).
    """
    from pyproj import Transformer

    a, b, c, d, e, f = source.transform
    if b != 0.0 or d != 0.0:
        raise InputError(f"{source.path}: a rotated raster grid cannot be the coverage grid; give --cell-m")
    tr = Transformer.from_crs(aeqd_crs(lat_deg, lon_deg), source.crs_wkt, always_xy=True)
    ang = np.linspace(0.0, 2.0 * np.pi, 721)
    # The circle and its enclosing square: the box must hold the whole disk in any CRS.
    xs = np.concatenate([radius_m * np.sin(ang), radius_m * np.array([-1, 1, 1, -1])])
    ys = np.concatenate([radius_m * np.cos(ang), radius_m * np.array([-1, -1, 1, 1])])
    u, v = tr.transform(xs, ys)
    cols = (np.asarray(u) - c) / a
    rows = (np.asarray(v) - f) / e
    c0, c1 = int(math.floor(np.min(cols))), int(math.ceil(np.max(cols)))
    r0, r1 = int(math.floor(np.min(rows))), int(math.ceil(np.max(rows)))
    overruns = c0 < 0 or r0 < 0 or c1 > source.width or r1 > source.height
    c0, r0 = max(c0, 0), max(r0, 0)
    c1, r1 = min(c1, source.width), min(r1, source.height)
    if c1 <= c0 or r1 <= r0:
        raise InputError(f"the coverage disk lies outside the terrain raster {source.path}")
    grid = Grid(source.crs_wkt, (a, 0.0, c + c0 * a, 0.0, e, f + r0 * e), c1 - c0, r1 - r0)
    return grid, overruns
