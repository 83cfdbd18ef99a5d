"""Bad-input corpus: `terrahop screen` flags, sites and pairs (the checks of cli/screen.py's parts).

Harness in tests/cli/bad_input.py: each case exits non-zero with one line on
stderr, no traceback, and leaves every input unchanged.
"""

from __future__ import annotations

import shutil

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, REPO

SITES = REPO / "data" / "demo" / "sites.csv"
BASE = ["--dem", DEMO_DEM, "--freq-ghz", "5.8"]


@pytest.fixture
def sites(tmp_path):
    path = tmp_path / "sites.csv"
    shutil.copy(SITES, path)
    return path


def _screen(sites, tmp_path, *extra, base=BASE):
    return ["screen", sites, *base, "-o", tmp_path / "r.csv", *extra]


def test_no_elevation_raster(sites, tmp_path):
    assert_refused(_screen(sites, tmp_path, base=["--freq-ghz", "5.8"]), ["no elevation raster", "--dem"],
                   inputs=[sites])


def test_resume_and_restart_together(sites, tmp_path):
    assert_refused(_screen(sites, tmp_path, "--resume", "--restart"), ["--resume", "--restart", "contradict"],
                   inputs=[sites])


def test_pairs_file_and_hub_together(sites, tmp_path):
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b\nOrrin Water Tank,Brackwell Silo\n")
    assert_refused(_screen(sites, tmp_path, "--pairs", pairs, "--hub", "Orrin Water Tank"),
                   ["--pairs", "--hub", "give one"], inputs=[sites, pairs])


@pytest.mark.parametrize("value", ["-3", "nan", "inf"])
def test_max_km_not_a_usable_distance(sites, tmp_path, value):
    assert_refused(_screen(sites, tmp_path, "--max-km", value), ["--max-km"], inputs=[sites])


@pytest.mark.parametrize("value", ["nan", "inf"])
def test_min_margin_not_a_number(sites, tmp_path, value):
    assert_refused(_screen(sites, tmp_path, "--min-margin-db", value), ["--min-margin-db"], inputs=[sites])


def test_nodata_fill_not_finite(sites, tmp_path):
    assert_refused(_screen(sites, tmp_path, "--nodata-fill-m", "inf"), ["--nodata-fill-m"], inputs=[sites])


def test_result_on_the_sites_file(sites, tmp_path):
    assert_refused(["screen", sites, *BASE, "-o", sites], ["would overwrite the input", sites.name],
                   inputs=[sites])


def test_unknown_hub(sites, tmp_path):
    assert_refused(_screen(sites, tmp_path, "--hub", "Nowhere Mast"), ["hub", "Nowhere Mast"], inputs=[sites])


def test_fewer_than_two_usable_sites(tmp_path):
    one = tmp_path / "one.csv"
    one.write_text("name,lat,lon,antenna_agl_m\nOrrin,-30.426077,-20.973967,20\nBad,95,-20.9,10\n")
    assert_refused(_screen(one, tmp_path), ["fewer than two usable sites", "row 3"], inputs=[one])


def test_pairs_file_missing(sites, tmp_path):
    assert_refused(_screen(sites, tmp_path, "--pairs", tmp_path / "nope.csv"), ["pairs file not found"],
                   inputs=[sites])


def test_pairs_file_not_a_table(sites, tmp_path):
    pairs = tmp_path / "pairs.csv"
    pairs.write_bytes(b"\xff\xfe\x00garbage\x00\n\x01\x02")
    assert_refused(_screen(sites, tmp_path, "--pairs", pairs), ["pairs.csv"], inputs=[sites, pairs])


def test_every_site_outside_the_rasters(tmp_path):
    far = tmp_path / "far.csv"
    far.write_text("name,lat,lon,antenna_agl_m\nA,10.0,10.0,20\nB,10.01,10.01,20\n")
    assert_refused(_screen(far, tmp_path), ["far.csv", "0 of 2", "elevation rasters"], inputs=[far])
