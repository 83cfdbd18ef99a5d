"""terrahop coverage end to end on the demo terrain: the raster, the ranked sites, the picture."""

from __future__ import annotations

import csv

import numpy as np
import rasterio

from tests.conftest import DEMO_DEM, REPO

SITES = REPO / "data" / "demo" / "sites.csv"
TALLIS = "-30.444113,-20.937510"

RADIO = """
name = "test 5.8 GHz radio"
noise_figure_db = 6
tx_power_dbm = 23

[[band]]
low_ghz = 5.725
high_ghz = 5.875

[[channel]]
width_mhz = 20
steps = [
  { label = "BPSK", capacity_mbps = 6, required_snr_db = 4 },
  { label = "QPSK", capacity_mbps = 18, required_snr_db = 10 },
  { label = "16QAM", capacity_mbps = 36, required_snr_db = 17 },
  { label = "64QAM", capacity_mbps = 54, required_snr_db = 24 },
]
"""

SECTOR = """
name = "test sector"
gain_dbi = 17
band_ghz = [5.1, 5.9]
[envelope]
angle_deg = [0, 30, 45, 60, 90, 180]
relative_db = [0, -3, -8, -15, -22, -30]
"""


def _base(tmp_path, *extra):
    return ["coverage", "--dem", str(DEMO_DEM), "--site", TALLIS, "--agl", "15", "--freq-ghz", "5.8",
            "--tx-power-dbm", "20", "--gain-a-dbi", "16", "--gain-b-dbi", "16", "--workers", "1", *extra]


def test_demo_run_writes_the_raster_the_sites_and_the_picture(tmp_path, cli):
    out = tmp_path / "cov.tif"
    result = cli(*_base(tmp_path, "--radius-km", "7", "--rx-agl-m", "6", "--out", str(out),
                        "--png", str(tmp_path / "cov.png"), "--sites", str(SITES)))
    assert result.exit_code == 0, result.output
    assert "cells evaluated" in result.stdout and "wrote" in result.stdout
    with rasterio.open(out) as ds:
        assert ds.count == 6
        assert ds.descriptions == ("f1_fraction", "line_of_sight", "diffraction_db", "rx_level_dbm", "snr_db",
                                   "fade_margin_db")
        assert ds.units == ("1", "1", "dB", "dBm", "dB", "dB")
        assert np.isnan(ds.nodata)
        assert ds.profile["tiled"]
        assert ds.res == (25.0, 25.0)  # the terrain raster's own grid
        margin = ds.read(6)
        assert np.isfinite(margin).sum() > 0.9 * np.pi * 7000.0 ** 2 / 625.0 * 0.8  # the disk overruns the raster a little
        assert "caution" in ds.tags()
    assert (tmp_path / "cov.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    rows = list(csv.DictReader(open(tmp_path / "cov-sites.csv")))
    ranked = [r for r in rows if r["rank"]]
    margins = [float(r["fade_margin_db"]) for r in ranked]
    assert margins == sorted(margins, reverse=True) and len(ranked) >= 2
    assert any(r["note"] == "beyond the coverage radius" for r in rows)
    assert not (tmp_path / "cov.tif.partial").exists() and not (tmp_path / "cov.tif.lock").exists()


def test_a_radio_profile_adds_the_best_step(tmp_path, cli):
    radio = tmp_path / "radio.toml"
    radio.write_text(RADIO)
    out = tmp_path / "steps.tif"
    result = cli(*_base(tmp_path, "--radius-km", "3", "--radio", str(radio), "--out", str(out)))
    assert result.exit_code == 0, result.output
    with rasterio.open(out) as ds:
        assert ds.count == 7 and ds.descriptions[-1] == "step"
        assert "4=64QAM" in ds.tags()["steps"]
        snr, step = ds.read(5), ds.read(7)
    ok = np.isfinite(snr)
    # The best step is the highest whose SNR plus the default 10 dB margin fits (profiler.equipment.modulation).
    need = np.array([4.0, 10.0, 17.0, 24.0]) + 10.0
    expected = (snr[ok][:, None] >= need[None, :]).sum(axis=1)
    assert np.array_equal(step[ok].astype(int), expected)


def test_hub_from_the_sites_file_cell_grid_and_other_formats(tmp_path, cli):
    out = tmp_path / "grid.tif"
    result = cli("coverage", "--dem", str(DEMO_DEM), "--sites", str(SITES), "--hub", "Tallis Farm",
                 "--freq-ghz", "5.8", "--radius-km", "5", "--cell-m", "100", "--out", str(out),
                 "--sites-out", str(tmp_path / "ranked.gpkg"), "--workers", "1")
    assert result.exit_code == 0, result.output
    with rasterio.open(out) as ds:
        assert ds.res == (100.0, 100.0) and ds.width == ds.height == 100
        assert "+proj=aeqd" in ds.crs.to_proj4() or "Azimuthal" in ds.crs.to_wkt()
    import geopandas as gpd

    frame = gpd.read_file(tmp_path / "ranked.gpkg")
    assert "Tallis Farm" not in set(frame["name"])  # the hub is not its own subscriber
    result = cli("coverage", "--dem", str(DEMO_DEM), "--sites", str(SITES), "--hub", "Tallis Farm",
                 "--freq-ghz", "5.8", "--radius-km", "2", "--out", str(tmp_path / "k.tif"),
                 "--sites-out", str(tmp_path / "ranked.kml"), "--workers", "1")
    assert result.exit_code == 0, result.output
    assert "<kml" in (tmp_path / "ranked.kml").read_text()


def test_a_sector_file_shapes_the_received_level(tmp_path, cli):
    antenna = tmp_path / "sector.toml"
    antenna.write_text(SECTOR)
    omni, sect = tmp_path / "omni.tif", tmp_path / "sector.tif"
    assert cli(*_base(tmp_path, "--radius-km", "2", "--out", str(omni))).exit_code == 0
    res = cli("coverage", "--dem", str(DEMO_DEM), "--site", TALLIS, "--agl", "15", "--freq-ghz", "5.8",
              "--tx-power-dbm", "20", "--antenna-a", str(antenna), "--gain-b-dbi", "16", "--radius-km", "2",
              "--hub-azimuth-deg", "0", "--out", str(sect), "--workers", "1")
    assert res.exit_code == 0, res.output
    with rasterio.open(omni) as a, rasterio.open(sect) as b:
        diff = b.read(4) - a.read(4)  # 17 dBi sector minus a 16 dBi omni
        h, w = diff.shape
    north, south = diff[: h // 4, w // 2], diff[3 * h // 4:, w // 2]
    assert np.nanmax(np.abs(north - 1.0)) < 1.0  # boresight: +1 dB
    assert np.nanmax(np.abs(south - (1.0 - 30.0))) < 1.0  # behind: the envelope's -30 dB


def test_radius_beyond_the_terrain_computes_the_covered_part_with_a_warning(tmp_path, cli):
    out = tmp_path / "big.tif"
    result = cli(*_base(tmp_path, "--radius-km", "12", "--cell-m", "200", "--out", str(out)))
    assert result.exit_code == 0, result.output
    with rasterio.open(out) as ds:
        margin = ds.read(6)
    assert np.isfinite(margin).any() and np.isnan(margin).sum() > 0


def test_interrupted_run_resumes(tmp_path, cli, monkeypatch):
    from profiler.coverage import run as cov_run

    out = tmp_path / "r.tif"
    args = _base(tmp_path, "--radius-km", "2", "--out", str(out), "--block-radials", "64")
    monkeypatch.setattr(cov_run, "CRASH_AFTER_BLOCKS", 2)
    stopped = cli(*args)
    assert stopped.exit_code == 130 and "--resume" in stopped.stderr
    assert len(list((tmp_path / "r.tif.partial").glob("block-*.npz"))) == 2
    monkeypatch.setattr(cov_run, "CRASH_AFTER_BLOCKS", None)
    result = cli(*args, "--resume")
    assert result.exit_code == 0, result.output
    assert "2 of" in result.stdout and "from the interrupted run" in result.stdout
    whole = tmp_path / "w.tif"
    assert cli(*_base(tmp_path, "--radius-km", "2", "--out", str(whole))).exit_code == 0
    with rasterio.open(out) as a, rasterio.open(whole) as b:
        assert np.array_equal(a.read(), b.read(), equal_nan=True)


def test_a_bad_sites_row_is_reported_and_skipped(tmp_path, cli):
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,antenna_agl_m\nnear,-30.45,-20.93,6\nbroken,abc,-20.93,6\n")
    out = tmp_path / "s.tif"
    result = cli(*_base(tmp_path, "--radius-km", "2", "--out", str(out), "--sites", str(sites)))
    assert result.exit_code == 0, result.output
    assert "skipped: sites.csv row 3 ('broken')" in result.stderr
    rows = list(csv.DictReader(open(tmp_path / "s-sites.csv")))
    assert [r["name"] for r in rows] == ["near"] and rows[0]["rank"] == "1"
