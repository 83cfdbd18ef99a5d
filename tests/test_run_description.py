"""The run description: one value, JSON-ready, with every input file hashed."""

from __future__ import annotations

import hashlib
import json

import rasterio

from profiler.budget import Radio
from profiler.climate import ClimateSettings, ORIGIN_P837
from profiler.io.gpkg_run import read_run_json, write_run_tables
from profiler.io.run_description import describe_run, run_json, sidecar_path
from profiler.link_types import Settings
from tests.conftest import DEMO_DEM


def _sha(path) -> str:
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def test_vrt_sources_follow_the_vrt_and_surface_rasters_have_their_role(tmp_path):
    with rasterio.open(DEMO_DEM) as ds:
        w, h, gt, crs = ds.width, ds.height, ds.transform.to_gdal(), ds.crs.to_wkt()
    vrt = tmp_path / "all.vrt"
    vrt.write_text(
        f'<VRTDataset rasterXSize="{w}" rasterYSize="{h}"><SRS>{crs.replace("<", "&lt;")}</SRS>'
        f'<GeoTransform>{", ".join(map(str, gt))}</GeoTransform><VRTRasterBand dataType="Float32" band="1">'
        f'<SimpleSource><SourceFilename relativeToVRT="0">{DEMO_DEM}</SourceFilename><SourceBand>1</SourceBand>'
        f'</SimpleSource></VRTRasterBand></VRTDataset>')
    d = describe_run(command=["terrahop", "x"], radio=Radio(5.8), settings=Settings(), dem=[vrt],
                     surface=[DEMO_DEM])
    assert [(t["role"], t["path"], t.get("via")) for t in d["terrain"]] == [
        ("dem", str(vrt), None), ("dem", str(DEMO_DEM), str(vrt)), ("surface", str(DEMO_DEM), None)]
    assert d["terrain"][1]["sha256"] == _sha(DEMO_DEM) and d["terrain"][0]["sha256"] == _sha(vrt)
    json.loads(run_json(d))  # plain JSON: no NaN, no numpy types


def test_climate_values_name_their_source_and_per_site_gains_are_a_range():
    import numpy as np

    settings = Settings(climate=ClimateSettings(rain_rate_mm_h=60.0, given=frozenset({"rain_rate_mm_h"})))
    d = describe_run(command=[], radio=Radio(5.8, gain_a_dbi=np.array([20.0, 25.0])), settings=settings)
    assert d["climate"]["rain_rate_mm_h"] == 60.0 and d["climate"]["sources"]["rain_rate_mm_h"] == "given"
    assert d["climate"]["sources"]["dn1_n_per_km"] == "default"
    assert d["radio"]["gain_a_dbi"] == {"per_row": True, "min": 20.0, "max": 25.0}
    itu = describe_run(command=[], radio=Radio(5.8), settings=Settings(climate=ClimateSettings(source="itu")))
    assert itu["climate"]["sources"]["rain_rate_mm_h"] == ORIGIN_P837 and "rain_rate_mm_h" in itu["climate"]["per_path"]
    assert d["sites_file"] is None and d["min_margin_db"] is None


def test_sidecar_keeps_the_whole_name_and_the_gpkg_tables_round_trip(tmp_path):
    assert sidecar_path(tmp_path / "r.csv").name == "r.csv.run.json"
    assert sidecar_path(tmp_path / "r.kmz").name == "r.kmz.run.json"
    import geopandas as gpd
    import shapely

    gpkg = tmp_path / "t.gpkg"
    gpd.GeoDataFrame({"a": [1]}, geometry=[shapely.Point(0, 0)], crs="EPSG:4326").to_file(gpkg, layer="links")
    d = describe_run(command=["terrahop"], radio=Radio(5.8), settings=Settings(), min_margin_db=3.0)
    write_run_tables(gpkg, d, ("links",))
    write_run_tables(gpkg, d, ("links",))  # again: still one row in run
    assert json.loads(read_run_json(gpkg)) == d
    import sqlite3

    with sqlite3.connect(gpkg) as db:
        assert db.execute("select count(*) from run").fetchone()[0] == 1
    assert gpd.read_file(gpkg, layer="links").shape[0] == 1  # GDAL still reads the file
