"""Bad-input corpus: terrahop review (harness in tests/cli/bad_input.py)."""

from __future__ import annotations

import os
import shutil
import sqlite3

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM
from tests.review.fixtures import screen_demo, with_run_table


@pytest.fixture(scope="module")
def result(tmp_path_factory):
    return screen_demo(tmp_path_factory.mktemp("bad-review") / "demo.gpkg")


@pytest.fixture
def copy(result, tmp_path):
    out = tmp_path / "demo.gpkg"
    shutil.copyfile(result, out)
    return out


def test_missing_result(tmp_path):
    assert_refused(["review", str(tmp_path / "none.gpkg"), "-o", str(tmp_path / "r.html")],
                   ["not found", "none.gpkg"])


def test_result_is_a_folder(tmp_path):
    assert_refused(["review", str(tmp_path), "-o", str(tmp_path / "r.html")], ["is a folder"])


def test_result_is_not_a_geopackage(tmp_path):
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon\nA,1,2\n")
    assert_refused(["review", str(sites), "-o", str(tmp_path / "r.html")],
                   ["sites.csv", "not a terrahop screening result", "not a GeoPackage"], inputs=[sites])


def test_geopackage_that_is_not_a_screening_result(tmp_path):
    gpkg = tmp_path / "roads.gpkg"
    import geopandas as gpd
    from shapely.geometry import LineString

    gpd.GeoDataFrame({"name": ["r1"]}, geometry=[LineString([(0, 0), (1, 1)])], crs="EPSG:4326").to_file(gpkg)
    assert_refused(["review", str(gpkg), "-o", str(tmp_path / "r.html")],
                   ["roads.gpkg", "no 'links' layer", "roads"], inputs=[gpkg])


def test_links_layer_without_the_screening_columns(tmp_path):
    gpkg = tmp_path / "other.gpkg"
    import geopandas as gpd
    from shapely.geometry import LineString

    gpd.GeoDataFrame({"name": ["r1"]}, geometry=[LineString([(0, 0), (1, 1)])], crs="EPSG:4326") \
        .to_file(gpkg, layer="links")
    assert_refused(["review", str(gpkg), "-o", str(tmp_path / "r.html")],
                   ["other.gpkg", "lacks the column", "site_a"], inputs=[gpkg])


def test_plain_sqlite_file(tmp_path):
    db = tmp_path / "plain.gpkg"
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE links (x INTEGER)")
    con.commit()
    con.close()
    assert_refused(["review", str(db), "-o", str(tmp_path / "r.html")], ["without GeoPackage contents"], inputs=[db])


def test_output_folder_missing(copy, tmp_path):
    assert_refused(["review", str(copy), "-o", str(tmp_path / "no" / "r.html")],
                   ["cannot write the review page", "does not exist"], inputs=[copy])


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_output_folder_not_writable(copy, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        assert_refused(["review", str(copy), "-o", str(ro / "r.html")], ["not writable"], inputs=[copy])
    finally:
        ro.chmod(0o755)


def test_output_is_a_folder(copy, tmp_path):
    folder = tmp_path / "page.html"
    folder.mkdir()
    assert_refused(["review", str(copy), "-o", str(folder)], ["is a folder"], inputs=[copy])


def test_output_not_html(copy, tmp_path):
    assert_refused(["review", str(copy), "-o", str(tmp_path / "r.pdf")], [".html file"], inputs=[copy])


def test_output_would_replace_an_unrelated_file(copy, tmp_path):
    mine = tmp_path / "mine.html"
    mine.write_text("<p>my own notes</p>")
    assert_refused(["review", str(copy), "-o", str(mine)], ["not a terrahop review page", "--overwrite"],
                   inputs=[copy, mine])


def test_output_is_the_input(tmp_path, result):
    odd = tmp_path / "result.html"
    shutil.copyfile(result, odd)
    assert_refused(["review", str(odd), "-o", str(odd), "--overwrite"], ["would replace the input"], inputs=[odd])


@pytest.mark.parametrize("url", ["tiles.example.org/{z}/{x}/{y}.png", "https://t.example.org/{z}/{y}.png",
                                 "file:///srv/tiles/{z}/{x}/{y}.png", "https://t.example.org/{z}/{x}/{y}.png?key={k}"])
def test_tiles_not_a_url_template(copy, tmp_path, url):
    assert_refused(["review", str(copy), "-o", str(tmp_path / "r.html"), "--tiles", url],
                   ["--tiles URL", "{z}, {x} and {y}"], inputs=[copy])


def test_missing_dem(copy, tmp_path):
    assert_refused(["review", str(copy), "-o", str(tmp_path / "r.html"), "--dem", str(tmp_path / "none.tif")],
                   ["raster not found", "none.tif"], inputs=[copy])


def test_dem_that_is_not_a_raster(copy, tmp_path):
    bad = tmp_path / "bad.tif"
    bad.write_text("not a raster")
    assert_refused(["review", str(copy), "-o", str(tmp_path / "r.html"), "--dem", str(bad)], ["bad.tif"],
                   inputs=[copy, bad])


def test_negative_profile_count(copy, tmp_path):
    assert_refused(["review", str(copy), "-o", str(tmp_path / "r.html"), "--profiles", "-3"], ["--profiles"],
                   inputs=[copy])


def test_run_description_not_json(result, tmp_path):
    gpkg = with_run_table(result, tmp_path / "run.gpkg", {"x": 1})
    con = sqlite3.connect(gpkg)
    con.execute("UPDATE run SET run_json = '{not json'")
    con.commit()
    con.close()
    assert_refused(["review", str(gpkg), "-o", str(tmp_path / "r.html")], ["run_json", "not valid JSON"],
                   inputs=[gpkg])


def test_subprocess_mode_missing_result(tmp_path):
    assert_refused(["review", str(tmp_path / "gone.gpkg"), "-o", str(tmp_path / "r.html")], ["not found"],
                   subprocess=True)
