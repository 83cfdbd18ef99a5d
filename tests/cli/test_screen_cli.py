"""`terrahop screen` end to end on the invented demo data, as a planner runs it."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pytest

from tests._screening_data import DEMO_DEM, DEMO_SITES, REPO, random_sites_csv

RADIO = ["--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi", "23", "--loss-a-db", "1", "--loss-b-db", "1"]


def terrahop(*args, check=True, **kw):
    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = subprocess.run([sys.executable, "-m", "profiler", *map(str, args)], capture_output=True,
                          text=True, env=env, **kw)
    if check and proc.returncode != 0:
        raise AssertionError(f"exit {proc.returncode}\n{proc.stdout}\n{proc.stderr}")
    return proc


def test_screen_demo_sites_to_geopackage(tmp_path):
    import geopandas as gpd

    out = tmp_path / "result.gpkg"
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out, "--workers", "1")
    assert "66 pairs of 12 sites screened" in proc.stdout
    for word in ("viable", "marginal", "budget-short", "clearance-short", "obstructed", "error", "skipped"):
        assert word in proc.stdout
    assert "\x1b[" not in proc.stderr  # no progress bar in a pipe
    links = gpd.read_file(out, layer="links")
    assert len(links) == 66 and links.crs.to_epsg() == 4326
    assert links.iloc[0]["fade_margin_db"] >= links.iloc[-1]["fade_margin_db"]
    assert len(gpd.read_file(out, layer="sites")) == 12


def test_screen_hub_mode_and_pairs_file_with_bad_rows(tmp_path):
    import pandas as pd

    out = tmp_path / "hub.csv"
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out,
                    "--hub", "Corrow Ridge Mast", "--max-km", "8", "--workers", "1")
    links = pd.read_csv(out)
    assert (links["site_a"] == "Corrow Ridge Mast").all()
    assert (links["distance_km"] <= 8).all() and 2 < len(links) < 11
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b\nOrrin Water Tank,Brackwell Silo\nOrrin Water Tank,Atlantis\nTallis Farm,Wexby Grange\n")
    out2 = tmp_path / "pairs.geojson"
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out2, "--pairs", pairs, "-q")
    assert proc.stdout == ""
    import geopandas as gpd

    assert len(gpd.read_file(out2)) == 2
    assert (tmp_path / "pairs-sites.geojson").exists()
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out2, "--pairs", pairs, check=False)
    assert proc.returncode == 1 and "--overwrite" in proc.stderr  # an existing result is kept
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out2, "--pairs", pairs, "--overwrite")
    assert "skipped pairs.csv row 3" in proc.stderr and "'Atlantis'" in proc.stderr
    assert "skipped pairs.csv" not in proc.stdout
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out2, "--pairs", pairs, "-q",
                    "--overwrite")
    assert proc.stdout == "" and "skipped pairs.csv row 3" in proc.stderr  # -q hides progress, not reasons


def test_bad_inputs_give_one_line_messages(tmp_path):
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, "--out", tmp_path / "r.gpkg", check=False)
    assert proc.returncode == 1 and "frequency missing" in proc.stderr and "Traceback" not in proc.stderr
    proc = terrahop("screen", tmp_path / "none.csv", "--dem", DEMO_DEM, *RADIO, "--out", tmp_path / "r.gpkg",
                    check=False)
    assert proc.returncode == 1 and "sites file not found" in proc.stderr
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", tmp_path / "r.gpkg",
                    "--hub", "Nowhere", check=False)
    assert proc.returncode == 1 and "hub 'Nowhere'" in proc.stderr


def test_sigint_then_resume_equals_an_uninterrupted_run(tmp_path):
    import pandas as pd

    sites = random_sites_csv(tmp_path / "sites.csv", 40)
    args = ["screen", sites, "--dem", DEMO_DEM, *RADIO, "--max-km", "12", "--chunk-pairs", "8", "--workers", "2"]
    terrahop(*args, "--out", tmp_path / "full.csv")
    out = tmp_path / "cut.csv"
    progress = tmp_path / "cut.csv.partial" / "progress.json"
    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = subprocess.Popen([sys.executable, "-m", "profiler", *map(str, args), "--out", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    deadline = time.time() + 60
    while time.time() < deadline:
        try:
            if json.loads(progress.read_text())["rows"] >= 16:
                break
        except (OSError, ValueError, KeyError):
            pass
        time.sleep(0.01)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    if proc.returncode == 0:
        pytest.skip("the run finished before the interrupt arrived")
    assert proc.returncode == 130 and "--resume" in err
    assert not out.exists()
    done = json.loads(progress.read_text())["rows"]
    assert done >= 16
    again = terrahop(*args, "--out", out, check=False)
    assert again.returncode == 1 and "--resume" in again.stderr
    resumed = terrahop(*args, "--out", out, "--resume")
    assert f"({done} from the interrupted run)" in resumed.stdout
    full, cut = pd.read_csv(tmp_path / "full.csv"), pd.read_csv(out)
    assert len(full) == len(cut)
    pd.testing.assert_frame_equal(full, cut)


def test_scheduler_address_runs_the_chunks_on_a_dask_cluster(tmp_path):
    import pandas as pd

    distributed = pytest.importorskip("distributed")
    args = ["screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--max-km", "9", "--chunk-pairs", "7"]
    terrahop(*args, "--workers", "1", "--out", tmp_path / "local.csv")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp", host="127.0.0.1",
                                  dashboard_address=":0") as cluster:
        proc = terrahop(*args, "--scheduler", cluster.scheduler_address, "--out", tmp_path / "dask.csv")
    assert "pairs of 12 sites screened" in proc.stdout
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "local.csv"), pd.read_csv(tmp_path / "dask.csv"))


def test_scheduler_gets_absolute_raster_paths_from_a_relative_dem(tmp_path):
    """Workers run elsewhere (here: another working directory), so a relative --dem must be sent absolute."""
    import shutil

    import pandas as pd

    distributed = pytest.importorskip("distributed")
    run_dir = tmp_path / "run"
    run_dir.mkdir()
    shutil.copy(DEMO_DEM, run_dir / "terrain.tif")
    args = ["screen", DEMO_SITES, *RADIO, "--max-km", "9", "--chunk-pairs", "7"]
    terrahop(*args, "--dem", DEMO_DEM, "--workers", "1", "--out", tmp_path / "local.csv")
    # The cluster's workers are threads of this test process, whose working directory is not run_dir.
    assert os.getcwd() != str(run_dir)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False, protocol="tcp",
                                  host="127.0.0.1", dashboard_address=":0") as cluster:
        proc = terrahop(*args, "--dem", "terrain.tif", "--scheduler", cluster.scheduler_address,
                        "--out", tmp_path / "dask.csv", cwd=run_dir)
    assert "pairs of 12 sites screened" in proc.stdout
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "local.csv"), pd.read_csv(tmp_path / "dask.csv"))


def test_scheduler_address_is_checked_and_connection_time_bounded(tmp_path):
    import socket

    pytest.importorskip("distributed")
    out = tmp_path / "r.csv"
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out, "--scheduler", "not a url",
                    check=False)
    assert proc.returncode == 1 and "Traceback" not in proc.stderr
    assert proc.stderr.strip().splitlines() == [
        "Error: --scheduler 'not a url' is not a Dask scheduler address; give one like tcp://host:8786"]
    with socket.socket() as s:  # a port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    t0 = time.monotonic()
    proc = terrahop("screen", DEMO_SITES, "--dem", DEMO_DEM, *RADIO, "--out", out, "--scheduler",
                    f"127.0.0.1:{port}", check=False, timeout=120)
    assert time.monotonic() - t0 < 60
    assert proc.returncode == 1 and "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "cannot connect to the Dask scheduler at tcp://127.0.0.1" in lines[0]
    assert not out.exists() and not (tmp_path / "r.csv.partial").exists()


#: The README's rooftop example: the demo town's buildings and trees, its surface model, roof mounts.
ROOFTOP_ARGS = ["--obstructions", REPO / "data/demo/town.gpkg#buildings",
                "--obstructions", f"trees={REPO / 'data/demo/town.gpkg'}#trees", "--tree-allowance-m", "2",
                "--surface", REPO / "data/demo/town-surface.tif", "--above-roof",
                "--tx-power-dbm", "20", "--bandwidth-mhz", "20", "--noise-figure-db", "6", "--required-snr-db", "15",
                "--k", "1.3333333333", "--k-worst", "0.6666666667"]


def test_screen_rooftop_candidates_equals_terrahop_link_with_the_same_layers(tmp_path):
    import pandas as pd

    out = tmp_path / "rooftops.gpkg"  # full precision (CSV rounds to meaningful digits)
    proc = terrahop("screen", REPO / "data/demo/rooftops.csv", "--dem", DEMO_DEM, *RADIO, *ROOFTOP_ARGS,
                    "--out", out, "--workers", "1")
    assert "66 pairs of 12 sites screened" in proc.stdout and proc.stderr == ""
    import pyogrio

    links = pd.DataFrame(pyogrio.read_dataframe(out, layer="links"))
    row = links[(links["site_a"] == "Linthorpe Library") & (links["site_b"] == "Harbour Row Flats")].iloc[0]
    rec = json.loads(terrahop("link", REPO / "examples/demo-5-rooftop.toml", "--surface",
                              REPO / "data/demo/town-surface.tif", "--json").stdout)
    rec = rec[0] if isinstance(rec, list) else rec
    assert row["verdict"] == "obstructed" and row["worst_point_clutter"] == rec["clutter"]["at_worst_point_kind"]
    assert row["fade_margin_db"] == rec["budget"]["fade_margin_db"]
    assert row["diffraction_db"] == rec["loss_db"]["diffraction"]
    assert row["worst_f1_fraction"] == rec["clearance"]["worst_f1_fraction"]
    assert row["agl_a_m"] == rec["sites"]["a"]["antenna_agl_m"] and row["roof_b_m"] == rec["sites"]["b"]["building"]["height_m"]


def test_screen_reports_bad_roof_sites_and_pair_heights_and_goes_on(tmp_path):
    import pandas as pd

    sites = tmp_path / "sites.csv"
    sites.write_text((REPO / "data/demo/rooftops.csv").read_text() + "Open field,-30.5340,-20.8500,3,roof\n")
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b,height_a_m,height_b_m\nLinthorpe Library,Harbour Row Flats,9,7.5\n"
                     "Linthorpe Library,Block 1 (15 m),-2,3\nBlock 2 (15 m),Block 3 (15 m),4,\n"
                     "Block 4 (15 m),Open field,3,3\nBlock 5 (12 m),Block 6 (15 m),,\n")
    out = tmp_path / "r.csv"
    proc = terrahop("screen", sites, "--dem", DEMO_DEM, *RADIO, *ROOFTOP_ARGS, "--pairs", pairs, "--out", out)
    err = proc.stderr
    assert "skipped sites.csv row 14 ('Open field'): position (-30.534000, -20.850000) is not inside any building" in err
    assert "skipped pairs.csv row 3 ('Linthorpe Library - Block 1 (15 m)'): height_a_m" in err
    assert "skipped pairs.csv row 4 ('Block 2 (15 m) - Block 3 (15 m)'): height_b_m is blank" in err
    # The pair with the skipped site goes with it (as for a site outside the rasters); the site's row says why.
    assert "Traceback" not in err and "2 pairs of 12 sites screened" in proc.stdout
    links = pd.read_csv(out).set_index("site_a")
    assert links.loc["Linthorpe Library", "above_roof_a_m"] == 9.0
    rec = json.loads(terrahop("link", REPO / "examples/demo-5-rooftop.toml", "--surface",
                              REPO / "data/demo/town-surface.tif", "--above-roof-a", "9", "--above-roof-b", "7.5",
                              "--json").stdout)
    rec = rec[0] if isinstance(rec, list) else rec
    row = links.loc["Linthorpe Library"]
    # CSV figures are rounded to the README's digits per column kind (dB 2, F1 fractions 3, m 2).
    assert row["fade_margin_db"] == round(rec["budget"]["fade_margin_db"], 2) and bool(row["line_of_sight"])
    assert row["worst_f1_fraction"] == round(rec["clearance"]["worst_f1_fraction"], 3)
    assert row["agl_b_m"] == round(rec["sites"]["b"]["antenna_agl_m"], 2)
    assert links.loc["Block 5 (12 m)", "above_roof_b_m"] == 3.0
