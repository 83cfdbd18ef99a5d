"""Generate the invented town of the terrahop demo: buildings, trees, a surface model.

Everything here is made up: "Linthorpe" stands on the invented demo terrain
(data/make_demo.py, open ocean in UTM zone 27S) and its streets, buildings,
heights, names and trees are drawn from a seeded random generator and a few
placed landmarks.  It is not a real place.

Writes
  data/demo/town.gpkg         layers "buildings" (UTM 27S; height_m above
                              ground, or top_m, an absolute top elevation)
                              and "trees" (WGS84 lon/lat; height_m)
  data/demo/town-surface.tif  a 2 m surface model (terrain + buildings + tree
                              canopy), as first-return lidar would give it
  data/demo/rooftops.csv      invented rooftop candidates for terrahop screen: the
                              landmarks and some taller blocks (antenna 3 m above
                              the roof), and one ground mast in the park

Run:  python data/make_town.py      (after data/make_demo.py)
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
TERRAIN = HERE / "demo" / "terrain.tif"
TOWN = HERE / "demo" / "town.gpkg"
SURFACE = HERE / "demo" / "town-surface.tif"
ROOFTOPS = HERE / "demo" / "rooftops.csv"

CRS = "EPSG:32727"
#: South-west corner of the town and its size, metres (UTM 27S).
X0_M, Y0_M = 514_600.0, 6_621_200.0
WIDTH_M, HEIGHT_M = 2_000.0, 1_400.0
SURFACE_CELL_M = 2.0

#: Placed landmarks: name, centre (m east, m north of the corner), size (m), height_m or top_m.
LANDMARKS = [
    ("Linthorpe Library", (250.0, 700.0), (30.0, 24.0), {"height_m": 12.0}),
    ("Harbour Row Flats", (1650.0, 760.0), (40.0, 20.0), {"height_m": 15.0}),
    ("Corn Exchange Tower", (800.0, 720.0), (16.0, 16.0), {"top_m": 141.0}),
]
#: The rooftop demo link runs between the first two landmarks.
LINK_FROM, LINK_TO = LANDMARKS[0][1], LANDMARKS[1][1]

#: Tree stands: name, polygon corners (m from the corner), height_m.
STANDS = [
    ("Linthorpe Park", [(430, 610), (640, 630), (650, 850), (420, 830)], 13.0),
    ("Mill Lane Shelterbelt", [(1000, 980), (1500, 1000), (1500, 1030), (1000, 1010)], 16.0),
]


def _near_link(x: np.ndarray, y: np.ndarray, width_m: float) -> np.ndarray:
    (ax, ay), (bx, by) = LINK_FROM, LINK_TO
    dx, dy = bx - ax, by - ay
    t = np.clip(((x - ax) * dx + (y - ay) * dy) / (dx * dx + dy * dy), 0, 1)
    return np.hypot(x - (ax + t * dx), y - (ay + t * dy)) < width_m


def make_buildings():
    """GeoDataFrame of invented footprints: street blocks of houses and shops, plus landmarks."""
    import geopandas as gpd
    import shapely

    rng = np.random.default_rng(20261206)
    rows = []
    for bx in np.arange(60.0, WIDTH_M - 60.0, 110.0):  # street blocks 110 m apart
        for by in np.arange(60.0, HEIGHT_M - 60.0, 90.0):
            for _ in range(rng.integers(2, 6)):
                w, d = rng.uniform(8, 24), rng.uniform(8, 18)
                cx, cy = bx + rng.uniform(10, 90), by + rng.uniform(10, 70)
                rows.append((cx, cy, w, d, float(np.round(rng.choice([4.5, 6.0, 7.5, 9.0, 12.0, 15.0]), 1))))
    b = np.array(rows)
    # Keep clear of the landmarks and the park; low-rise (at most 9 m) near the demo link.
    boxes = shapely.box(b[:, 0] - b[:, 2] / 2, b[:, 1] - b[:, 3] / 2, b[:, 0] + b[:, 2] / 2, b[:, 1] + b[:, 3] / 2)
    keep_out = shapely.union_all(
        [shapely.box(cx - w / 2 - 15, cy - d / 2 - 15, cx + w / 2 + 15, cy + d / 2 + 15)
         for _, (cx, cy), (w, d), _ in LANDMARKS]
        + [shapely.Polygon(c).buffer(5) for _, c, _ in STANDS]
    )
    ok = ~shapely.intersects(boxes, keep_out)
    # Drop overlapping houses (keep the first of each overlapping group).
    tree = shapely.STRtree(boxes)
    left, right = tree.query(boxes, predicate="intersects")
    clash = np.zeros(len(boxes), bool)
    clash[right[left < right]] = True
    ok &= ~clash
    b, boxes = b[ok], boxes[ok]
    heights = np.where(_near_link(b[:, 0], b[:, 1], 60.0), np.minimum(b[:, 4], 9.0), b[:, 4])
    names = [None] * len(boxes)
    geoms = list(boxes)
    height = list(heights)
    top = [None] * len(boxes)
    use = ["house" if h <= 7.5 else "shops and flats" for h in heights]
    for name, (cx, cy), (w, d), attrs in LANDMARKS:
        geoms.append(shapely.box(cx - w / 2, cy - d / 2, cx + w / 2, cy + d / 2))
        names.append(name)
        height.append(attrs.get("height_m"))
        top.append(attrs.get("top_m"))
        use.append("landmark")
    geoms = [shapely.affinity.translate(g, X0_M, Y0_M) for g in geoms]
    return gpd.GeoDataFrame(
        {"name": names, "use": use,
         "height_m": np.array(height, dtype=float), "top_m": np.array([np.nan if t is None else t for t in top])},
        geometry=geoms, crs=CRS,
    )


def make_trees():
    """GeoDataFrame of the invented tree stands, in WGS84 longitude/latitude (any CRS works)."""
    import geopandas as gpd
    import shapely

    geoms = [shapely.affinity.translate(shapely.Polygon(c), X0_M, Y0_M) for _, c, _ in STANDS]
    gdf = gpd.GeoDataFrame(
        {"name": [n for n, _, _ in STANDS], "height_m": [h for _, _, h in STANDS]}, geometry=geoms, crs=CRS
    )
    return gdf.to_crs("EPSG:4326")


def make_surface(buildings, trees) -> tuple[np.ndarray, object]:
    """Surface model heights (terrain + clutter) on a 2 m grid, rows north to south."""
    import rasterio.features
    from pyproj import Transformer
    from rasterio.transform import from_origin

    sys.path.insert(0, str(HERE.parent))
    from profiler.terrain import ElevationModel

    ncols, nrows = int(WIDTH_M / SURFACE_CELL_M), int(HEIGHT_M / SURFACE_CELL_M)
    transform = from_origin(X0_M, Y0_M + HEIGHT_M, SURFACE_CELL_M, SURFACE_CELL_M)
    cols, rows = np.meshgrid(np.arange(ncols) + 0.5, np.arange(nrows) + 0.5)
    x, y = transform * (cols, rows)
    lon, lat = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True).transform(x, y)
    with ElevationModel([TERRAIN]) as model:
        ground, _ = model.sample(lon, lat)
    rng = np.random.default_rng(20261207)
    trees_utm = trees.to_crs(CRS)
    canopy = rasterio.features.rasterize(
        ((g, h) for g, h in zip(trees_utm.geometry, trees_utm["height_m"])),
        out_shape=(nrows, ncols), transform=transform, fill=0.0, dtype="float32",
    )
    canopy = canopy * rng.uniform(0.85, 1.0, canopy.shape)
    surface = ground + canopy
    above = buildings["height_m"].to_numpy()
    tops = rasterio.features.rasterize(
        ((g, t) for g, t in zip(buildings.geometry, buildings["top_m"]) if np.isfinite(t)),
        out_shape=(nrows, ncols), transform=transform, fill=np.nan, dtype="float32",
    )
    heights = rasterio.features.rasterize(
        ((g, h) for g, h in zip(buildings.geometry, above) if np.isfinite(h)),
        out_shape=(nrows, ncols), transform=transform, fill=0.0, dtype="float32",
    )
    surface = np.maximum(surface, ground + heights)
    surface = np.where(np.isfinite(tops), np.maximum(surface, tops), surface)
    return np.round(surface, 1).astype(np.float32), transform


#: Rooftop candidates besides the landmarks: this many of the taller blocks, spread west to east.
ROOFTOP_BLOCKS = 8
#: Antenna height above the roof of every rooftop candidate, m; the park mast's above the ground.
ROOFTOP_ANTENNA_M, PARK_MAST_M = 3.0, 20.0
#: The ground mast in Linthorpe Park, m east and north of the corner.
PARK_MAST_AT = (540.0, 720.0)


def write_rooftops(buildings) -> int:
    """Write the invented rooftop candidates (CSV: name, lat, lon, antenna_height_m, mount); return their count."""
    import csv

    import shapely
    from pyproj import Transformer

    tall = buildings[(buildings["use"] == "shops and flats") & (buildings["height_m"] >= 12.0)]
    tall = tall.assign(x=tall.geometry.centroid.x).sort_values("x", kind="stable")
    picks = tall.iloc[np.linspace(0, len(tall) - 1, ROOFTOP_BLOCKS).round().astype(int)]
    landmarks = buildings[buildings["use"] == "landmark"]
    rows = [(name, g, "roof", ROOFTOP_ANTENNA_M) for name, g in zip(landmarks["name"], landmarks.geometry)]
    rows += [(f"Block {k + 1} ({h:g} m)", g, "roof", ROOFTOP_ANTENNA_M)
             for k, (h, g) in enumerate(zip(picks["height_m"], picks.geometry))]
    rows.append(("Linthorpe Park mast", shapely.Point(X0_M + PARK_MAST_AT[0], Y0_M + PARK_MAST_AT[1]), "ground",
                 PARK_MAST_M))
    to_wgs84 = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    with open(ROOFTOPS, "w", newline="") as fh:
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(["name", "lat", "lon", "antenna_height_m", "mount"])
        for name, geom, mount, height in rows:
            # A point well inside the footprint (the centroid of a box), as a planner would pick it.
            lon, lat = to_wgs84.transform(geom.centroid.x, geom.centroid.y)
            out.writerow([name, f"{lat:.6f}", f"{lon:.6f}", f"{height:g}", mount])
    return len(rows)


def write() -> None:
    import rasterio

    buildings = make_buildings()
    trees = make_trees()
    TOWN.unlink(missing_ok=True)
    buildings.to_file(TOWN, layer="buildings", driver="GPKG")
    trees.to_file(TOWN, layer="trees", driver="GPKG")
    surface, transform = make_surface(buildings, trees)
    profile = dict(
        driver="GTiff", width=surface.shape[1], height=surface.shape[0], count=1, dtype="float32",
        crs=CRS, transform=transform, nodata=-9999.0, tiled=True, blockxsize=256, blockysize=256,
        compress="deflate", predictor=3, zlevel=9,
    )
    with rasterio.open(SURFACE, "w", **profile) as dst:
        dst.write(surface, 1)
        dst.set_band_unit(1, "metre")
        dst.update_tags(
            DESCRIPTION="terrahop demo surface model of the town of Linthorpe: INVENTED, not a real place",
            GENERATOR="data/make_town.py",
        )
    count = write_rooftops(buildings)
    print(f"wrote {TOWN} ({len(buildings)} buildings, {len(trees)} tree stands), "
          f"{SURFACE} ({SURFACE.stat().st_size / 1e6:.2f} MB) and {ROOFTOPS} ({count} rooftop candidates)")


if __name__ == "__main__":
    write()
