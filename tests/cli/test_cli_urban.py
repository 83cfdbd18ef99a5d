"""Rooftop and urban links end to end: `terrahop link` with obstructions and surface models,
`terrahop heights`, and the rooftop demo (on the invented demo town)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from profiler.cli.main import cli

REPO = Path(__file__).resolve().parents[2]
ROOFTOP = str(REPO / "examples" / "demo-5-rooftop.toml")
TERRAIN = str(REPO / "data" / "demo" / "terrain.tif")
TOWN = str(REPO / "data" / "demo" / "town.gpkg")
SURFACE = str(REPO / "data" / "demo" / "town-surface.tif")
LIBRARY, FLATS = "-30.535178,-20.845193", "-30.534618,-20.830600"


def run(*args: str) -> tuple[int, str]:
    result = CliRunner().invoke(cli, list(args), catch_exceptions=False)
    return result.exit_code, result.output


def run_json(*args: str) -> dict:
    result = CliRunner().invoke(cli, [*args, "--json"], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def test_rooftop_demo_is_blocked_by_the_tower_at_3_m():
    r = run_json("link", ROOFTOP)
    assert r["meets_criterion"] is False and r["clearance"]["line_of_sight"] is False
    a = r["sites"]["a"]
    assert a["antenna_reference"] == "roof" and a["antenna_above_roof_m"] == 3
    assert a["roof_m"] == pytest.approx(a["ground_m"] + 12.0)
    crossed = {c["feature"].split(" (")[0]: c for c in r["clutter"]["crossed"]}
    assert "Corn Exchange Tower" in crossed and crossed["Corn Exchange Tower"]["top_m"] == 141.0
    assert crossed["Linthorpe Park"]["allowance_m"] == 2
    assert r["clearance"]["worst_distance_km"] == pytest.approx(crossed["Corn Exchange Tower"]["from_km"], abs=0.02)
    assert r["inputs"]["surroundings"]["tree_allowance_m"] == 2


def test_heights_answers_the_rooftop_demo_and_the_link_agrees():
    r = run_json("heights", ROOFTOP)
    assert r["feasible"] and r["sites"]["a"]["reference"] == "roof"
    a, b = r["chosen"]["antenna_a_m"], r["chosen"]["antenna_b_m"]
    assert a <= 12 and b <= 12 and r["link"]["meets_criterion"] is True
    assert all(not p["meets_criterion"] for p in r["one_step_lower"]) and len(r["one_step_lower"]) == 2
    # The verdict changes with the antenna height, through `terrahop link` itself.
    ok = run_json("link", ROOFTOP, "--above-roof-a", f"{a:g}", "--above-roof-b", f"{b:g}")
    low = run_json("link", ROOFTOP, "--above-roof-a", f"{a - 1:g}", "--above-roof-b", f"{b:g}")
    assert ok["meets_criterion"] is True and low["meets_criterion"] is False
    code, text = run("heights", ROOFTOP)
    assert code == 0 and "<- chosen" in text and "one step lower" in text and "vertical datum" in text


def test_heights_one_end_and_infeasible():
    r = run_json("heights", ROOFTOP, "--solve", "b", "--above-roof-a", "12")
    assert r["chosen"]["antenna_a_m"] == 12 and r["link"]["meets_criterion"]
    r = run_json("heights", ROOFTOP, "--max-mast-a", "4", "--max-mast-b", "4")
    assert r["feasible"] is False and "link" not in r
    code, text = run("heights", ROOFTOP, "--max-mast-a", "4", "--max-mast-b", "4")
    assert code == 0 and "NO height pair" in text


def test_flags_obstructions_and_surface_on_the_demo_town():
    by_layers = run_json(
        "link", "--dem", TERRAIN, "--obstructions", f"{TOWN}#buildings", "--obstructions", f"trees={TOWN}#trees",
        "--site-a", LIBRARY, "--site-b", FLATS, "--above-roof-a", "11", "--above-roof-b", "8", "--freq-ghz", "5.8",
    )
    assert by_layers["meets_criterion"] is True
    by_surface = run_json(
        "link", "--dem", TERRAIN, "--surface", SURFACE, "--site-a", LIBRARY, "--site-b", FLATS,
        "--agl-a", "23", "--agl-b", "23", "--freq-ghz", "5.8",
    )
    assert by_surface["clutter"]["at_worst_point_kind"] == "surface model"
    assert by_surface["clutter"]["max_m"] == pytest.approx(22.0, abs=0.2)  # the tower, 141 m top on 119 m ground
    low = run_json(
        "link", "--dem", TERRAIN, "--surface", SURFACE, "--site-a", LIBRARY, "--site-b", FLATS,
        "--agl-a", "15", "--agl-b", "18", "--freq-ghz", "5.8",
    )
    assert low["meets_criterion"] is False


def test_demo_shows_the_rooftop_link():
    code, text = run("demo")
    assert code == 0 and "Linthorpe Library to Harbour Row Flats" in text
    assert "Corn Exchange Tower" in text


@pytest.mark.parametrize("args, message", [
    (["--obstructions", "nowhere.gpkg"], "obstruction layer not found: nowhere.gpkg"),
    (["--obstructions", TOWN], "several layers (buildings, trees)"),
    (["--above-roof-a", "3", "--agl-a", "3"], "give one antenna height"),
    (["--tree-allowance-m", "-2"], "tree allowance"),
    (["--ellipsoidal-a", "150"], "do not state their vertical datum"),
])
def test_bad_input_gives_one_line(args, message):
    code, out = run("link", ROOFTOP, *args)
    assert code == 1 and message in out and "Traceback" not in out
    assert len(out.strip().splitlines()) == 1


def test_roof_site_outside_every_building_is_refused():
    code, out = run("link", ROOFTOP, "--site-a", "-30.5352,-20.8440")
    assert code == 1 and "is not inside any building" in out


def test_link_file_with_two_heights_for_a_site_is_refused(tmp_path):
    text = Path(ROOFTOP).read_text().replace("antenna_above_roof_m = 3\nmax_mast_m = 12\n\n[site_b]",
                                             "antenna_above_roof_m = 3\nantenna_agl_m = 15\n\n[site_b]")
    text = text.replace("../data/demo/", str(REPO / "data" / "demo") + "/")
    (tmp_path / "x.toml").write_text(text)
    code, out = run("link", str(tmp_path / "x.toml"))
    assert code == 1 and "several antenna heights" in out


def test_the_real_command_runs():
    out = subprocess.run(
        [sys.executable, "-m", "profiler", "heights", ROOFTOP, "--json"],
        cwd=REPO, capture_output=True, text=True, check=True,
    ).stdout
    assert json.loads(out)["link"]["meets_criterion"] is True


def test_demo_town_is_regenerated_identically():
    import geopandas as gpd

    sys.path.insert(0, str(REPO / "data"))
    try:
        import make_town
    finally:
        sys.path.pop(0)
    made = make_town.make_buildings()
    stored = gpd.read_file(TOWN, layer="buildings")
    assert len(made) == len(stored)
    assert made.geometry.area.sum() == pytest.approx(stored.geometry.area.sum())


def test_cli_import_leaves_vector_libraries_out():
    code = "import sys, profiler.cli.main; print(sorted(m for m in ('geopandas', 'pandas', 'shapely', 'pyogrio') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
