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

from ._sampling_kernels import StoredCells, affine_gather, cell_numpy, gather_bilinear, pixel_numpy
from .errors import DataError, DataFileError, InputError
from .raster_errors import _explain, _gdal_cause, _is_remote, _read_errors, missing_vrt_sources, raster_read_error
from .geodesy import WGS84
from .units import FEET_TO_M

__all__ = ["RasterSource", "ElevationModel", "VERTICAL_UNITS", "open_elevation", "raster_read_error",
           "missing_vrt_sources"]

#: Vertical units a raster may be declared in, and their factor to metres.
VERTICAL_UNITS = {
    "m": 1.0,
    "metre": 1.0,
    "meter": 1.0,
    "metres": 1.0,
    "meters": 1.0,
    "ft": FEET_TO_M,
    "foot": FEET_TO_M,
    "feet": FEET_TO_M,
    "us-ft": 1200.0 / 3937.0,
}

#: What a raster says when it states no vertical datum.
DATUM_NOT_STATED = "as the raster (not stated in the file)"


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
    return DATUM_NOT_STATED


def _open_source(path: str, vertical_unit: str | None) -> RasterSource:
    import rasterio
    from rasterio.errors import RasterioIOError

    if not _is_remote(path) and not os.path.exists(path):
        raise DataFileError(f"elevation raster not found: {path}")
    missing = missing_vrt_sources(path)
    if missing:
        more = f" (and {len(missing) - 1} more)" if len(missing) > 1 else ""
        raise DataFileError(f"elevation raster {path}: its source file {missing[0]}{more} does not exist")
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
                    # Reading an unknown tag as metres gave ground 31 km high for "cm".
                    raise DataError(
                        f"elevation raster {path}: band unit {band_unit!r} is not one terrahop knows "
                        f"(known: {', '.join(VERTICAL_UNITS)}, US survey foot); say what the heights are "
                        "in with --vertical-unit m, ft or us-ft, or [terrain] vertical_unit in the link file, "
                        "after converting other units (e.g. gdal_calc.py for centimetres)"
                    ) from None
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
        raise DataFileError(f"cannot read {path} as an elevation raster: {_explain(_gdal_cause(exc))}") from None


def _check_one_datum(sources: Sequence[RasterSource]) -> None:
    """DataError when rasters state different vertical datums (they would be joined into one profile)."""
    stated: dict[str, str] = {}
    for s in sources:
        if s.vertical_datum != DATUM_NOT_STATED:
            stated.setdefault(s.vertical_datum, s.path)
    if len(stated) > 1:
        (d1, p1), (d2, p2) = list(stated.items())[:2]
        raise DataError(
            f"elevation rasters state different vertical datums ({d1} in {p1}, {d2} in {p2}); terrahop "
            "never joins datums silently: convert the rasters to one datum first "
            "(e.g. gdalwarp -s_srs <CRS+datum A> -t_srs <CRS+datum B> with the PROJ geoid grids)"
        )


def _wrap_x(s: RasterSource, x: np.ndarray) -> np.ndarray:
    """For a geographic raster, longitudes shifted by 360 degrees into its own span (-180..180 or 0..360).

    Points already inside the raster's west..west+360 span are returned bit for bit.
    """
    if not s.is_geographic:
        return x
    west = min(s.bounds[0], s.bounds[2])
    with np.errstate(invalid="ignore"):
        low, high = x < west, x >= west + 360.0
    if not (low.any() or high.any()):
        return x
    return np.where(low, x + 360.0, np.where(high, x - 360.0, x))


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

    #: Provenance of an open dataset fetched into the cache (profiler.terrain_sources), set by
    #: profiler.jobs when one of the rasters is its VRT; None otherwise.
    terrain_source: dict | None = None

    def __init__(
        self,
        paths: Sequence[str | os.PathLike],
        *,
        vertical_unit: str | None = None,
        nodata_fill_m: float | None = None,
    ) -> None:
        names: list[str] = [os.fspath(p) for p in paths]
        if not names:
            raise InputError("no elevation raster given; pass at least one --dem FILE")
        self.sources: tuple[RasterSource, ...] = tuple(
            _open_source(p, vertical_unit) for p in names
        )
        _check_one_datum(self.sources)
        if nodata_fill_m is not None:
            from .validation import check_number

            nodata_fill_m = check_number(nodata_fill_m, "nodata_fill_m")
        self.nodata_fill_m = nodata_fill_m
        self._datasets: dict[str, object] = {}
        self._cache: dict[str, StoredCells] = {}

    # Workers (processes, Dask) get the paths and reopen the files themselves.
    def __getstate__(self) -> dict:
        state = self.__dict__.copy()
        state["_datasets"] = {}
        state["_cache"] = {}
        state.pop("_transformers", None)
        state.pop("_back_transformers", None)
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

            try:
                ds = rasterio.open(path)
            except _read_errors() as exc:
                raise raster_read_error(path, exc) from None
            self._datasets[path] = ds
        return ds

    def _read_window(self, s: RasterSource, row0: int, col0: int, nrows: int, ncols: int):
        """Masked cells of a window; a damaged file or a missing VRT source gives one DataFileError."""
        from rasterio.windows import Window

        dataset = self._dataset(s.path)
        try:
            return dataset.read(1, window=Window(col0, row0, ncols, nrows), masked=True)
        except _read_errors() as exc:
            raise raster_read_error(s.path, exc) from None

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
                cells, factor, nodata = self._read_stored(s, 0, 0, s.height, s.width)
                self._cache[s.path] = StoredCells.from_array(cells, 0, 0, factor, nodata)

    def _read_stored(
        self, s: RasterSource, row0: int, col0: int, nrows: int, ncols: int
    ) -> tuple[np.ndarray, float, float | None]:
        """Cells as stored (e.g. int16, a quarter of float64) with their unit factor and nodata.

        Kept in the file's type when nodata is exactly the cells equal to the
        nodata value, else converted to float64 metres with NaN holes as
        :meth:`_read` does; the gather converts in the same way either way.
        """
        block = self._read_window(s, row0, col0, nrows, ncols)
        raw = np.ascontiguousarray(block.data)
        mask = np.ma.getmask(block)
        if mask is np.ma.nomask or not mask.any():
            return raw, s.unit_factor_m, None
        if s.nodata is not None and np.array_equal(mask, raw == raw.dtype.type(s.nodata)):
            return raw, s.unit_factor_m, float(raw.dtype.type(s.nodata))
        return block.astype(np.float64).filled(np.nan) * s.unit_factor_m, 1.0, None

    def _read(self, s: RasterSource, row0: int, col0: int, nrows: int, ncols: int) -> np.ndarray:
        block = self._read_window(s, row0, col0, nrows, ncols)
        data = block.astype(np.float64).filled(np.nan) * s.unit_factor_m
        return data

    def _pixel_coords(self, i: int, lon: np.ndarray, lat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x, y = self._transformers[i].transform(lon, lat)
        x = _wrap_x(self.sources[i], np.asarray(x, dtype=float))
        return pixel_numpy(x, np.asarray(y, dtype=float), self.sources[i].transform)

    def _sample_source(self, i: int, lon: np.ndarray, lat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Bilinear heights of one raster at 1-D points: ``(values, inside)``, NaN where none."""
        s = self.sources[i]
        x, y = self._transformers[i].transform(lon, lat)
        x = _wrap_x(s, np.asarray(x, dtype=float))
        y = np.asarray(y, dtype=float)
        cached = self._cache.get(s.path)
        if cached is not None:
            return affine_gather(cached, x, y, s.transform, s.width, s.height)
        col, row = pixel_numpy(x, y, s.transform)
        inside = (col >= 0) & (col <= s.width) & (row >= 0) & (row <= s.height)
        out = np.full(col.shape, np.nan)
        if inside.any():
            out[inside] = self._bilinear(s, col[inside], row[inside])
        return out, inside

    def covers(self, lon_deg: ArrayLike, lat_deg: ArrayLike) -> np.ndarray:
        """True where some raster covers the WGS84 point (no cells are read)."""
        lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
        lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
        out = np.zeros(lon.shape, dtype=bool)
        for i, s in enumerate(self.sources):
            col, row = self._pixel_coords(i, lon, lat)
            out |= (col >= 0) & (col <= s.width) & (row >= 0) & (row <= s.height)
        return out

    def total_cells(self) -> int:
        """Number of cells in all rasters (to decide whether to preload)."""
        return int(sum(s.width * s.height for s in self.sources))

    def sample(self, lon_deg: ArrayLike, lat_deg: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """Bilinear elevation in metres at WGS84 points.

        Returns ``(elevation_m, covered)``: elevation is NaN where no raster
        covers the point or the cells hold nodata (unless a fill is set);
        ``covered`` is False only where the point lies outside every raster.
        Rasters preloaded with :meth:`preload` are gathered by a compiled
        kernel for large batches (same numbers as the numpy path).
        """
        lon = np.asarray(lon_deg, dtype=float)
        lat = np.asarray(lat_deg, dtype=float)
        shape = lon.shape
        lon, lat = lon.ravel(), lat.ravel()
        out = np.full(lon.shape, np.nan)
        covered = np.zeros(lon.shape, dtype=bool)
        todo = np.ones(lon.shape, dtype=bool)
        for i, s in enumerate(self.sources):
            if i == 0:
                values, inside = self._sample_source(i, lon, lat)
                covered |= inside
                out = values
                todo = np.isnan(values)
                continue
            if not todo.any():
                break
            idx = np.flatnonzero(todo)
            values, inside = self._sample_source(i, lon[idx], lat[idx])
            if not inside.any():
                continue
            covered[idx[inside]] = True
            good = ~np.isnan(values)
            out[idx[good]] = values[good]
            todo[idx[good]] = False
        if self.nodata_fill_m is not None:
            out = np.where(covered & np.isnan(out), float(self.nodata_fill_m), out)
        return out.reshape(shape), covered.reshape(shape)

    def _bilinear(self, s: RasterSource, col: np.ndarray, row: np.ndarray) -> np.ndarray:
        # Cell centres sit at half-integer pixel coordinates; beyond the outer
        # centres the edge value is held (points up to half a cell outside).
        x, y, x0, y0 = cell_numpy(col, row, s.width, s.height)
        r0, c0 = int(y0.min()), int(x0.min())
        r1 = min(int(y0.max()) + 2, s.height)
        c1 = min(int(x0.max()) + 2, s.width)
        block = self._read(s, r0, c0, r1 - r0, c1 - c0)
        return gather_bilinear(block, x - c0, y - r0, x0 - c0, y0 - r0)

    def cell_size_m(self, lon_deg: float, lat_deg: float) -> float:
        """Smallest ground size in metres of a cell of the finest raster covering the point."""
        return float(self.cell_sizes_m(np.array([lon_deg]), np.array([lat_deg]))[0])

    @cached_property
    def _back_transformers(self) -> list:
        from pyproj import CRS, Transformer

        return [
            Transformer.from_crs(CRS.from_wkt(s.crs_wkt), "EPSG:4326", always_xy=True)
            for s in self.sources
        ]

    def cell_sizes_m(self, lon_deg: ArrayLike, lat_deg: ArrayLike) -> np.ndarray:
        """Ground size in metres of the finest raster cell at many points (NaN where none covers).

        The cell's two sides are measured on the WGS84 ellipsoid (pyproj.Geod.inv).
        """
        lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
        lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
        best = np.full(lon.shape, np.inf)
        for i, s in enumerate(self.sources):
            col, row = self._pixel_coords(i, lon, lat)
            inside = (col >= 0) & (col <= s.width) & (row >= 0) & (row <= s.height)
            if not inside.any():
                continue
            col, row = col[inside], row[inside]
            a, b, c, d, e, f = s.transform
            x0 = c + a * col + b * row
            y0 = f + d * col + e * row
            lo, la = self._back_transformers[i].transform(
                np.concatenate([x0, x0 + a, x0 + b]), np.concatenate([y0, y0 + d, y0 + e])
            )
            lo = np.asarray(lo, dtype=float).reshape(3, -1)
            la = np.asarray(la, dtype=float).reshape(3, -1)
            _, _, dist = WGS84.inv(np.tile(lo[0], 2), np.tile(la[0], 2), lo[1:].ravel(), la[1:].ravel())
            size = np.min(np.asarray(dist, dtype=float).reshape(2, -1), axis=0)
            best[inside] = np.minimum(best[inside], size)
        return np.where(np.isfinite(best), best, np.nan)

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
    """Bilinear interpolation of ``block`` (see :func:`profiler._sampling_kernels.gather_bilinear`)."""
    return gather_bilinear(block, x, y, x0, y0)


def open_elevation(
    paths: Iterable[str | os.PathLike],
    *,
    vertical_unit: str | None = None,
    nodata_fill_m: float | None = None,
) -> ElevationModel:
    """Open rasters as one :class:`ElevationModel` (convenience)."""
    return ElevationModel(list(paths), vertical_unit=vertical_unit, nodata_fill_m=nodata_fill_m)
