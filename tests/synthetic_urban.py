"""Small synthetic rasters and vector layers for the rooftop and urban tests (invented data)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

#: A flat test area in UTM zone 27S (invented; open ocean in reality).
CRS = "EPSG:32727"
X0_M, Y0_M = 600_000.0, 6_620_000.0
CELL_M = 10.0
SIZE = 300  # cells: 3 km x 3 km


def utm_to_lonlat(x, y):
    from pyproj import Transformer

    lon, lat = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True).transform(x, y)
    return lon, lat


def write_raster(path: Path, z: np.ndarray, *, crs=CRS, cell_m: float = CELL_M) -> Path:
    """Write ``z`` (rows north to south) with its lower-left corner at (X0_M, Y0_M)."""
    import rasterio
    from rasterio.transform import from_origin

    with rasterio.open(
        path, "w", driver="GTiff", width=z.shape[1], height=z.shape[0], count=1, dtype="float32",
        crs=crs, transform=from_origin(X0_M, Y0_M + z.shape[0] * cell_m, cell_m, cell_m),
    ) as dst:
        dst.write(z.astype(np.float32), 1)
    return path


def flat_dtm(path: Path, elevation_m: float = 100.0, **kw) -> Path:
    return write_raster(path, np.full((SIZE, SIZE), elevation_m), **kw)


def write_layer(path: Path, geoms, *, crs=CRS, layer: str | None = None, **columns) -> Path:
    import geopandas as gpd

    gdf = gpd.GeoDataFrame(dict(columns), geometry=list(geoms), crs=crs)
    gdf.to_file(path, layer=layer, driver="GPKG" if str(path).endswith(".gpkg") else None)
    return path


def site_lonlat(x_m: float, y_m: float) -> tuple[float, float]:
    """WGS84 (lat, lon) of a point given in metres from the corner of the test area."""
    lon, lat = utm_to_lonlat(X0_M + x_m, Y0_M + y_m)
    return float(lat), float(lon)
