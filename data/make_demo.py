"""Generate the invented demo terrain of terrahop.

Everything here is made up: the terrain is a sum of smooth shapes and seeded
fractal noise, placed in open ocean (South Atlantic, UTM zone 27S) so that it
cannot be mistaken for a real landscape.  The place names are invented too.

Run:  python data/make_demo.py      (rewrites data/demo/terrain.tif and data/demo/lake.gpkg)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
OUT = HERE / "demo" / "terrain.tif"
LAKE_OUT = HERE / "demo" / "lake.gpkg"

#: UTM zone 27 south; the demo area's lower-left corner and cell size, metres.
CRS = "EPSG:32727"
X0_M, Y0_M = 500_000.0, 6_620_000.0
CELL_M = 25.0
WIDTH, HEIGHT = 960, 720  # 24 km x 18 km


def fractal_noise(rng: np.random.Generator, shape: tuple[int, int], octaves: int = 6) -> np.ndarray:
    """Sum of upsampled random grids, amplitude halving per octave (values about -1..1)."""
    from scipy.ndimage import zoom

    out = np.zeros(shape)
    amp = 1.0
    for o in range(octaves):
        n = 4 * 2**o
        grid = rng.standard_normal((n + 1, n + 1))
        up = zoom(grid, (shape[0] / (n + 1), shape[1] / (n + 1)), order=3)
        out += amp * up[: shape[0], : shape[1]]
        amp *= 0.5
    return out / 2.0


def make_terrain() -> np.ndarray:
    """Heights in metres above the datum, rows from north to south."""
    rng = np.random.default_rng(20261201)
    y, x = np.mgrid[0:HEIGHT, 0:WIDTH].astype(float)
    xk = x * CELL_M / 1000.0  # km east of the west edge
    yk = (HEIGHT - 1 - y) * CELL_M / 1000.0  # km north of the south edge
    z = 120.0 + 4.0 * yk  # valley floor, rising gently to the north
    # The main ridge ("Corrow Ridge"), running north-north-east at about x = 12 km.
    ridge_axis = 12.0 + 0.15 * (yk - 9.0)
    z += 260.0 * np.exp(-(((xk - ridge_axis) / 1.4) ** 2)) * (0.75 + 0.25 * np.sin(yk / 2.5))
    # A low spur west of the ridge ("Tallis Spur").
    z += 70.0 * np.exp(-(((xk - 6.5) / 1.1) ** 2 + ((yk - 6.0) / 2.2) ** 2))
    # Eastern upland.
    z += 90.0 / (1.0 + np.exp(-(xk - 19.5) / 1.2))
    # A lake basin in the south-west ("Mere Hollow"), flat water at 112 m.
    lake = ((xk - 3.5) / 2.0) ** 2 + ((yk - 2.5) / 1.4) ** 2 < 1.0
    z += 18.0 * fractal_noise(rng, z.shape)
    z = np.where(lake, 112.0, z)
    return np.round(z, 1).astype(np.float32)


def write(path: Path = OUT) -> Path:
    """Write the demo terrain as a tiled, compressed GeoTIFF with its CRS."""
    import rasterio
    from rasterio.transform import from_origin

    z = make_terrain()
    path.parent.mkdir(parents=True, exist_ok=True)
    profile = dict(
        driver="GTiff", width=WIDTH, height=HEIGHT, count=1, dtype="float32",
        crs=CRS, transform=from_origin(X0_M, Y0_M + HEIGHT * CELL_M, CELL_M, CELL_M),
        nodata=-9999.0, tiled=True, blockxsize=256, blockysize=256,
        compress="deflate", predictor=3, zlevel=9,
    )
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(z, 1)
        dst.set_band_unit(1, "metre")
        dst.update_tags(
            DESCRIPTION="terrahop demo terrain: INVENTED, not a real landscape",
            GENERATOR="data/make_demo.py",
        )
    return path


#: Mere Hollow's outline as in make_terrain: centre km east/north of the south-west corner, semi-axes km.
LAKE_CENTRE_KM = (3.5, 2.5)
LAKE_SEMI_AXES_KM = (2.0, 1.4)


def lake_outline_xy(points: int = 256) -> np.ndarray:
    """The ellipse of Mere Hollow in the demo CRS (metres), drawn 60 m inside the flat water (x, y rows)."""
    t = np.linspace(0.0, 2.0 * np.pi, points, endpoint=False)
    (cx, cy), (ax, ay) = LAKE_CENTRE_KM, LAKE_SEMI_AXES_KM
    x = X0_M + 1000.0 * (cx + (ax - 0.06) * np.cos(t))
    y = Y0_M + 1000.0 * (cy + (ay - 0.06) * np.sin(t))
    return np.column_stack([x, y])


def write_lake(path: Path = LAKE_OUT) -> Path:
    """Write the lake's water polygon (for --water / [reflection] water) as a GeoPackage in the demo CRS."""
    import geopandas as gpd
    from shapely.geometry import Polygon

    frame = gpd.GeoDataFrame({"name": ["Mere Hollow (invented)"], "water": ["fresh"]},
                             geometry=[Polygon(lake_outline_xy())], crs=CRS)
    if path.exists():
        path.unlink()
    frame.to_file(path, layer="water", driver="GPKG")
    return path


if __name__ == "__main__":
    p = write()
    print(f"wrote {p} ({p.stat().st_size / 1e6:.2f} MB)")
    q = write_lake()
    print(f"wrote {q}")
