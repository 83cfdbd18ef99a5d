"""Bad-input corpus: link jobs resolved outside the CLI, whose errors carry the setting they concern.

The command line must name its flag (``--nodata-fill-m HEIGHT``), never the
Python argument the core error carries (``nodata_fill_m=HEIGHT``).
Harness: tests/cli/bad_input.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES, write_raster

CLEAR = EXAMPLES / "demo-1-clear.toml"
ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"


def _refused_with_flag(args, words, inputs, api_form):
    out = assert_refused(args, words, inputs=inputs)
    assert api_form not in out.stderr, out.stderr  # the Python argument form stays out of the CLI


@pytest.mark.parametrize(
    "args, words, api_form",
    [
        (["link", "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5"], ["give --dem FILE"], "dem=FILE"),
        (["link", "--dem", DEMO_DEM, "--site-b", BRACKWELL, "--freq-ghz", "5"], ["give --site-a LAT,LON"],
         "site_a="),
        (["link", "--dem", DEMO_DEM, "--site-a", ORRIN, "--site-b", BRACKWELL], ["give --freq-ghz or"],
         "give freq_ghz"),
        (["sheet", "--dem", DEMO_DEM, "--site-a", ORRIN, "--site-b", BRACKWELL, "-o", "x.pdf"],
         ["give --freq-ghz or"], "give freq_ghz"),
        (["link", CLEAR, "--agl-a", "-3"], ["site a (--agl-a)", "antenna height"], "(agl_a)"),
        (["link", CLEAR, "--dn1", "900"], ["--dn1:", "dN1"], "dn1_n_per_km:"),
        (["link", CLEAR, "--rain-rate-mm-h", "900"], ["--rain-rate-mm-h:", "rain rate"], "rain_rate_mm_h:"),
        (["link", CLEAR, "--min-f1-fraction", "5"], ["--min-f1-fraction:", "clearance criterion"],
         "min_f1_fraction:"),
        (["link", CLEAR, "--ellipsoidal-a", "130"], ["say which it is with --vertical-crs"], "with vertical_crs"),
        (["link", CLEAR, "--vertical-crs", "EPSG:32633"], ["--vertical-crs 'EPSG:32633' is not a vertical CRS"],
         "vertical_crs 'EPSG"),
        (["link", CLEAR, "--above-roof-a", "3"], ["building layer (--obstructions FILE)"], "(surroundings)"),
        (["heights", CLEAR, "--above-roof-b", "3"], ["building layer (--obstructions FILE)"], "(surroundings)"),
    ],
)
def test_errors_name_the_flag(args, words, api_form):
    _refused_with_flag(args, words, [DEMO_DEM, CLEAR], api_form)


def test_nodata_on_the_path_names_the_flag(tmp_path):
    from rasterio.transform import from_origin

    arr = np.full((100, 100), 50.0, dtype="float32")
    arr[:, 50] = -9999
    hole = write_raster(tmp_path / "hole.tif", arr, nodata=-9999.0, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))
    args = ["link", "--dem", hole, "--site-a", "46.02,10.01", "--site-b", "46.02,10.04", "--freq-ghz", "5"]
    _refused_with_flag(args, ["nodata", "pass --nodata-fill-m HEIGHT"], [hole], "nodata_fill_m=")


def test_a_bad_value_in_the_link_file_names_the_file_and_key(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(CLEAR.read_text().replace("tx_power_dbm = 20", "tx_power_dbm = 500")
                   .replace("../data/demo/terrain.tif", str(DEMO_DEM)))
    assert_refused(["link", bad], ["bad.toml [radio] tx_power_dbm", "transmitter power"], inputs=[bad, DEMO_DEM])


def test_screen_site_file_errors_name_the_flag(tmp_path):
    sites = tmp_path / "s.csv"
    sites.write_text("name,y,x\nA,1,2\nB,1,3\n")
    base = ["screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "5", "-o", tmp_path / "out.csv"]
    _refused_with_flag(base, ["name it with --lat-col"], [sites, DEMO_DEM], "lat_col")
    sites.write_text("name,lat,lon\nA,1,2\nB,1,3\n")
    _refused_with_flag(base + ["--agl-m", "-5"], ["--agl-m:", "antenna height"], [sites, DEMO_DEM], "default_agl_m")
