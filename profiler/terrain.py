"""Elevation model: one or many rasters of any GDAL format and any CRS.

Points are given as WGS84 longitude/latitude in degrees, transformed to each
raster's CRS with pyproj, and interpolated bilinearly between cell centres.
Only the window of cells around the requested points is read, so checking
one link over a national mosaic reads a few kilobytes.  Several rasters act
as one surface: for each point the first raster that covers it with data wins.
Heights are returned in metres in the raster's own vertical datum.
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from functools import cached_property
from typing import Iterable, Sequence

import numpy as np
from numpy.typing import ArrayLike

from .errors import DataError, DataFileError, InputError
from .units import FEET_TO_M

__all__ = ["RasterSource", "ElevationModel", "VERTICAL_UNITS", "open_elevation"]

#: Vertical units a raster may be declared in, and their factor to metres.
VERTICAL_UNITS = {
    "m": 1.0,
    "metre": 1.0,
    "meter": 1.0,
    "ft": FEET_TO_M,
    "foot": FEET_TO_M,
    "feet": FEET_TO_M,
    "us-ft": 1200.0 / 3937.0,
}


def _unit_factor(unit: str, where: str) -> float:
    key = unit.strip().lower().replace("_", "-").replace(" ", "-")
    if key in ("us-survey-foot", "us-survey-feet", "ftus"):
        key = "us-ft"
    if key not in VERTICAL_UNITS:
        raise InputError(
            f"{where}: unknown vertical unit {unit!r}; use one of m, ft, us-ft"
        )
    return VERTICAL_UNITS[key]


@dataclass(frozen=True)
class RasterSource:
    """What we know of one elevation raster, without its cells."""

    path: str
    crs_wkt: str
    crs_name: str
    is_geographic: bool
    transform: tuple[float, float, float, float, float, float]
    width: int
    height: int
    nodata: float | None
    unit_factor_m: float
    vertical_unit: str
    bounds: tuple[float, float, float, float]
    vertical_datum: str

    @property
    def cell_size(self) -> tuple[float, float]:
        """Cell width and height in CRS units."""
        a, b, _, d, e, _ = self.transform
        return float(np.hypot(a, d)), float(np.hypot(b, e))


def _describe_vertical_datum(crs) -> str:
    try:
        if crs.is_compound:
            for sub in crs.sub_crs_list:
                if sub.is_vertical:
                    return sub.name
    except Exception:  # pragma: no cover - defensive; pyproj CRS quirks
        pass
    return "as the raster (not stated in the file)"


def _open_source(path: str, vertical_unit: str | None) -> RasterSource:
    import rasterio
    from rasterio.errors import RasterioIOError

    if not path.startswith(("/vsi", "http://", "https://", "s3://")) and not os.path.exists(path):
        raise DataFileError(f"elevation raster not found: {path}")
    try:
        with rasterio.open(path) as src:
            if src.crs is None:
                raise DataError(
                    f"elevation raster {path} has no coordinate reference system; "
                    "assign one (e.g. gdal_edit.py -a_srs EPSG:4326) and try again"
                )
            if src.count < 1:
                raise DataError(f"elevation raster {path} has no bands")
            from pyproj import CRS

            crs = CRS.from_wkt(src.crs.to_wkt())
            band_unit = (src.units[0] if src.units else None) or ""
            if vertical_unit is not None:
                factor = _unit_factor(vertical_unit, f"vertical unit for {path}")
                unit_name = vertical_unit
            elif band_unit.strip():
                try:
                    factor = _unit_factor(band_unit, f"band unit of {path}")
                    unit_name = band_unit
                except InputError:
                    factor, unit_name = 1.0, "m"
            else:
                factor, unit_name = 1.0, "m"
            return RasterSource(
                path=path,
                crs_wkt=crs.to_wkt(),
                crs_name=crs.name,
                is_geographic=bool(crs.is_geographic),
                transform=tuple(src.transform)[:6],
                width=src.width,
                height=src.height,
                nodata=None if src.nodata is None else float(src.nodata),
                unit_factor_m=factor,
                vertical_unit=unit_name,
                bounds=tuple(src.bounds),
                vertical_datum=_describe_vertical_datum(crs),
            )
    except RasterioIOError as exc:
        raise DataFileError(f"cannot read {path} as an elevation raster: {exc}") from None


class ElevationModel:
    """One surface from one or many elevation rasters.

    Parameters
    ----------
    paths
        Raster files (GeoTIFF, VRT, any GDAL format) in any CRS.  Where they
        overlap, the earlier one wins.
    vertical_unit
        Unit of the stored heights (``"m"``, ``"ft"``, ``"us-ft"``); None reads
        the band's unit metadata and falls back to metres.
    nodata_fill_m
        Height in metres to use where a raster holds nodata; None (default)
        leaves such points as NaN so the caller can refuse them.
    """

    def __init__(
        self,
        paths: Sequence[str | os.PathLike],
        *,
        vertical_unit: str | None = None,
        nodata_fill_m: float | None = None,
    ) -> None:
        paths = [os.fspath(p) for p in paths]
        if not paths:
            raise InputError("no elevation raster given; pass at least one --dem FILE")
        self.sources: tuple[RasterSource, ...] = tuple(
            _open_source(p, vertical_unit) for p in paths
        )
        self.nodata_fill_m = nodata_fill_m
        self._datasets: dict[str, object] = {}
        self._cache: dict[str, tuple[int, int, np.ndarray]] = {}

    # Workers (processes, Dask) get the paths and reopen the files themselves.
    def __getstate__(self) -> dict:
        state = self.__dict__.copy()
        state["_datasets"] = {}
        state["_cache"] = {}
        state.pop("_transformers", None)
        return state

    def close(self) -> None:
        """Close open raster handles and drop cached cells."""
        for ds in self._datasets.values():
            ds.close()  # type: ignore[attr-defined]
        self._datasets.clear()
        self._cache.clear()

    def __enter__(self) -> "ElevationModel":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @cached_property
    def _transformers(self) -> list:
        from pyproj import CRS, Transformer

        return [
            Transformer.from_crs("EPSG:4326", CRS.from_wkt(s.crs_wkt), always_xy=True)
            for s in self.sources
        ]

    def _dataset(self, path: str):
        ds = self._datasets.get(path)
        if ds is None:
            import rasterio

            ds = rasterio.open(path)
            self._datasets[path] = ds
        return ds

    def preload(self, max_cells: int = 200_000_000) -> None:
        """Read whole rasters into memory (up to ``max_cells`` cells in all) for reuse.

        Worth it when many paths will be sampled from the same rasters.
        """
        total = 0
        for s in self.sources:
            total += s.width * s.height
            if total > max_cells:
                break
            if s.path not in self._cache:
                self._cache[s.path] = (0, 0, self._read(s, 0, 0, s.height, s.width))

    def _read(self, s: RasterSource, row0: int, col0: int, nrows: int, ncols: int) -> np.ndarray:
        from rasterio.windows import Window

        ds = self._dataset(s.path)
        block = ds.read(1, window=Window(col0, row0, ncols, nrows), masked=True)
        data = block.astype(np.float64).filled(np.nan) * s.unit_factor_m
        return data

    def _pixel_coords(self, i: int, lon: np.ndarray, lat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        s = self.sources[i]
        x, y = self._transformers[i].transform(lon, lat)
        a, b, c, d, e, f = s.transform
        det = a * e - b * d
        xs = np.asarray(x, dtype=float) - c
        ys = np.asarray(y, dtype=float) - f
        col = (e * xs - b * ys) / det
        row = (-d * xs + a * ys) / det
        return col, row

    def sample(self, lon_deg: ArrayLike, lat_deg: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """Bilinear elevation in metres at WGS84 points.

        Returns ``(elevation_m, covered)``: elevation is NaN where no raster
        covers the point or the cells hold nodata (unless a fill is set);
        ``covered`` is False only where the point lies outside every raster.
        """
        lon = np.asarray(lon_deg, dtype=float)
        lat = np.asarray(lat_deg, dtype=float)
        shape = lon.shape
        lon, lat = lon.ravel(), lat.ravel()
        out = np.full(lon.shape, np.nan)
        covered = np.zeros(lon.shape, dtype=bool)
        todo = np.ones(lon.shape, dtype=bool)
        for i, s in enumerate(self.sources):
            if not todo.any():
                break
            idx = np.flatnonzero(todo)
            col, row = self._pixel_coords(i, lon[idx], lat[idx])
            inside = (col >= 0) & (col <= s.width) & (row >= 0) & (row <= s.height)
            if not inside.any():
                continue
            idx, col, row = idx[inside], col[inside], row[inside]
            covered[idx] = True
            values = self._bilinear(s, col, row)
            good = ~np.isnan(values)
            out[idx[good]] = values[good]
            todo[idx[good]] = False
        if self.nodata_fill_m is not None:
            out = np.where(covered & np.isnan(out), float(self.nodata_fill_m), out)
        return out.reshape(shape), covered.reshape(shape)

    def _bilinear(self, s: RasterSource, col: np.ndarray, row: np.ndarray) -> np.ndarray:
        # Cell centres sit at half-integer pixel coordinates; beyond the outer
        # centres the edge value is held (points up to half a cell outside).
        x = np.clip(col - 0.5, 0.0, s.width - 1.0)
        y = np.clip(row - 0.5, 0.0, s.height - 1.0)
        x0 = np.floor(x).astype(np.int64)
        y0 = np.floor(y).astype(np.int64)
        x0 = np.minimum(x0, max(s.width - 2, 0))
        y0 = np.minimum(y0, max(s.height - 2, 0))
        cached = self._cache.get(s.path)
        if cached is not None:
            r0, c0, block = cached
        else:
            r0, c0 = int(y0.min()), int(x0.min())
            r1 = min(int(y0.max()) + 2, s.height)
            c1 = min(int(x0.max()) + 2, s.width)
            block = self._read(s, r0, c0, r1 - r0, c1 - c0)
        return bilinear_gather(block, x - c0, y - r0, x0 - c0, y0 - r0)

    def cell_size_m(self, lon_deg: float, lat_deg: float) -> float:
        """Smallest ground size in metres of a cell of the finest raster covering the point."""
        from .geodesy import WGS84

        sizes = []
        for i, s in enumerate(self.sources):
            col, row = self._pixel_coords(i, np.array([lon_deg]), np.array([lat_deg]))
            if not (0 <= col[0] <= s.width and 0 <= row[0] <= s.height):
                continue
            a, b, c, d, e, f = s.transform
            x0 = c + a * col[0] + b * row[0]
            y0 = f + d * col[0] + e * row[0]
            pts_x = np.array([x0, x0 + a, x0 + b])
            pts_y = np.array([y0, y0 + d, y0 + e])
            from pyproj import CRS, Transformer

            back = Transformer.from_crs(CRS.from_wkt(s.crs_wkt), "EPSG:4326", always_xy=True)
            lo, la = back.transform(pts_x, pts_y)
            _, _, dist = WGS84.inv(np.repeat(lo[0], 2), np.repeat(la[0], 2), lo[1:], la[1:])
            sizes.append(float(np.min(dist)))
        if not sizes:
            return float("nan")
        return min(sizes)

    def checksum(self, path: str) -> str:
        """SHA-256 of a raster file, hex (for provenance)."""
        h = hashlib.sha256()
        with open(path, "rb") as fh:
            for chunk in iter(lambda: fh.read(1 << 20), b""):
                h.update(chunk)
        return h.hexdigest()

    def describe(self) -> list[dict]:
        """Provenance of each raster: path, CRS, cell size, units, vertical datum."""
        return [
            {
                "path": s.path,
                "crs": s.crs_name,
                "cell_size": list(s.cell_size),
                "cell_size_units": "degree" if s.is_geographic else "crs unit",
                "vertical_unit": s.vertical_unit,
                "vertical_datum": s.vertical_datum,
                "size_px": [s.width, s.height],
            }
            for s in self.sources
        ]


def bilinear_gather(
    block: np.ndarray, x: np.ndarray, y: np.ndarray, x0: np.ndarray, y0: np.ndarray
) -> np.ndarray:
    """Bilinear interpolation of ``block`` at fractional cell-centre coordinates.

    ``x``, ``y`` are positions in cell-centre units within ``block``;
    ``x0``, ``y0`` the integer lower-left neighbours.  Any NaN neighbour makes the result NaN.
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


def open_elevation(
    paths: Iterable[str | os.PathLike],
    *,
    vertical_unit: str | None = None,
    nodata_fill_m: float | None = None,
) -> ElevationModel:
    """Open rasters as one :class:`ElevationModel` (convenience)."""
    return ElevationModel(list(paths), vertical_unit=vertical_unit, nodata_fill_m=nodata_fill_m)
