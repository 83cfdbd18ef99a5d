"""The datum named, antenna gains left at 0 dBi, screen help, obstruction continuation pages."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from profiler.cli.main import cli
from tests.conftest import DEMO_DEM, EXAMPLES, REPO

CLEAR = str(EXAMPLES / "demo-1-clear.toml")
ROOFTOP = str(EXAMPLES / "demo-5-rooftop.toml")
ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"


def run(*args):
    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    return result


# --- the datum follows --vertical-crs ----------------------------------------

@pytest.mark.parametrize("crs, name", [("EPSG:5773", "EGM96 height"), ("EPSG:5703", "NAVD88 height")])
def test_datum_text_follows_vertical_crs_in_summary_json_and_sheet(crs, name):
    from profiler.cli.sheet import build_sheet_contents
    from profiler.sheets.content import TitleBlock
    from profiler.sheets.table import parameter_rows, vertical_datum_text

    record = json.loads(run("link", CLEAR, "--vertical-crs", crs, "--json").stdout)
    assert record["inputs"]["vertical_datum"].startswith(name)
    assert "stated by the planner" in record["inputs"]["vertical_datum"]
    assert record["inputs"]["vertical_datum_sea_level"] is True
    text = run("link", CLEAR, "--vertical-crs", crs).stdout
    assert f"above the datum {name}" in text and "above sea level" in text
    assert "AMSL" not in text and "AGL" not in text
    content = build_sheet_contents((CLEAR,), {"vertical_crs": crs}, TitleBlock())[0]
    assert vertical_datum_text(content.record).startswith(name)
    labels = [r.label for r in parameter_rows(content.record)]
    assert "Antenna above sea level" in labels


def test_unstated_datum_is_never_called_sea_level():
    from profiler.cli.sheet import build_sheet_contents
    from profiler.sheets.content import TitleBlock
    from profiler.sheets.table import parameter_rows

    record = json.loads(run("link", CLEAR, "--json").stdout)
    assert record["inputs"]["vertical_datum_sea_level"] is False
    text = run("link", CLEAR).stdout
    assert "sea level" not in text and "AMSL" not in text
    assert "above the datum of the elevation rasters (not stated" in text and "--vertical-crs" in text
    content = build_sheet_contents((CLEAR,), {}, TitleBlock())[0]
    labels = [r.label for r in parameter_rows(content.record)]
    assert "Antenna above the datum" in labels


def test_name_datum_rules():
    from profiler.errors import InputError
    from profiler.vertical import UNSTATED, name_datum

    assert name_datum("EGM2008 height", None) == name_datum("EGM2008 height", "EPSG:3855")
    assert name_datum("EGM2008 height").sea_level and name_datum("EGM2008 height").source == "raster"
    assert name_datum(UNSTATED, None).source == "unknown"
    with pytest.raises(InputError, match="state their heights are EGM2008"):
        name_datum("EGM2008 height", "EPSG:5773")


# --- antenna gains left at 0 dBi ---------------------------------------------

def test_link_warns_when_gains_are_left_at_0_dbi():
    args = ["link", "--dem", DEMO_DEM, "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5.8"]
    result = run(*args, "--json")
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("warning: antenna gain at site a and site b")
    assert any("0 dBi" in w for w in json.loads(result.stdout)["warnings"])
    result = run(*args, "--gain-a-dbi", "23", "--json")
    assert "site b left at the default 0 dBi" in result.stderr and "site a" not in result.stderr
    assert run(*args, "--gain-a-dbi", "23", "--gain-b-dbi", "0").stderr == ""
    assert run("link", CLEAR).stderr == ""  # the link file gives both gains


def test_screen_warns_when_gains_are_left_at_0_dbi(tmp_path):
    sites = REPO / "data" / "demo" / "sites.csv"
    result = run("screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "r.csv",
                 "--workers", "1", "--max-km", "5")
    assert "warning: antenna gain at site a and site b left at the default 0 dBi" in result.stderr
    assert "budget-short" in result.stdout
    result = run("screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--gain-a-dbi", "20",
                 "--gain-b-dbi", "20", "-o", tmp_path / "s.csv", "--workers", "1", "--max-km", "5", "-q")
    assert result.stderr == ""


# --- screen help ---------------------------------------------------------------

def test_screen_help_matches_what_screen_does():
    from profiler.io.sites import DEFAULT_COLUMNS

    help_text = " ".join(run("screen", "--help").stdout.split())
    assert "link file" not in help_text
    assert "-o, --out" in help_text
    for role, names in DEFAULT_COLUMNS.items():
        assert ", ".join(names) in help_text, role


# --- every obstruction crossed is listed ---------------------------------------

def test_rooftop_sheet_lists_every_obstruction_on_a_continuation_page(tmp_path):
    from profiler.cli.sheet import build_sheet_contents
    from profiler.sheets.content import TitleBlock
    from profiler.sheets.page import _obstruction_note, continuation_pages

    content = build_sheet_contents((ROOFTOP,), {}, TitleBlock())[0]
    crossed = content.record["clutter"]["crossed"]
    assert len(crossed) > 3
    assert continuation_pages(content) == 1
    assert f"all {len(crossed)} are listed on the continuation page" in _obstruction_note(content)
    out = run("sheet", ROOFTOP, "-o", tmp_path / "roof.pdf").stdout
    assert "(2 pages)" in out
    out = run("sheet", ROOFTOP, "-o", tmp_path / "roof.png", "--dpi", "50").stdout
    assert (tmp_path / "roof-obstructions-1.png").exists() and "roof-obstructions-1.png" in out
