"""Bad-input corpus: values outside what the method supports (harness in tests/cli/bad_input.py).

Numbers out of their physical range or not finite, booleans where numbers are
due, positions that are the same place written differently, unknown raster
unit tags, mixed vertical datums, site files whose columns or positions
cannot serve.  Each case: non-zero exit, one stderr line, no traceback,
inputs unchanged.  Ranges: profiler/validation.py and the README table
"Limits and refused values".
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES, write_raster

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL]
CLEAR = EXAMPLES / "demo-1-clear.toml"
DEMO_SITES = DEMO_DEM.parent / "sites.csv"


# --- link: numeric options ------------------------------------------------------

@pytest.mark.parametrize(
    "extra, words",
    [
        (["--freq-ghz", "nan"], ["frequency", "finite"]),
        (["--freq-ghz", "2000"], ["frequency", "between 0.03 and 1000 ghz"]),
        (["--freq-ghz", "5.8", "--tx-power-dbm", "inf"], ["transmitter power", "finite"]),
        (["--freq-ghz", "5.8", "--gain-a-dbi", "500"], ["antenna gain at site a", "between -20 and 70"]),
        (["--freq-ghz", "5.8", "--loss-b-db", "-3"], ["feeder loss at site b", "between 0 and 100"]),
        (["--freq-ghz", "5.8", "--bandwidth-mhz", "0"], ["bandwidth", "above 0"]),
        (["--freq-ghz", "5.8", "--noise-figure-db", "-1"], ["noise figure", "between 0 and 30"]),
        (["--freq-ghz", "5.8", "--k", "1e9"], ["k-factor", "between 0.1 and 100"]),
        (["--freq-ghz", "5.8", "--k", "2/3", "--k-worst", "4/3"], ["k_worst", "above k"]),
        (["--freq-ghz", "5.8", "--min-f1-fraction", "60"], ["clearance criterion", "between -2 and 2"]),
        (["--freq-ghz", "5.8", "--agl-b", "1e6"], ["site b", "antenna height above ground"]),
        (["--freq-ghz", "5.8", "--nodata-fill-m", "nan"], ["nodata fill", "finite"]),
        (["--freq-ghz", "5.8", "--temperature-c", "500"], ["temperature", "between -90 and 60"]),
        (["--freq-ghz", "5.8", "--water-vapour-g-m3", "-2"], ["water-vapour", "between 0 and 100"]),
        (["--freq-ghz", "5.8", "--amsl-a", "1e7"], ["site a", "antenna elevation"]),
    ],
)
def test_link_values_out_of_range(extra, words):
    assert_refused(LINK + extra, words, inputs=[DEMO_DEM])


# --- positions: the same place written differently, paths under 1 m ----------------

@pytest.fixture
def dateline(tmp_path):
    """Two tiles either side of longitude 180 (west of it: 179.8..180; east of it: -180..-179.8)."""
    flat = np.full((200, 200), 100.0, dtype="float32")
    from rasterio.transform import from_origin

    east = write_raster(tmp_path / "east.tif", flat, transform=from_origin(-180.0, 10.1, 0.001, 0.001))
    west = write_raster(tmp_path / "west.tif", flat, transform=from_origin(179.8, 10.1, 0.001, 0.001))
    return east, west


@pytest.mark.parametrize(
    "a, b",
    [
        ("10.05,-179.95", "10.05,180.05"),       # crashed with IndexError
        ("10.05,-179.95", "10.05,-179.9499999999"),  # 1e-5 m apart: free-space loss was negative
    ],
)
def test_same_place_across_the_dateline(dateline, a, b):
    east, west = dateline
    assert_refused(["link", "--dem", str(east), "--dem", str(west), "--site-a", a, "--site-b", b,
                    "--freq-ghz", "5"], ["same position", "at least 1 m"], inputs=[east, west])


def test_two_points_at_the_pole(tmp_path):
    from rasterio.transform import from_origin

    pole = write_raster(tmp_path / "pole.tif", np.full((50, 50), 5.0, dtype="float32"),
                        transform=from_origin(-10.0, 90.0, 0.1, 0.1))
    assert_refused(["link", "--dem", str(pole), "--site-a", "90,0", "--site-b", "90,45", "--freq-ghz", "5"],
                   ["same position"], inputs=[pole])


def test_longitude_beyond_360_is_refused():
    assert_refused(["link", "--dem", str(DEMO_DEM), "--site-a", "-30.4,400", "--site-b", BRACKWELL,
                    "--freq-ghz", "5"], ["longitude 400", "0..360"], inputs=[DEMO_DEM])


# --- terrain: unit tags and vertical datums ---------------------------------------------

def test_unknown_band_unit_tag_is_refused(tmp_path):
    cm = write_raster(tmp_path / "cm.tif", np.full((100, 100), 31000.0, dtype="float32"), unit="cm")
    assert_refused(["link", "--dem", str(cm), "--site-a", "45.95,10.01", "--site-b", "45.91,10.09",
                    "--freq-ghz", "5"], ["band unit 'cm'", "known:", "--vertical-unit"], inputs=[cm])


def test_tiles_in_different_vertical_datums_are_refused(tmp_path):
    from rasterio.transform import from_origin

    flat = np.full((100, 100), 100.0, dtype="float32")
    d1 = write_raster(tmp_path / "egm96.tif", flat, crs="EPSG:4326+5773")
    d2 = write_raster(tmp_path / "egm08.tif", flat, crs="EPSG:4326+3855",
                      transform=from_origin(10.1, 46.0, 0.001, 0.001))
    assert_refused(["link", "--dem", str(d1), "--dem", str(d2), "--site-a", "45.95,10.01", "--site-b",
                    "45.95,10.15", "--freq-ghz", "5"], ["different vertical datums", "convert"],
                   inputs=[d1, d2])


# --- link files ---------------------------------------------------------------------

def _link_file(tmp_path: Path, replace: dict[str, str]) -> Path:
    text = CLEAR.read_text()
    text = text.replace('"../data/demo/terrain.tif"', f'"{DEMO_DEM}"')
    for old, new in replace.items():
        assert old in text, old
        text = text.replace(old, new)
    path = tmp_path / "bad.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize(
    "replace, words",
    [
        ({"freq_ghz = 5.8": "freq_ghz = true"}, ["[radio] freq_ghz must be a number", "true"]),
        ({"antenna_agl_m = 20": "antenna_agl_m = false"}, ["[site_a] antenna_agl_m must be a number"]),
        ({"[terrain]\n": '[terrain]\nvertical_unit = 5\n'}, ["[terrain] vertical_unit must be text"]),
        ({"[terrain]\n": '[terrain]\nvertical_unit = "cm"\n'}, ["vertical_unit must be one of m, ft, us-ft"]),
        ({"[terrain]\n": '[terrain]\nnodata_fill_m = "abc"\n'}, ["[terrain] nodata_fill_m must be a number", "'abc'"]),
        ({"lat = -30.426077": "lat = -300.4"}, ["site a", "latitude -300.4"]),
        ({"k_worst = \"2/3\"": "k_worst = \"3/2\""}, ["k_worst 1.5 is above k"]),
        ({"bandwidth_mhz = 20": "bandwidth_mhz = 1e9"}, ["[radio] bandwidth_mhz", "at most 20000 mhz"]),
    ],
)
def test_link_file_values(tmp_path, replace, words):
    path = _link_file(tmp_path, replace)
    assert_refused(["link", str(path)], words, inputs=[path, DEMO_DEM])


# --- heights: bounded grids -----------------------------------------------------------

@pytest.mark.parametrize(
    "extra, words",
    [
        (["--step-m", "1e-9"], ["height step", "between 0.01 and 100 m"]),
        (["--max-mast-a", "1e9"], ["site a", "mast limit", "between 0 and 1000 m"]),
        (["--step-m", "0.01", "--max-mast-b", "900"], ["heights to try", "coarser --step-m"]),
    ],
)
def test_heights_bounds(extra, words):
    assert_refused(["heights", str(CLEAR)] + extra, words, inputs=[CLEAR, DEMO_DEM])


# --- sheet ---------------------------------------------------------------------------

def test_sheet_refuses_a_bad_frequency(tmp_path):
    assert_refused(["sheet", str(CLEAR), "--freq-ghz", "inf", "-o", str(tmp_path / "x.pdf")],
                   ["frequency", "finite"], inputs=[CLEAR, DEMO_DEM])


def test_sheet_pairs_at_the_same_place_are_skipped_then_refused(tmp_path):
    """Row 1 names one place twice (longitude -20.97 written as 339.03): refused, naming the first reason."""
    from tests.cli.bad_input import run_command, sha256_of

    pairs = tmp_path / "pairs.csv"
    pairs.write_text("name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m\n"
                     "P,-30.426077,-20.973967,10,Q,-30.426077,339.026033,10\n")
    before = sha256_of([pairs, DEMO_DEM])
    result = run_command(["sheet", "--pairs", str(pairs), "--dem", str(DEMO_DEM), "--freq-ghz", "5",
                          "-o", str(tmp_path / "x.pdf")])
    assert result.exit_code == 1
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "no usable pair" in lines[0] and "same position" in lines[0], result.stderr
    assert "Traceback" not in result.stderr
    assert sha256_of([pairs, DEMO_DEM]) == before
    assert not (tmp_path / "x.pdf").exists()


# --- screen: options and sites files ----------------------------------------------------

def _screen(sites: Path, tmp_path: Path, *extra: str) -> list[str]:
    return ["screen", str(sites), "--dem", str(DEMO_DEM), "--freq-ghz", "5", "--out",
            str(tmp_path / "result.csv"), "--workers", "1", *extra]


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--agl-m", "-5"], ["--agl-m", "antenna height above ground", "between 0 and 1000 m"]),
        (["--max-km", "nan"], ["--max-km", "finite"]),
        (["--max-km", "0"], ["--max-km", "above 0"]),
        (["--min-margin-db", "1e6"], ["--min-margin-db", "between -100 and 100"]),
        (["--nodata-fill-m", "inf"], ["--nodata-fill-m", "finite"]),
        (["--k", "1", "--k-worst", "2"], ["k_worst 2 is above k 1"]),
        (["--dn1", "nan"], ["--dn1", "dn1", "finite"]),
    ],
)
def test_screen_options(tmp_path, extra, words):
    assert_refused(_screen(DEMO_SITES, tmp_path, *extra), words, inputs=[DEMO_SITES, DEMO_DEM])


def test_screen_sites_all_outside_the_rasters(tmp_path):
    sites = tmp_path / "far.csv"
    sites.write_text("name,lat,lon\nA,10.426077,-20.973967\nB,10.403493,-20.916715\n")
    assert_refused(_screen(sites, tmp_path), ["0 of 2 usable sites", "inside the elevation rasters"],
                   inputs=[sites, DEMO_DEM])


def test_screen_truncated_shapefile_column_is_reported(tmp_path):
    sites = tmp_path / "cut.csv"
    sites.write_text("name,lat,lon,antenna_ag\nA,-30.426077,-20.973967,20\nB,-30.403493,-20.916715,15\n")
    assert_refused(_screen(sites, tmp_path), ["'antenna_ag'", "--agl-col antenna_ag"],
                   inputs=[sites, DEMO_DEM])


def test_link_obstructions_kind_is_named(tmp_path):
    assert_refused(["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5",
                    "--obstructions", f"lava={tmp_path / 'flows.gpkg'}"],
                   ["unknown obstruction kind 'lava'", "known kinds: building"], inputs=[DEMO_DEM])


def test_screen_decimal_commas_in_a_comma_file_are_refused(tmp_path):
    """Unquoted 46,1 in a comma file shifted the row (a site named '1'); now one line with the fix."""
    sites = tmp_path / "dc.csv"
    sites.write_text("name,lat,lon\nA,-30,426077,-20,973967\nB,-30.403493,-20.916715\n")
    assert_refused(_screen(sites, tmp_path), ["line 2 has 5 cells", "semicolons"], inputs=[sites, DEMO_DEM])
