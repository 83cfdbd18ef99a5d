"""Bad-input corpus: `screen` with obstruction layers, surface models, roof mounts and per-pair heights.

Each case is refused with one line before any work (harness in tests/cli/bad_input.py).
"""

from __future__ import annotations

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM

DEMO = DEMO_DEM.parent
TOWN = DEMO / "town.gpkg"
SURFACE = DEMO / "town-surface.tif"
ROOFTOPS = DEMO / "rooftops.csv"
INPUTS = [TOWN, SURFACE, ROOFTOPS, DEMO_DEM]


def _screen(tmp_path, *extra, sites=ROOFTOPS):
    return ["screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "r.csv", *extra]


def test_above_roof_without_a_layer(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof"), ["--above-roof", "--obstructions"], inputs=INPUTS)


def test_above_roof_with_trees_only(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"trees={TOWN}#trees"),
                   ["--above-roof", "building layer"], inputs=INPUTS)


def test_mount_column_saying_roof_without_a_layer(tmp_path):
    assert_refused(_screen(tmp_path), ["rooftops.csv", "above the roof", "Linthorpe Library", "building layer", "--obstructions"], inputs=INPUTS)


def test_missing_layer_file(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", tmp_path / "nowhere.gpkg"),
                   ["nowhere.gpkg"], inputs=INPUTS)


def test_unreadable_layer_file(tmp_path):
    junk = tmp_path / "junk.gpkg"
    junk.write_bytes(b"this is not a GeoPackage\n" * 20)
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", junk), ["junk.gpkg"],
                   inputs=[*INPUTS, junk])


@pytest.mark.filterwarnings("ignore:.crs. was not provided")
def test_layer_without_a_crs(tmp_path):
    import geopandas as gpd

    buildings = gpd.read_file(TOWN, layer="buildings").set_crs(None, allow_override=True)
    shp = tmp_path / "no_crs.shp"
    buildings.to_file(shp)
    assert not shp.with_suffix(".prj").exists()
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", shp), ["no_crs", "crs"],
                   inputs=[*INPUTS, shp])


def test_unknown_layer_kind(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"water={TOWN}#buildings"),
                   ["water"], inputs=INPUTS)


def test_unknown_layer_name(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"{TOWN}#roads"),
                   ["roads"], inputs=INPUTS)


def test_height_field_not_in_the_layer(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"{TOWN}#buildings",
                           "--height-field", "storeys"), ["storeys"], inputs=INPUTS)


def test_negative_tree_allowance(tmp_path):
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"{TOWN}#buildings",
                           "--tree-allowance-m", "-1"), ["--tree-allowance-m"], inputs=INPUTS)


def test_missing_surface_raster(tmp_path):
    assert_refused(_screen(tmp_path, "--surface", tmp_path / "dsm.tif", sites=DEMO / "sites.csv"),
                   ["dsm.tif"], inputs=INPUTS)


def test_pairs_file_with_one_height_column(tmp_path):
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b,height_a_m\nLinthorpe Library,Harbour Row Flats,4\n")
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"{TOWN}#buildings", "--pairs", pairs),
                   ["pairs.csv", "height_a_m without height_b_m"], inputs=[*INPUTS, pairs])


def test_no_roof_site_stands_in_a_building(tmp_path):
    sites = tmp_path / "fields.csv"
    sites.write_text("name,lat,lon,antenna_height_m\nField 1,-30.5340,-20.8500,3\nField 2,-30.5300,-20.8600,3\n")
    assert_refused(_screen(tmp_path, "--above-roof", "--obstructions", f"{TOWN}#buildings", sites=sites),
                   ["fields.csv", "0 of 2 sites can be placed", "not inside any building"],
                   inputs=[*INPUTS, sites])


def test_result_on_the_layer_file(tmp_path):
    import shutil

    town = tmp_path / "town.gpkg"
    shutil.copy(TOWN, town)
    assert_refused(["screen", ROOFTOPS, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--above-roof",
                    "--obstructions", f"{town}#buildings", "-o", town, "--overwrite"],
                   ["town.gpkg"], inputs=[*INPUTS, town])
