"""Bad-input corpus: terrain sources, ``terrain fetch`` and ``--terrain`` (harness in tests/cli/bad_input.py)."""

from __future__ import annotations

import pytest

from tests.cli.bad_input import assert_refused
from tests.terrain_server import copernicus_tiles, tile_server  # noqa: F401

SITES = ["--site-a", "45.5,7.3", "--site-b", "45.6,7.6", "--freq-ghz", "11"]


@pytest.mark.parametrize(
    "args, words",
    [
        (["terrain", "fetch", "copernicus-30"], ["--bbox", "--around"]),
        (["terrain", "fetch", "copernicus-30", "--bbox", "1,2,3"], ["--bbox W,S,E,N", "four numbers"]),
        (["terrain", "fetch", "copernicus-30", "--bbox", "a,b,c,d"], ["--bbox", "four numbers"]),
        (["terrain", "fetch", "copernicus-30", "--bbox", "8,45,7,46"], ["W < E"]),
        (["terrain", "fetch", "copernicus-30", "--bbox", "7,45,8,46", "--around", "x.csv"], ["one of them"]),
        (["terrain", "fetch", "aster", "--bbox", "7,45,8,46"], ["aster"]),
        (["link", "--terrain", "aster", *SITES], ["unknown terrain source", "copernicus-30"]),
        (["heights", "--terrain", "gtopo", *SITES], ["unknown terrain source"]),
        (["link", *SITES], ["[terrain] source", "--dem"]),
    ],
)
def test_refused_before_any_download(args, words, tile_server):
    assert_refused(args, words)
    assert tile_server.hits == []


def test_around_a_missing_file(tile_server, tmp_path):
    assert_refused(["terrain", "fetch", "srtm-1", "--around", str(tmp_path / "none.csv")], ["--around", "no such file"])


def test_margin_out_of_range(tile_server, tmp_path):
    sites = tmp_path / "s.csv"
    sites.write_text("name,lat,lon\nS1,45.5,7.3\n")
    assert_refused(["terrain", "fetch", "srtm-1", "--around", str(sites), "--margin-km", "-1"],
                   ["--margin-km", "0 to 500 km"], inputs=[sites])


def test_offline_missing_tile_names_it_and_the_command(tile_server):
    assert_refused(["link", "--terrain", "copernicus-30", "--offline", *SITES],
                   ["N45E007", "terrahop terrain fetch copernicus-30"])
    assert_refused(["terrain", "fetch", "copernicus-90", "--bbox", "7.1,45.1,7.2,45.2", "--offline"],
                   ["N45E007", "not in the cache"])


def test_cache_is_a_file(tile_server, tmp_path, monkeypatch):
    blocker = tmp_path / "blocker"
    blocker.write_text("x")
    monkeypatch.setenv("TERRAHOP_CACHE", str(blocker))
    assert_refused(["link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES],
                   ["cannot write the terrain cache folder", "TERRAHOP_CACHE"], inputs=[blocker])


def test_server_answers_not_a_raster(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    from profiler.terrain_sources import dataset

    tile_server.faults[dataset("copernicus-30").tile_path(45, 7)] = ["junk"]
    assert_refused(["link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES],
                   ["N45E007", "not a raster"])


def test_server_keeps_failing(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    from profiler.terrain_sources import dataset

    tile_server.faults[dataset("copernicus-30").tile_path(45, 7)] = ["500"] * 10
    assert_refused(["terrain", "fetch", "copernicus-30", "--bbox", "7.1,45.1,7.2,45.2", "--terrain-url",
                    tile_server.url], ["N45E007", "5 tries", "HTTP 500"])


def test_link_file_with_a_bad_source(tile_server, tmp_path):
    f = tmp_path / "l.toml"
    f.write_text('[terrain]\nsource = "moon-dem"\n[site_a]\nlat = 45.5\nlon = 7.3\n[site_b]\nlat = 45.6\n'
                 'lon = 7.6\n[radio]\nfreq_ghz = 11\n')
    assert_refused(["link", str(f)], ["[terrain] source", "moon-dem"], inputs=[f])


def test_link_file_with_a_non_boolean_offline(tile_server, tmp_path):
    f = tmp_path / "l.toml"
    f.write_text('[terrain]\nsource = "srtm-1"\noffline = "yes"\n[site_a]\nlat = 45.5\nlon = 7.3\n[site_b]\n'
                 'lat = 45.6\nlon = 7.6\n[radio]\nfreq_ghz = 11\n')
    assert_refused(["link", str(f)], ["offline", "true or false"], inputs=[f])


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--dem", "x.tif", "--offline"], ["--offline", "open dataset"]),
        (["--dem", "x.tif", "--terrain-url", "http://127.0.0.1:9"], ["--terrain-url", "open dataset"]),
        (["--terrain", "srtm-1", "--terrain-url", "http://[bad"], ["--terrain-url", "not a URL"]),
        (["--terrain", "srtm-1", "--terrain-url", "/no/such/folder"], ["--terrain-url", "existing folder"]),
    ],
)
def test_terrain_flags_that_cannot_work(extra, words, tile_server):
    assert_refused(["link", *SITES, *extra], words)
    assert tile_server.hits == []
