"""Bad-input corpus: antenna files and tables, --date, --profile-csv, screening antennas
(harness in tests/cli/bad_input.py)."""

from __future__ import annotations

import shutil

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES

DEMO6 = EXAMPLES / "demo-6-availability-18ghz.toml"
DISH = EXAMPLES / "dish-0.6m.toml"
SITES = DEMO_DEM.parent / "sites.csv"


def _antenna(tmp_path, text: str, name: str = "ant.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


@pytest.mark.parametrize("text, words", [
    ('name = "x"\ngain_dbi = 30\ncolour = "red"\n', ["ant.toml", "unknown key", "colour"]),
    ('name = "no gain"\npolarisation = "vertical"\n', ["ant.toml", "gain_dbi", "diameter_m", "neither"]),
    ("diameter_m = 0.6\nefficiency = 1.5\n", ["ant.toml", "efficiency", "at most 1"]),
    ("gain_dbi = 30\n[envelope]\nangle_deg = [0, 10, 5]\nrelative_db = [0, -20, -30]\n",
     ["ant.toml", "envelope", "angle_deg", "out of order"]),
    ("gain_dbi = 50\ndiameter_m = 0.3\n", ["ant.toml", "gain_dbi", "diameter_m", "disagree"]),
    ("gain_dbi = = 3\n", ["ant.toml", "not a valid TOML"]),
])
def test_bad_antenna_files_on_link(tmp_path, text, words):
    ant = _antenna(tmp_path, text)
    assert_refused(["link", str(DEMO6), "--antenna-a", str(ant)], words, inputs=[ant, DEMO6])


def test_missing_antenna_file(tmp_path):
    assert_refused(["link", str(DEMO6), "--antenna-b", str(tmp_path / "none.toml")],
                   ["antenna file not found", "none.toml"], inputs=[DEMO6])


def test_antenna_and_gain_flag_together():
    assert_refused(["link", str(DEMO6), "--antenna-a", str(DISH), "--gain-a-dbi", "30"],
                   ["--antenna-a FILE", "--gain-a-dbi", "not both"], inputs=[DEMO6, DISH])


def test_frequency_outside_the_antenna_band():
    assert_refused(["link", str(DEMO6), "--antenna-a", str(DISH), "--freq-ghz", "23"],
                   ["dish-0.6m.toml", "23 GHz", "outside", "band_ghz"], inputs=[DEMO6, DISH])


def _link_file(tmp_path, extra: str):
    text = DEMO6.read_text().replace('"../data/demo/terrain.tif"', f'"{DEMO_DEM}"') + extra
    path = tmp_path / "link.toml"
    path.write_text(text)
    return path


def test_link_file_antenna_table_and_radio_gain_together(tmp_path):
    link = _link_file(tmp_path, "\n[antenna_a]\ndiameter_m = 0.6\n")  # [radio] gain_a_dbi = 41 is there too
    assert_refused(["link", str(link)], ["link.toml", "[antenna_a]", "gain_a_dbi", "keep one"], inputs=[link])


def test_link_file_antenna_table_mixing_file_and_keys(tmp_path):
    shutil.copy(DISH, tmp_path / "dish.toml")
    link = _link_file(tmp_path, '\n[antenna_b]\nfile = "dish.toml"\ngain_dbi = 30\n')
    link.write_text(link.read_text().replace("gain_b_dbi = 41\n", ""))
    assert_refused(["link", str(link)], ["link.toml", "[antenna_b]", "file", "gain_dbi"],
                   inputs=[link, tmp_path / "dish.toml"])


def test_link_file_inline_antenna_unknown_key(tmp_path):
    link = _link_file(tmp_path, "\n[antenna_b]\ndiameter = 0.6\n")
    link.write_text(link.read_text().replace("gain_b_dbi = 41\n", ""))
    assert_refused(["link", str(link)], ["link.toml [antenna_b]", "unknown key", "diameter"], inputs=[link])


@pytest.mark.parametrize("date, words", [
    ("02/12/2026", ["--date YYYY-MM-DD", "YYYY-MM-DD", "02/12/2026"]),
    ("2031-01-01", ["--date", "2031-01-01", "outside", "WMM-2025", "2025.0-2030.0"]),
    ("2024-06-30", ["--date", "outside", "WMM-2025"]),
])
def test_bad_dates(date, words):
    assert_refused(["link", str(DEMO6), "--date", date], words, inputs=[DEMO6])


def test_heights_date_outside_the_model():
    assert_refused(["heights", str(DEMO6), "--date", "2035-01-01"], ["--date", "outside", "WMM-2025"],
                   inputs=[DEMO6])


def test_profile_csv_on_an_input():
    assert_refused(["link", str(DEMO6), "--profile-csv", str(DEMO6)],
                   ["--profile-csv", "would overwrite the input"], inputs=[DEMO6, DEMO_DEM])


def test_profile_csv_on_the_antenna_file():
    assert_refused(["link", str(DEMO6), "--antenna-a", str(DISH), "--antenna-b", str(DISH),
                    "--profile-csv", str(DISH)], ["--profile-csv", "would overwrite the input"],
                   inputs=[DEMO6, DISH])


def test_profile_csv_in_a_missing_folder(tmp_path):
    out = tmp_path / "no" / "such" / "p.csv"
    assert_refused(["link", str(DEMO6), "--profile-csv", str(out)], ["--profile-csv", "does not exist"],
                   inputs=[DEMO6])
    assert not out.parent.exists()


def test_profile_csv_under_a_file():
    assert_refused(["link", str(DEMO6), "--profile-csv", str(DEMO6 / "p.csv")],
                   ["--profile-csv", "is a file, not a folder"], inputs=[DEMO6])


def test_profile_csv_on_a_folder(tmp_path):
    assert_refused(["link", str(DEMO6), "--profile-csv", str(tmp_path)], ["--profile-csv", "folder"],
                   inputs=[DEMO6])


def test_profile_csv_in_a_folder_we_cannot_write(tmp_path):
    import os

    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if os.access(locked, os.W_OK):  # root ignores the mode
            pytest.skip("running as a user who can write anywhere")
        assert_refused(["link", str(DEMO6), "--profile-csv", str(locked / "p.csv")],
                       ["--profile-csv", "cannot write"], inputs=[DEMO6])
    finally:
        locked.chmod(0o700)


def test_sheet_with_a_bad_antenna(tmp_path):
    ant = _antenna(tmp_path, "diameter_m = -1\n")
    out = tmp_path / "s.pdf"
    assert_refused(["sheet", str(DEMO6), "--antenna-b", str(ant), "-o", str(out)],
                   ["ant.toml", "diameter_m", "above 0"], inputs=[DEMO6, ant])
    assert not out.exists()


SCREEN = ["screen", str(SITES), "--dem", str(DEMO_DEM), "--freq-ghz", "18", "--workers", "1", "-q"]


def test_screen_antenna_with_gain_flags(tmp_path):
    assert_refused(SCREEN + ["--antenna", str(DISH), "--gain-b-dbi", "30", "--out", str(tmp_path / "o.csv")],
                   ["--antenna FILE", "--gain-b-dbi", "not both"], inputs=[SITES, DISH])


def test_screen_antenna_outside_its_band(tmp_path):
    args = SCREEN + ["--antenna", str(DISH), "--out", str(tmp_path / "o.csv")]
    args[args.index("18")] = "11"
    assert_refused(args, ["dish-0.6m.toml", "11 GHz", "outside"], inputs=[SITES, DISH])


def test_screen_antenna_column_not_there(tmp_path):
    assert_refused(SCREEN + ["--antenna-col", "dish", "--out", str(tmp_path / "o.csv")],
                   ["sites.csv", "no column 'dish'", "antenna files"], inputs=[SITES])
