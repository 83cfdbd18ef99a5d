"""Bad-input corpus: terrahop coverage (harness in tests/cli/bad_input.py)."""

from __future__ import annotations

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, REPO

SITES = REPO / "data" / "demo" / "sites.csv"
TALLIS = "-30.444113,-20.937510"


def _cmd(tmp_path, *extra, out=None):
    return ["coverage", "--dem", str(DEMO_DEM), "--freq-ghz", "5.8", "--out", str(out or tmp_path / "c.tif"),
            *extra]


@pytest.mark.parametrize("extra, words", [
    (["--site", TALLIS, "--agl", "15", "--radius-km", "0"], ["coverage radius", "above 0"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "500"], ["coverage radius", "200"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--cell-m", "0.5"], ["output cell size", "cell_m"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--cell-m", "nan"], ["output cell size", "finite"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--rx-agl-m", "-1"], ["receiver height"]),
    (["--site", "10,10", "--agl", "15", "--radius-km", "2"], ["outside the terrain rasters"]),
    (["--site", TALLIS, "--radius-km", "2"], ["--agl"]),
    (["--radius-km", "2"], ["no hub"]),
    (["--hub", "Tallis Farm", "--radius-km", "2"], ["needs --sites"]),
    (["--hub", "Nowhere", "--sites", str(SITES), "--radius-km", "2"], ["no site of that name", "Nowhere"]),
    (["--hub", "Tallis Farm", "--site", TALLIS, "--sites", str(SITES), "--radius-km", "2"], ["not both"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--diffraction", "deygout"], ["coverage computes"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--diffraction", "epstein-peterson"], ["coverage computes"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--hub-azimuth-deg", "90"], ["--antenna-a"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--hub-azimuth-deg", "400",
      "--antenna-a", str(REPO / "examples" / "dish-0.6m.toml")], ["sector azimuth"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--obstructions", str(REPO / "data" / "demo" / "town.gpkg")],
     ["--surface"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--rx-above-surface"], ["--surface"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--resume"], ["no interrupted coverage run"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--resume", "--restart"], ["contradict"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--workers", "0"], ["--workers"]),
    (["--site", TALLIS, "--agl", "15", "--radius-km", "2", "--scheduler", "not an address"], ["scheduler"]),
])
def test_coverage_refuses(tmp_path, extra, words):
    assert_refused(_cmd(tmp_path, *extra), words, inputs=[DEMO_DEM, SITES])
    assert not (tmp_path / "c.tif").exists()


def test_output_folder_missing(tmp_path):
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2",
                        out=tmp_path / "no" / "c.tif"), ["does not exist"], inputs=[DEMO_DEM])


def test_output_is_a_folder(tmp_path):
    (tmp_path / "d.tif").mkdir()
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2", out=tmp_path / "d.tif"),
                   ["is a folder"], inputs=[DEMO_DEM])


def test_output_with_another_suffix(tmp_path):
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2", out=tmp_path / "c.png"),
                   ["must end in", ".tif"], inputs=[DEMO_DEM])


def test_output_over_the_terrain(tmp_path):
    copy = tmp_path / "dem.tif"
    copy.write_bytes(DEMO_DEM.read_bytes())
    assert_refused(["coverage", "--dem", str(copy), "--freq-ghz", "5.8", "--out", str(copy), "--site", TALLIS,
                    "--agl", "15", "--radius-km", "2"], ["would overwrite the input"], inputs=[copy])


def test_png_and_sites_out_checked_before_work(tmp_path):
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2", "--png",
                        str(tmp_path / "map.jpg")), ["--png", ".png"], inputs=[DEMO_DEM])
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2", "--sites", str(SITES),
                        "--sites-out", str(tmp_path / "r.xlsx")), ["--sites-out", ".csv"], inputs=[DEMO_DEM, SITES])
    assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "2",
                        "--sites-out", str(tmp_path / "r.csv")), ["needs --sites"], inputs=[DEMO_DEM])


def test_a_run_in_progress_is_refused(tmp_path):
    """A live lock on the output (another run) is one line, as screen says it."""
    from profiler.io.stage import RunLock, lock_path

    out = tmp_path / "c.tif"
    with RunLock(lock_path(out), str(out)):
        assert_refused(_cmd(tmp_path, "--site", TALLIS, "--agl", "15", "--radius-km", "1", out=out),
                       ["in progress"], inputs=[DEMO_DEM])


def test_subprocess_missing_raster(tmp_path):
    assert_refused(["coverage", "--dem", str(tmp_path / "none.tif"), "--freq-ghz", "5.8", "--out",
                    str(tmp_path / "c.tif"), "--site", TALLIS, "--agl", "15", "--radius-km", "2"],
                   ["not found"], subprocess=True)
