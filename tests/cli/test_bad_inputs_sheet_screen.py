"""Bad-input corpus: sheet and screen options (row selection, output names, datum, radio help).

Harness in tests/cli/bad_input.py: each case exits non-zero with one line on
stderr, no traceback, and leaves every input unchanged.
"""

from __future__ import annotations

import time

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES, REPO

CLEAR = EXAMPLES / "demo-1-clear.toml"
SITES = REPO / "data" / "demo" / "sites.csv"
ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"


@pytest.fixture
def table(tmp_path):
    """A pair table of two rows, as `sheet --pairs` reads it."""
    path = tmp_path / "pairs.csv"
    path.write_text(
        "name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m,fade_margin_db\n"
        f"Orrin,{ORRIN},20,Brackwell,{BRACKWELL},15,12.5\n"
        f"Brackwell,{BRACKWELL},15,Orrin,{ORRIN},20,3.0\n"
    )
    return path


@pytest.mark.parametrize(
    "rows, words",
    [
        ("1-999999999", ["no row 3-999999999", "rows 1 to 2"]),
        ("0", ["count from 1"]),
        ("5-3", ["ranges go upwards"]),
        ("a-b", ["1,3,5-7"]),
        ("1" * 40, ["1,3,5-7"]),
        ("3", ["no row 3", "rows 1 to 2"]),
        (",", ["selects no rows"]),
    ],
)
def test_sheet_bad_row_selection(tmp_path, table, rows, words):
    t0 = time.perf_counter()
    assert_refused(["sheet", CLEAR, "--pairs", table, "--rows", rows, "-o", tmp_path / "x.pdf"], words,
                   inputs=[table, CLEAR, DEMO_DEM])
    assert time.perf_counter() - t0 < 20.0  # refused before any range is expanded
    assert not (tmp_path / "x.pdf").exists()


def test_sheet_rows_without_a_table(tmp_path):
    assert_refused(["sheet", CLEAR, "--rows", "1", "-o", tmp_path / "x.pdf"], ["--pairs"], inputs=[CLEAR])


def test_sheet_best_zero(tmp_path, table):
    assert_refused(["sheet", CLEAR, "--pairs", table, "--best", "0", "-o", tmp_path / "x.pdf"],
                   ["--best must be 1 or more"], inputs=[table, CLEAR])


def test_sheet_unknown_output_suffix(tmp_path):
    assert_refused(["sheet", CLEAR, "-o", tmp_path / "x.docx"], ["cannot tell the sheet format"], inputs=[CLEAR])


@pytest.mark.parametrize("crs, words", [("EPSG:4326", ["not a vertical CRS"]), ("no-such-datum", ["not a vertical CRS"])])
def test_sheet_and_link_refuse_a_vertical_crs_that_is_not_one(tmp_path, crs, words):
    assert_refused(["sheet", CLEAR, "--vertical-crs", crs, "-o", tmp_path / "x.pdf"], words, inputs=[CLEAR])
    assert not (tmp_path / "x.pdf").exists()
    assert_refused(["link", CLEAR, "--vertical-crs", crs], words, inputs=[CLEAR])


def test_screen_without_frequency_names_only_the_flag(tmp_path):
    out = assert_refused(["screen", SITES, "--dem", DEMO_DEM, "-o", tmp_path / "r.csv"], ["give --freq-ghz"],
                         inputs=[SITES, DEMO_DEM])
    assert "link file" not in out.stderr


def test_screen_unknown_output_extension(tmp_path):
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "r.xlsx"],
                   ["unknown extension"], inputs=[SITES, DEMO_DEM])


def test_screen_output_folder_missing(tmp_path):
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "no" / "r.csv"],
                   ["does not exist"], inputs=[SITES, DEMO_DEM])


def test_screen_unknown_name_column(tmp_path):
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--name-col", "label",
                    "-o", tmp_path / "r.csv"], ["no column 'label'"], inputs=[SITES, DEMO_DEM])
