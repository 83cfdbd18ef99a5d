"""Vector outputs of a screening on invented terrain across the antimeridian (near 180 degrees, 17 S).

Checks every format: geodesic lines cut (GeoJSON per RFC 7946 section 3.1.9,
KML, CSV WKT) or unwrapped (GeoPackage) at the antimeridian; a pair that
could not be profiled has no geometry and NULL unknowns; the run description
in the GeoPackage (``run`` table, GeoPackage metadata) and beside the others;
numbers rounded per :mod:`profiler.io.rounding` except in the GeoPackage.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3

import numpy as np
import pytest

from tests.conftest import write_raster
from tests.kml_schema import NS, parse_valid_kml

SITES = [  # name, lat, lon, antenna height: A-B and B-C cross the antimeridian, A-A2 is one place
    ("A", -17.000, 179.930, 20.0),
    ("B", -17.020, -179.930, 20.0),
    ("C", -16.950, 179.960, 20.0),
    ("A2", -17.000, 179.930, 15.0),
]


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    """A flat 5 m raster in UTM 60S over the antimeridian, the sites CSV, and a screening run per format."""
    from pyproj import Transformer
    from rasterio.transform import from_origin

    from profiler.budget import Radio
    from profiler.screening import screen

    folder = tmp_path_factory.mktemp("antimeridian")
    to_utm = Transformer.from_crs("EPSG:4326", "EPSG:32760", always_xy=True)
    x, y = to_utm.transform([179.85, -179.85], [-17.1, -16.9])
    dem = write_raster(folder / "dem.tif", np.full((300, 400), 5.0, dtype="float32"), crs="EPSG:32760",
                       transform=from_origin(min(x) - 2000, max(y) + 2000, 100.0, 100.0))
    sites = folder / "sites.csv"
    sites.write_text("name,lat,lon,antenna_agl_m\n" + "".join(f"{n},{la},{lo},{h}\n" for n, la, lo, h in SITES))
    out = {}
    for ext in (".gpkg", ".geojson", ".csv", ".kml"):
        path = folder / f"r{ext}"
        screen(sites, dem, Radio(5.8, gain_a_dbi=30, gain_b_dbi=30), out=path, workers=1,
               csv_geometry="wkt" if ext == ".csv" else "none")
        out[ext] = path
    return folder, dem, sites, out


def test_geojson_is_rfc7946_cut_at_the_antimeridian_with_null_unknowns(scenario):
    folder, *_ , out = scenario
    doc = json.loads(out[".geojson"].read_text())
    assert "crs" not in doc
    rows = {(f["properties"]["site_a"], f["properties"]["site_b"]): f for f in doc["features"]}
    assert len(rows) == 6
    ab = rows[("A", "B")] if ("A", "B") in rows else rows[("B", "A")]
    assert ab["geometry"]["type"] == "MultiLineString"
    first, second = ab["geometry"]["coordinates"]
    assert abs(first[-1][0]) == 180.0 and second[0][0] == -first[-1][0] and first[-1][1] == second[0][1]
    assert all(-180 <= lon <= 180 and -90 <= lat <= 90 for part in (first, second) for lon, lat in part)
    same = rows[("A", "A2")]
    assert same["geometry"] is None and same["properties"]["verdict"] == "error"
    for key in ("line_of_sight", "meets_criterion", "fade_margin_db", "worst_clearance_m", "meets_availability",
                "mast_raise_m", "ground_a_m"):
        assert same["properties"][key] is None, key
    ac = rows[("A", "C")] if ("A", "C") in rows else rows[("C", "A")]
    assert ac["geometry"]["type"] == "LineString"
    lon, lat = ac["geometry"]["coordinates"][0]
    assert (lon, lat) == (ac["properties"]["lon_a"], ac["properties"]["lat_a"])  # lon, lat order


def test_geopackage_keeps_linestrings_unwrapped_full_precision_and_the_run(scenario):
    import geopandas as gpd
    import pandas as pd
    import shapely

    folder, dem, sites, out = scenario
    links = gpd.read_file(out[".gpkg"], layer="links")
    assert set(links.geom_type.dropna()) == {"LineString"}
    same = links[(links.site_a == "A") & (links.site_b == "A2")].iloc[0]
    assert same.geometry is None and same.verdict == "error" and pd.isna(same.line_of_sight)
    ab = links[links.site_a.isin(["A", "B"]) & links.site_b.isin(["A", "B"])].iloc[0]
    xy = shapely.get_coordinates(ab.geometry)
    assert np.abs(np.diff(xy[:, 0])).max() < 0.02  # drawn short, across +-180, not around the world
    # full precision: the GeoPackage keeps what the CSV rounds
    csv = pd.read_csv(out[".csv"])
    assert np.array_equal(links["distance_km"].round(3).to_numpy(), csv["distance_km"].to_numpy(), equal_nan=True)
    assert (links["distance_km"] != links["distance_km"].round(3)).any()
    # the run table, registered as attributes, and the metadata extension (GeoPackage 1.3, 2.4 and Annex F)
    with sqlite3.connect(out[".gpkg"]) as db:
        rows = db.execute("SELECT run_json FROM run").fetchall()
        contents = dict(db.execute("SELECT table_name, data_type FROM gpkg_contents").fetchall())
        meta = db.execute("SELECT md_scope, mime_type, metadata FROM gpkg_metadata").fetchall()
        refs = db.execute("SELECT reference_scope, table_name FROM gpkg_metadata_reference").fetchall()
        ext = db.execute("SELECT table_name FROM gpkg_extensions WHERE extension_name = 'gpkg_metadata'").fetchall()
    assert len(rows) == 1 and contents["run"] == "attributes" and contents["links"] == "features"
    assert len(meta) == 1 and meta[0][:2] == ("dataset", "application/json") and meta[0][2] == rows[0][0]
    assert ("geopackage", None) in refs and ("table", "links") in refs and ("table", "sites") in refs
    assert sorted(t for (t,) in ext) == ["gpkg_metadata", "gpkg_metadata_reference"]
    run = json.loads(rows[0][0])
    _check_description(run, dem, sites)


def _check_description(run: dict, dem, sites) -> None:
    for key in ("software", "created_utc", "command", "radio", "k", "k_worst", "criterion", "min_margin_db",
                "diffraction_method", "climate", "terrain", "sites_file"):
        assert key in run, key
    assert run["software"]["name"] == "terrahop" and run["created_utc"].endswith("Z")
    assert run["radio"]["freq_ghz"] == 5.8 and run["radio"]["gain_a_dbi"] == 30.0
    assert run["min_margin_db"] == 10.0 and run["diffraction_method"] == "delta-bullington"
    assert run["climate"]["sources"]["rain_rate_mm_h"] == "default"
    (terrain,) = run["terrain"]
    assert terrain == {"path": str(dem.resolve()), "sha256": hashlib.sha256(dem.read_bytes()).hexdigest(),
                       "role": "dem"}
    assert run["sites_file"]["sha256"] == hashlib.sha256(sites.read_bytes()).hexdigest()


def test_sidecars_beside_csv_geojson_kml_hold_the_description(scenario):
    folder, dem, sites, out = scenario
    for ext in (".csv", ".geojson", ".kml"):
        run = json.loads((folder / f"r{ext}.run.json").read_text())
        _check_description(run, dem, sites)
    doc = parse_valid_kml(out[".kml"])
    (data,) = doc.findall("k:Document/k:ExtendedData/k:Data[@name='run_json']", NS)
    assert json.loads(data.findtext("k:value", namespaces=NS)) == run  # one description, both places


def test_csv_wkt_rounding_and_empty_geometry(scenario):
    import pandas as pd
    import shapely

    from profiler.io.rounding import decimals_of

    folder, *_ , out = scenario
    links = pd.read_csv(out[".csv"], keep_default_na=False, na_values=[""])
    for name in links.columns:
        digits = decimals_of(name)
        if digits is not None and links[name].dtype.kind == "f":
            values = links[name].dropna().to_numpy()
            assert np.array_equal(values, np.round(values, digits)), name
    same = links[(links.site_a == "A") & (links.site_b == "A2")].iloc[0]
    assert pd.isna(same["wkt"]) and pd.isna(same["line_of_sight"]) and pd.isna(same["fade_margin_db"])
    geoms = shapely.from_wkt(links["wkt"].dropna().to_numpy())
    assert sorted(set(shapely.get_type_id(geoms))) == [1, 5]  # LineString, and MultiLineString across 180
    sites = pd.read_csv(folder / "r-sites.csv")
    assert shapely.from_wkt(sites["wkt"][0]).equals(shapely.Point(sites["lon"][0], sites["lat"][0]))


def test_kml_of_the_screening(scenario):
    folder, *_ , out = scenario
    doc = parse_valid_kml(out[".kml"])
    folders = {f.findtext("k:name", namespaces=NS): f for f in doc.iter(f"{{{NS['k']}}}Folder")}
    assert "Sites (4)" in folders and "error (1)" in folders
    links = [p for name, f in folders.items() if name != "Sites (4)" for p in f.findall("k:Placemark", NS)]
    assert len(links) == 6
    (error,) = folders["error (1)"].findall("k:Placemark", NS)
    assert error.find("k:LineString", NS) is None and error.find("k:MultiGeometry", NS) is None
    data = {d.get("name"): d.findtext("k:value", namespaces=NS) for d in error.iter(f"{{{NS['k']}}}Data")}
    assert "fade_margin_db" not in data and "line_of_sight" not in data  # unknown: left out, not "false"
    assert "same position" in data["problem"]
    crossing = [p for p in links if p.find("k:MultiGeometry", NS) is not None]
    assert len(crossing) == 3  # A-B, A2-B and B-C
    for p in crossing:
        parts = p.findall("k:MultiGeometry/k:LineString/k:coordinates", NS)
        assert len(parts) == 2
        last = parts[0].text.split()[-1].split(",")
        assert abs(float(last[0])) == 180.0  # longitude first
    styles = {s.get("id") for s in doc.iter(f"{{{NS['k']}}}Style")}
    for p in links:
        assert p.findtext("k:styleUrl", namespaces=NS).lstrip("#") in styles


def test_csv_geometry_refused_before_any_work_from_python(tmp_path):
    from profiler.budget import Radio
    from profiler.errors import InputError
    from profiler.screening import screen
    from tests._screening_data import DEMO_DEM, DEMO_SITES

    with pytest.raises(InputError, match="CSV output only"):
        screen(DEMO_SITES, DEMO_DEM, Radio(5.8), out=tmp_path / "r.gpkg", workers=1, csv_geometry="wkt")
    assert list(tmp_path.iterdir()) == []  # no staging, no lock, no result
