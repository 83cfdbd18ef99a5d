"""Water polygons for the reflection search (``--water FILE``): reading them and marking path samples.

An edge module: it reads a vector file (GeoPackage, GeoJSON, Shapefile; any
CRS, refused without one) with geopandas and returns a boolean mask over the
profiles' samples; :mod:`profiler.reflection` takes the mask.
"""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import DataError, DataFileError

__all__ = ["WaterLayer", "read_water_layer", "cached_water_layer"]


@dataclass(frozen=True)
class WaterLayer:
    """The union of a file's water polygons, in the file's CRS."""

    path: str
    geometry: Any  # shapely geometry
    crs: Any  # pyproj.CRS
    features: int

    def mask(self, lat_deg: np.ndarray, lon_deg: np.ndarray, n_samples: np.ndarray | None = None) -> np.ndarray:
        """True where a sample (latitude, longitude, WGS84) lies in or on a water polygon; (paths, samples)."""
        import shapely
        from pyproj import Transformer

        lat = np.asarray(lat_deg, dtype=float)
        lon = np.asarray(lon_deg, dtype=float)
        to_layer = Transformer.from_crs("EPSG:4326", self.crs, always_xy=True)
        x, y = to_layer.transform(lon, lat)
        shapely.prepare(self.geometry)
        inside = shapely.intersects_xy(self.geometry, np.asarray(x).ravel(), np.asarray(y).ravel()).reshape(lat.shape)
        if n_samples is not None:
            inside &= np.arange(lat.shape[1])[None, :] < np.asarray(n_samples)[:, None]
        return inside


def read_water_layer(path: str) -> WaterLayer:
    """Read a water layer; DataFileError when missing or unreadable, DataError without a CRS or polygons."""
    p = os.fspath(path)
    if not os.path.isfile(p):
        raise DataFileError(f"water layer not found: {p}")
    try:
        import geopandas as gpd

        gdf = gpd.read_file(p, engine="pyogrio")
    except Exception as exc:  # pyogrio raises its own DataSourceError and others
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise DataFileError(f"cannot read water layer {p} as a vector file: {reason}") from None
    if gdf.crs is None:
        raise DataError(f"water layer {p} has no coordinate reference system; save it with one (e.g. EPSG:4326) "
                        "so its polygons can be placed on the paths")
    geoms = gdf.geometry[gdf.geometry.notna() & ~gdf.geometry.is_empty]
    polygons = geoms[geoms.geom_type.isin(["Polygon", "MultiPolygon"])]
    if len(polygons) == 0:
        raise DataError(f"water layer {p} holds no polygons (water must be areas, not lines or points)")
    import shapely

    union = shapely.union_all(shapely.make_valid(np.asarray(polygons.values)))
    return WaterLayer(path=p, geometry=union, crs=gdf.crs, features=len(polygons))


@functools.lru_cache(maxsize=4)
def cached_water_layer(path: str) -> WaterLayer:
    """:func:`read_water_layer`, kept per process (screening workers read it once)."""
    return read_water_layer(path)
