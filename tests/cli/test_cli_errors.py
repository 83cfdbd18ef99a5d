"""Bad input on the command line: one-line message, non-zero exit, never a traceback."""

import numpy as np
import pytest

from tests.conftest import DEMO_DEM, run_cli, write_raster

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"


def _check(result, *words):
    assert result.exit_code != 0
    assert "Traceback" not in result.output
    message = result.output.strip()
    assert len(message.splitlines()) == 1 or message.splitlines()[0].startswith("Usage"), message
    for w in words:
        assert w in result.output, result.output


def base(*extra):
    return ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5.8", *extra]


@pytest.mark.parametrize(
    "args, words",
    [
        (["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", "10.0,10.0", "--freq-ghz", "5"],
         ["site b", "outside the elevation rasters"]),
        (["link", "--dem", "/nope/missing.tif", "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5"],
         ["not found", "missing.tif"]),
        (["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", ORRIN, "--freq-ghz", "5.8"],
         ["same position"]),
        (["link", "--dem", str(DEMO_DEM), "--site-a", "north,east", "--site-b", BRACKWELL, "--freq-ghz", "5"],
         ["--site-a", "LAT,LON"]),
        (["link", "--dem", str(DEMO_DEM), "--site-a", "-130.4,-20.9", "--site-b", BRACKWELL, "--freq-ghz", "5"],
         ["latitude"]),
        (base()[:-2] + ["--freq-ghz", "0"], ["freq_ghz", "between 0.03 and 1000 GHz"]),
        (base()[:-2] + ["--freq-ghz", "-2.4"], ["freq_ghz"]),
        (base("--k", "0"), ["k", "between 0.1 and 100"]),
        (base("--k-worst", "-1"), ["k_worst"]),
        (base("--agl-a", "-5"), ["antenna height", "site a"]),
        (["link", "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5"], ["no elevation raster"]),
        (["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL], ["frequency missing"]),
        (["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--freq-ghz", "5"], ["site b", "position missing"]),
        (base("--spacing-m", "0"), ["spacing"]),
        (base("--k", "four"), ["k", "fraction like 4/3"]),
    ],
)
def test_bad_input(cli, args, words):
    _check(cli(*args), *words)


def test_raster_without_crs(cli, tmp_path):
    path = write_raster(tmp_path / "nocrs.tif", np.zeros((10, 10), dtype="float32"), crs=None)
    _check(cli("link", "--dem", str(path), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5"),
           "no coordinate reference system")


def test_file_that_is_not_a_raster(cli, tmp_path):
    p = tmp_path / "readme.tif"
    p.write_text("hello")
    _check(cli("link", "--dem", str(p), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5"),
           "cannot read", "readme.tif")


def test_nodata_on_path_names_distance(cli, tmp_path):
    from rasterio.transform import from_origin

    arr = np.full((100, 100), 50.0, dtype="float32")
    arr[:, 50] = -9999
    path = write_raster(tmp_path / "hole.tif", arr, nodata=-9999.0, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))
    args = ["link", "--dem", str(path), "--site-a", "46.02,10.01", "--site-b", "46.02,10.04", "--freq-ghz", "5"]
    _check(cli(*args), "nodata", "km from site a", "--nodata-fill-m")
    assert cli(*args, "--nodata-fill-m", "50").exit_code == 0


@pytest.mark.parametrize(
    "content, words",
    [
        ("this is [not toml", ["not a valid TOML"]),
        ("[site_a]\nname='x'\nlat=1\nlon=2\nheight=3\n", ["unknown key", "height"]),
        ("[sites]\n", ["unknown key or section", "sites"]),
        ("[radio]\nfreq_ghz='five'\n[site_a]\nlat=-30.42\nlon=-20.97\n[site_b]\nlat=-30.40\nlon=-20.91\n"
         f"[terrain]\nrasters=['{DEMO_DEM}']\n", ["[radio] freq_ghz", "must be a number"]),
    ],
)
def test_bad_link_files(cli, tmp_path, content, words):
    p = tmp_path / "bad.toml"
    p.write_text(content)
    _check(cli("link", str(p)), *words)


def test_missing_link_file(cli):
    _check(cli("link", "/nope/link.toml"), "link file not found")


def test_subprocess_error_is_one_line_without_traceback():
    proc = run_cli("link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", "0,0", "--freq-ghz", "5")
    assert proc.returncode == 1
    assert "Traceback" not in proc.stderr
    assert proc.stderr.strip().count("\n") == 0 and proc.stderr.startswith("Error:")
