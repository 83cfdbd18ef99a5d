"""End to end: ``terrahop terrain fetch`` and ``--terrain`` on link, heights, sheet and screen, over a local server."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.conftest import run_cli
from tests.terrain_server import copernicus_tiles, tile_server  # noqa: F401

SITES = ["--site-a", "45.5,7.3", "--site-b", "45.6,7.6"]
RADIO = ["--freq-ghz", "11", "--gain-a-dbi", "30", "--gain-b-dbi", "30", "--agl-a", "25", "--agl-b", "25"]


def _numbers(record: dict) -> dict:
    """The record without provenance and the datum wording (what the heights are, not where from)."""
    out = dict(record)
    out.pop("provenance")
    out["inputs"] = {k: v for k, v in out["inputs"].items() if not k.startswith("vertical_datum")}
    if "installation" in out:  # it names the datum too
        out["installation"] = {k: v for k, v in out["installation"].items() if k != "vertical_datum"}
    return out


def test_link_with_terrain_equals_dem_on_the_same_tiles_then_runs_from_the_cache(tile_server, cli):
    served = copernicus_tiles(tile_server.root, [(45, 7)])
    fetched = cli("link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES, *RADIO, "--json")
    assert fetched.exit_code == 0, fetched.output
    given = cli("link", "--dem", str(served[0]), *SITES, *RADIO, "--json")
    a, b = json.loads(fetched.stdout), json.loads(given.stdout)
    assert _numbers(a) == _numbers(b)
    ts = a["provenance"]["terrain_source"]
    assert ts["source"] == "copernicus-30" and ts["vertical_datum"] == "EGM2008 (EPSG:3855)"
    assert ts["surface_model"] is True
    assert [t["tile"] for t in ts["tiles"]] == ["N45E007"] and len(ts["tiles"][0]["sha256"]) == 64
    assert a["inputs"]["vertical_datum"].startswith("EGM2008")
    hits = len(tile_server.hits)
    tile_server.stop()  # the same command with the server gone works from the cache
    again = cli("link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES, *RADIO, "--json")
    assert again.exit_code == 0, again.output
    assert _numbers(json.loads(again.stdout)) == _numbers(a) and len(tile_server.hits) == hits


def test_summary_names_the_source_and_the_surface_model(tile_server, cli):
    copernicus_tiles(tile_server.root, [(45, 7)])
    out = cli("link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES, *RADIO)
    assert out.exit_code == 0, out.output
    assert "EGM2008" in out.stdout and "surface model" in out.stdout
    assert "terrain            copernicus-30" in out.stdout


def test_given_rasters_win_where_they_cover(tile_server, cli, tmp_path):
    import numpy as np
    import rasterio
    from rasterio.transform import from_bounds

    copernicus_tiles(tile_server.root, [(45, 7)])
    flat = tmp_path / "flat.tif"
    with rasterio.open(flat, "w", driver="GTiff", width=100, height=100, count=1, dtype="float32",
                       crs="EPSG:4326", transform=from_bounds(7.0, 45.0, 8.0, 46.0, 100, 100)) as dst:
        dst.write(np.full((1, 100, 100), 123.0, dtype="float32"))
    out = cli("link", "--dem", str(flat), "--terrain", "copernicus-30", "--terrain-url", tile_server.url,
              *SITES, *RADIO, "--json")
    record = json.loads(out.stdout)
    assert record["sites"]["a"]["ground_m"] == 123.0 and record["sites"]["b"]["ground_m"] == 123.0


def test_link_file_terrain_source(tile_server, cli, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7)])
    link_file = tmp_path / "real.toml"
    link_file.write_text(f'''
[terrain]
source = "copernicus-30"
url = "{tile_server.url}"
[site_a]
lat = 45.5
lon = 7.3
[site_b]
lat = 45.6
lon = 7.6
[radio]
freq_ghz = 11
gain_a_dbi = 30
gain_b_dbi = 30
''')
    out = cli("link", str(link_file), "--json")
    assert out.exit_code == 0, out.output
    assert json.loads(out.stdout)["provenance"]["terrain_source"]["source"] == "copernicus-30"


def test_heights_and_sheet_with_terrain(tile_server, cli, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7)])
    base = ["--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES, "--freq-ghz", "11"]
    heights = cli("heights", *base)
    assert heights.exit_code == 0, heights.output
    assert "EGM2008" in heights.stdout
    sheet = cli("sheet", *base, "-o", str(tmp_path / "s.png"))
    assert sheet.exit_code == 0, sheet.output
    assert (tmp_path / "s.png").stat().st_size > 1000


def test_screen_with_terrain(tile_server, cli, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7)])
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon\nS1,45.5,7.3\nS2,45.6,7.6\nS3,45.4,7.5\n")
    out = cli("screen", str(sites), "-o", str(tmp_path / "out.csv"), "--terrain", "copernicus-30",
              "--terrain-url", tile_server.url, "--freq-ghz", "11")
    assert out.exit_code == 0, out.output
    assert "terrain: copernicus-30" in out.stdout and "EGM2008" in out.stdout
    assert len((tmp_path / "out.csv").read_text().splitlines()) == 4


def test_terrain_fetch_bbox_and_around(tile_server, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7), (45, 8)])
    vrt = tmp_path / "area.vrt"
    proc = run_cli("terrain", "fetch", "copernicus-30", "--bbox", "7.2,45.2,8.5,45.8", "--terrain-url",
                   tile_server.url, "--vrt", str(vrt))
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == str(vrt) and vrt.exists()
    assert "2 tiles (2 downloaded" in proc.stderr and "EGM2008" in proc.stderr
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon\nS1,45.5,7.3\nS2,45.6,7.6\n")
    again = run_cli("terrain", "fetch", "copernicus-30", "--around", str(sites), "--margin-km", "1",
                    "--terrain-url", tile_server.url, "-q")
    assert again.returncode == 0, again.stderr
    assert again.stderr == "" and Path(again.stdout.strip()).exists()
    assert len(tile_server.hits) == 2  # the second came from the cache


def test_offline_link_with_a_missing_tile_is_one_line(tile_server):
    proc = run_cli("link", "--terrain", "copernicus-30", "--offline", *SITES, *RADIO)
    assert proc.returncode == 1
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "N45E007" in lines[0] and "terrahop terrain fetch copernicus-30" in lines[0]
    assert tile_server.hits == []


@pytest.mark.parametrize("command", ["link", "heights"])
def test_help_names_terrain(command, cli):
    out = cli(command, "--help")
    assert "--terrain SOURCE" in out.stdout and "--offline" in out.stdout


def test_link_file_mirror_folder_is_relative_to_the_file(tmp_path, monkeypatch, cli):
    monkeypatch.setenv("TERRAHOP_CACHE", str(tmp_path / "cache"))
    monkeypatch.setenv("TERRAHOP_TILE_ROWS", "300")
    copernicus_tiles(tmp_path / "job" / "mirror", [(45, 7)])
    link_file = tmp_path / "job" / "l.toml"
    link_file.write_text('[terrain]\nsource = "copernicus-30"\nurl = "mirror"\n[site_a]\nlat = 45.5\nlon = 7.3\n'
                         '[site_b]\nlat = 45.6\nlon = 7.6\n[radio]\nfreq_ghz = 11\n')
    monkeypatch.chdir(tmp_path)
    out = cli("link", str(link_file), "--json")
    assert out.exit_code == 0, out.output
    ts = json.loads(out.stdout)["provenance"]["terrain_source"]
    assert ts["base_url"].startswith("file://") and ts["tiles"][0]["sha256"]


def test_climate_itu_fetches_the_sa_square_and_computes_sa_from_the_tiles(tile_server, cli):
    # sa is taken over 110 km x 110 km around the path centre (ITU-R P.530-17 section 2.3.1), so with
    # --climate itu the tiles fetched reach 60 km beyond the sites: here the 3 x 3 tiles around N45E007.
    pytest.importorskip("itur")
    copernicus_tiles(tile_server.root, [(lat, lon) for lat in (44, 45, 46) for lon in (6, 7, 8)])
    out = cli("link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, "--climate", "itu",
              *SITES, *RADIO, "--json")
    assert out.exit_code == 0, out.output
    record = json.loads(out.stdout)
    tiles = {t["tile"] for t in record["provenance"]["terrain_source"]["tiles"]}
    assert tiles == {f"N{lat}E00{lon}" for lat in (44, 45, 46) for lon in (6, 7, 8)}
    assert record["inputs"]["climate"]["sources"]["terrain_roughness_m"].startswith("computed from the elevation")
    # without the maps, the box around the sites is enough
    plain = cli("link", "--terrain", "copernicus-30", "--terrain-url", tile_server.url, *SITES, *RADIO, "--json")
    assert [t["tile"] for t in json.loads(plain.stdout)["provenance"]["terrain_source"]["tiles"]] == ["N45E007"]
