"""screen() from Python: sites as a path, a DataFrame or a GeoDataFrame; GeoDataFrames back without --out."""

from __future__ import annotations

import doctest
import os

import numpy as np
import pandas as pd
import pytest

from profiler.budget import Radio
from profiler.errors import InputError
from profiler.screening import PairPlan, ScreenSummary, Verdict, screen
from profiler.screening import run as run_module

from tests._screening_data import DEMO_DEM, DEMO_SITES, REPO

RADIO = Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23)
PLAN = PairPlan(max_km=6.0)


@pytest.fixture(scope="module")
def from_path():
    return screen(str(DEMO_SITES), str(DEMO_DEM), RADIO, plan=PLAN, workers=1)


def test_without_out_the_result_is_two_geodataframes_as_the_file_holds_them(from_path, tmp_path):
    import geopandas as gpd

    links, sites = from_path
    summary = screen(str(DEMO_SITES), str(DEMO_DEM), RADIO, out=tmp_path / "r.gpkg", plan=PLAN, workers=1)
    assert isinstance(summary, ScreenSummary)
    on_disk = gpd.read_file(tmp_path / "r.gpkg", layer="links")
    pd.testing.assert_frame_equal(links, on_disk)
    pd.testing.assert_frame_equal(sites, gpd.read_file(tmp_path / "r.gpkg", layer="sites"))
    assert links.crs.to_epsg() == 4326 and set(links.geom_type) == {"LineString"}
    assert links.attrs["summary"].counts == summary.counts and links.attrs["summary"].outputs == ()
    assert (links["verdict"] == Verdict.VIABLE.value).sum() == summary.viable


def test_a_dataframe_of_sites_gives_the_same_links_as_its_file(from_path):
    links, sites = from_path
    frame_links, frame_sites = screen(pd.read_csv(DEMO_SITES), DEMO_DEM, RADIO, plan=PLAN, workers=1)
    pd.testing.assert_frame_equal(frame_links, links)
    pd.testing.assert_frame_equal(frame_sites, sites)


def test_a_geodataframe_in_another_crs_gives_the_same_numbers(from_path):
    import geopandas as gpd

    links, _ = from_path
    df = pd.read_csv(DEMO_SITES)
    points = gpd.GeoDataFrame(df.drop(columns=["lat", "lon"]), geometry=gpd.points_from_xy(df.lon, df.lat),
                              crs="EPSG:4326").to_crs("EPSG:32724")
    got, _ = screen(points, DEMO_DEM, RADIO, plan=PLAN, workers=1)
    assert list(got["site_a"]) == list(links["site_a"]) and list(got["site_b"]) == list(links["site_b"])
    np.testing.assert_allclose(got["fade_margin_db"], links["fade_margin_db"], rtol=0, atol=1e-6)


def test_a_bad_row_of_a_frame_is_named_by_its_position_and_skipped():
    df = pd.read_csv(DEMO_SITES)
    df.loc[2, "lat"] = 95.0
    links, sites = screen(df, DEMO_DEM, RADIO, plan=PLAN, workers=1)
    bad = links.attrs["summary"].bad_rows
    assert [(b.source, b.row, b.name) for b in bad] == [("sites frame", 2, df.loc[2, "name"])]
    assert df.loc[2, "name"] not in set(sites["name"])


def test_sites_of_another_type_are_refused_in_one_sentence():
    with pytest.raises(InputError, match="GeoDataFrame or a DataFrame, not list"):
        screen([("a", 1.0, 2.0)], DEMO_DEM, RADIO, workers=1)


def test_the_docstring_example_runs():
    here = os.getcwd()
    os.chdir(REPO)  # the example names the demo files from the repository's top
    try:
        finder = doctest.DocTestFinder()
        runner = doctest.DocTestRunner(optionflags=doctest.NORMALIZE_WHITESPACE)
        tests = [t for t in finder.find(run_module.screen, "screen", globs={}) if t.examples]
        assert tests
        for test in tests:
            runner.run(test)
        assert runner.failures == 0 and runner.tries >= 3
    finally:
        os.chdir(here)


def test_frame_errors_name_the_frame_not_a_temporary_file():
    import geopandas as gpd

    df = pd.read_csv(DEMO_SITES)
    with pytest.raises(InputError, match="has no CRS"):
        screen(gpd.GeoDataFrame(df, geometry=gpd.points_from_xy(df.lon, df.lat)), DEMO_DEM, RADIO, workers=1)
    with pytest.raises(InputError) as caught:
        screen(df.drop(columns=["lat"]), DEMO_DEM, RADIO, workers=1)
    assert str(caught.value).startswith("sites frame") and "terrahop-sites-" not in str(caught.value)
