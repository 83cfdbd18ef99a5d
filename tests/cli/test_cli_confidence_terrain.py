"""Confidence with a fetched dataset: its stated accuracy in link and screen alike (local tile server)."""

from __future__ import annotations

import csv
import json

from tests.terrain_server import copernicus_tiles, tile_server  # noqa: F401

RADIO = ["--freq-ghz", "11", "--gain-a-dbi", "30", "--gain-b-dbi", "30"]


def test_link_and_screen_take_the_datasets_sigma_and_agree(tile_server, cli, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7)])
    src = ["--terrain", "copernicus-30", "--terrain-url", tile_server.url]
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,antenna_agl_m\nS1,45.5,7.3,210\nS2,45.6,7.6,210\n")
    out = cli("screen", str(sites), "-o", str(tmp_path / "out.csv"), *src, *RADIO, "--draws", "200", "-q",
              "--workers", "1")
    assert out.exit_code == 0, out.output
    row = next(csv.DictReader((tmp_path / "out.csv").open()))
    link = cli("link", *src, "--site-a", "45.5,7.3", "--site-b", "45.6,7.6", "--agl-a", "210", "--agl-b", "210",
               *RADIO, "--draws", "200", "--json")
    assert link.exit_code == 0, link.output
    c = json.loads(link.stdout)["confidence"]
    # Copernicus DEM: < 4 m LE90 (from memory), sigma = 4 / 1.645
    assert abs(c["model"]["dem_error"]["sigma_m"] - 2.4317) < 1e-3
    assert "Copernicus" in c["model"]["dem_error"]["source"]
    assert 0.0 < c["p_meets_criterion"] < 1.0 or 0.0 < c["p_line_of_sight"] < 1.0  # the sigma matters
    assert float(row["p_meets"]) == c["p_meets_criterion"] and float(row["p_los"]) == c["p_line_of_sight"]
