"""End-to-end: the real `terrahop link` and `terrahop demo` on the demo data."""

import json

import pytest

from tests.conftest import DEMO_DEM, EXAMPLES, run_cli

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
RADIO_FLAGS = ["--freq-ghz", "5.8", "--tx-power-dbm", "20", "--gain-a-dbi", "23", "--gain-b-dbi", "23",
               "--loss-a-db", "1", "--loss-b-db", "1", "--bandwidth-mhz", "20", "--noise-figure-db", "6",
               "--required-snr-db", "15"]


def test_link_flags_json_subprocess():
    proc = run_cli("link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL,
                   "--agl-a", "20", "--agl-b", "15", *RADIO_FLAGS, "--json", check=True)
    r = json.loads(proc.stdout)
    assert r["distance_km"] == pytest.approx(6.04, abs=0.01)
    assert r["clearance"]["line_of_sight"] is True
    assert r["meets_criterion"] is True
    assert r["k"] == pytest.approx(4 / 3) and r["worst_case"]["k"] == pytest.approx(2 / 3)
    assert r["budget"]["eirp_dbm"] == pytest.approx(42.0)
    assert r["inputs"]["radio"]["bandwidth_mhz"] == 20.0


def test_link_file_equals_flags(cli):
    from_file = json.loads(cli("link", str(EXAMPLES / "demo-1-clear.toml"), "--json").stdout)
    from_flags = json.loads(cli("link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL,
                                "--agl-a", "20", "--agl-b", "15", *RADIO_FLAGS, "--json").stdout)
    for key in ("distance_km", "clearance", "loss_db", "budget", "worst_case"):
        assert from_file[key] == from_flags[key]


def test_flags_override_the_link_file(cli):
    base = json.loads(cli("link", str(EXAMPLES / "demo-3-blocked.toml"), "--json").stdout)
    higher = json.loads(cli("link", str(EXAMPLES / "demo-3-blocked.toml"), "--agl-a", "200",
                            "--agl-b", "200", "--k", "1.0", "--json").stdout)
    assert base["clearance"]["line_of_sight"] is False
    assert higher["clearance"]["line_of_sight"] is True
    assert higher["sites"]["a"]["antenna_agl_m"] == 200
    assert higher["k"] == 1.0
    fraction = json.loads(cli("link", str(EXAMPLES / "demo-3-blocked.toml"), "--k-worst", "1/2", "--json").stdout)
    assert fraction["worst_case"]["k"] == 0.5


def test_text_summary_lists_everything(cli):
    out = cli("link", str(EXAMPLES / "demo-3-blocked.toml")).output
    for words in ("Wexby Grange", "Highfold Tower", "azimuth", "above the datum", "worst point", "line of sight",
                  "free space", "diffraction", "received level", "noise floor", "SNR", "fade margin",
                  "worst case k", "FAILS"):
        assert words in out


def test_demo_runs_all_links():
    proc = run_cli("demo", check=True)
    assert "INVENTED" in proc.stdout
    assert proc.stdout.count("== ") >= 4
    proc = run_cli("demo", "--json", check=True)
    records = json.loads(proc.stdout)
    verdicts = {r["name"]: (r["clearance"]["line_of_sight"], r["meets_criterion"]) for r in records}
    assert verdicts["Orrin Water Tank to Brackwell Silo"] == (True, True)
    assert verdicts["Wexby Grange to Highfold Tower"] == (False, False)
    grazing = next(r for r in records if r["name"].startswith("Mere Hollow"))
    assert 0 < grazing["clearance"]["worst_f1_fraction"] < 0.6
    assert grazing["loss_db"]["diffraction"] > 0


def test_help_is_fast_and_lists_commands():
    proc = run_cli("--help", check=True)
    assert "link" in proc.stdout and "demo" in proc.stdout


def test_cli_import_stays_light():
    import subprocess
    import sys

    code = ("import sys, profiler.cli.main; heavy = [m for m in ('matplotlib', 'geopandas', 'dask', 'scipy', "
            "'rasterio') if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=str(DEMO_DEM.parents[2])).stdout.strip()
    assert out == ""
