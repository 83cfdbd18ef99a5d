"""Bad-input corpus: ground reflections (--water, --ground, the k sweep, [reflection]); harness in tests/cli/bad_input.py."""

from pathlib import Path

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM

REPO = Path(__file__).resolve().parents[2]
LAKE_FILE = REPO / "examples" / "demo-7-lake.toml"
LAKE_LAYER = REPO / "data" / "demo" / "lake.gpkg"
WEST, EAST = "-30.529855,-20.994788", "-30.529838,-20.932243"
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", WEST, "--site-b", EAST, "--freq-ghz", "5.8"]


def _no_crs_geojson(tmp_path: Path) -> Path:
    """A water polygon in a file that says nothing of its CRS (a shapefile without .prj)."""
    import geopandas as gpd
    from shapely.geometry import box

    import warnings

    path = tmp_path / "lake.shp"
    with warnings.catch_warnings():  # the writer warns of the missing CRS: that is the point here
        warnings.simplefilter("ignore", UserWarning)
        gpd.GeoDataFrame({"n": [1]}, geometry=[box(501500, 6621500, 505500, 6623500)]).to_file(path)
    assert not path.with_suffix(".prj").exists()
    return path


def test_water_layer_without_crs(tmp_path):
    water = _no_crs_geojson(tmp_path)
    assert_refused(LINK + ["--water", str(water)], ["water layer", "no coordinate reference system"],
                   inputs=[DEMO_DEM, water])


def test_water_layer_missing(tmp_path):
    assert_refused(LINK + ["--water", str(tmp_path / "none.gpkg")], ["water layer not found"], inputs=[DEMO_DEM])


def test_water_layer_unreadable(tmp_path):
    bad = tmp_path / "lake.gpkg"
    bad.write_bytes(b"this is not a vector file\n" * 10)
    assert_refused(LINK + ["--water", str(bad)], ["cannot read water layer"], inputs=[DEMO_DEM, bad])


def test_water_layer_of_points(tmp_path):
    import geopandas as gpd
    from shapely.geometry import Point

    path = tmp_path / "wells.gpkg"
    gpd.GeoDataFrame({"n": [1]}, geometry=[Point(503000, 6622500)], crs="EPSG:32727").to_file(path)
    assert_refused(LINK + ["--water", str(path)], ["holds no polygons"], inputs=[DEMO_DEM, path])


def test_unknown_ground_flag():
    assert_refused(LINK + ["--ground", "swamp"], ["swamp"], inputs=[DEMO_DEM])


@pytest.mark.parametrize("extra, words", [
    (["--reflection-k-min", "3", "--reflection-k-max", "2"], ["reflection k sweep", "empty"]),
    (["--reflection-k-min", "1", "--reflection-k-max", "0.9"], ["reflection k sweep", "empty"]),
    (["--reflection-k-min", "0"], ["reflection_k_min", "between 0.1 and 100"]),
    (["--reflection-k-min", "-1"], ["reflection_k_min"]),
    (["--reflection-k-max", "inf"], ["reflection_k_max", "finite"]),
    (["--reflection-k-min", "nan"], ["reflection_k_min", "finite"]),
])
def test_empty_sweep(extra, words):
    assert_refused(LINK + extra, words, inputs=[DEMO_DEM])


def _link_file(tmp_path: Path, reflection: str, analysis: str = "") -> Path:
    text = LAKE_FILE.read_text().replace('"../data/demo/', f'"{REPO}/data/demo/')
    text = text.split("[reflection]")[0] + analysis + "\n[reflection]\n" + reflection + "\n"
    path = tmp_path / "lake.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("reflection, words", [
    ('water = 3', ["[reflection] water", "file path"]),
    ('sea_level_water = "yes"', ["sea_level_water", "true or false"]),
    ('k_min = "half"', ["[reflection] k_min", "number"]),
    ('k_min = 5\nk_max = 1', ["reflection k sweep", "empty"]),
    ('water = "missing.gpkg"', ["water layer not found"]),
    ('colour = "blue"', ["colour"]),
])
def test_link_file_reflection_table(tmp_path, reflection, words):
    path = _link_file(tmp_path, reflection)
    assert_refused(["link", str(path)], words, inputs=[path, DEMO_DEM])


def test_link_file_unknown_ground(tmp_path):
    path = _link_file(tmp_path, f'water = "{LAKE_LAYER}"', analysis='ground = "marsh"\n')
    assert_refused(["link", str(path)], ["unknown ground type", "marsh"], inputs=[path, DEMO_DEM, LAKE_LAYER])


def test_sheet_refuses_water_without_crs(tmp_path):
    water = _no_crs_geojson(tmp_path)
    assert_refused(["sheet", str(LAKE_FILE), "--water", str(water), "-o", str(tmp_path / "s.pdf")],
                   ["no coordinate reference system"], inputs=[DEMO_DEM, water, LAKE_FILE])
    assert not (tmp_path / "s.pdf").exists()


def test_subprocess_water_without_crs(tmp_path):
    water = _no_crs_geojson(tmp_path)
    assert_refused(LINK + ["--water", str(water)], ["no coordinate reference system"], inputs=[water],
                   subprocess=True)


def test_screen_output_on_the_water_layer_is_refused(tmp_path):
    import shutil

    water = tmp_path / "lake.gpkg"
    shutil.copy(LAKE_LAYER, water)
    demo = REPO / "data" / "demo"
    assert_refused(["screen", str(demo / "sites.csv"), "--dem", str(DEMO_DEM), "--freq-ghz", "5.8",
                    "--water", str(water), "-o", str(water), "-q"], ["would overwrite the input"],
                   inputs=[water, demo / "sites.csv", DEMO_DEM])


def test_profile_csv_on_the_water_layer_is_refused(tmp_path):
    import shutil

    water = tmp_path / "lake.gpkg"
    shutil.copy(LAKE_LAYER, water)
    assert_refused(["link", str(LAKE_FILE), "--water", str(water), "--profile-csv", str(water)],
                   ["would overwrite the input"], inputs=[water, LAKE_FILE, DEMO_DEM])
