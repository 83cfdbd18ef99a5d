"""terrahop link/heights/screen with the confidence options, on the demo files."""

from __future__ import annotations

import csv
import json

from click.testing import CliRunner

from profiler.cli.main import cli
from tests.conftest import DEMO_DEM, EXAMPLES, REPO

GRAZING = str(EXAMPLES / "demo-2-grazing.toml")


def _run(*args):
    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    return result.stdout


def test_grazing_link_reports_its_probability_with_the_model():
    r = json.loads(_run("link", GRAZING, "--draws", "500", "--json"))
    c = r["confidence"]
    assert 0.0 <= c["p_meets_criterion"] <= 1.0 and 0.0 <= c["p_line_of_sight"] <= 1.0
    assert c["model"]["draws"] == 500 and c["model"]["seed"] == 17
    assert c["model"]["dem_error"]["sigma_m"] == 3.0 and "assumed" in c["model"]["dem_error"]["source"]
    assert "P.453" in c["model"]["k"]["method"]
    assert c["worst_f1_fraction"]["p5"] <= c["worst_f1_fraction"]["p50"] <= c["worst_f1_fraction"]["p95"]
    assert c["fade_margin_db"]["p5"] <= c["fade_margin_db"]["p95"]
    text = _run("link", GRAZING, "--draws", "500")
    assert "confidence         P(meets criterion)" in text
    assert "confidence" not in json.loads(_run("link", GRAZING, "--json"))  # only when asked


def test_heights_with_confidence_are_taller_and_one_step_lower_falls_below():
    plain = json.loads(_run("heights", GRAZING, "--json"))
    sure = json.loads(_run("heights", GRAZING, "--confidence", "0.9", "--json"))
    assert sure["chosen"]["p_meets"] >= 0.9
    assert sure["chosen"]["sum_m"] > plain["chosen"]["sum_m"]
    assert sure["one_step_lower"] and all(p["p_meets"] < 0.9 for p in sure["one_step_lower"])
    assert sure["link"]["confidence"]["p_meets_criterion"] == sure["chosen"]["p_meets"]


def test_screen_has_p_meets_equal_to_link(tmp_path):
    out = tmp_path / "s.csv"
    _run("screen", REPO / "data" / "demo" / "sites.csv", "--dem", DEMO_DEM, "--freq-ghz", "5.8",
         "--gain-a-dbi", "23", "--gain-b-dbi", "23", "-o", out, "--draws", "300", "--workers", "1",
         "--chunk-pairs", "7", "--rank-by", "p_meets", "-q")
    rows = list(csv.DictReader(out.open()))
    p = [float(r["p_meets"]) for r in rows]
    assert p == sorted(p, reverse=True)  # ranked by p_meets
    sites = {r["name"]: r for r in csv.DictReader((REPO / "data" / "demo" / "sites.csv").open())}
    for row in (rows[0], rows[len(rows) // 2], rows[-1]):
        a, b = sites[row["site_a"]], sites[row["site_b"]]
        rec = json.loads(_run("link", "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi",
                              "23", "--site-a", f"{a['lat']},{a['lon']}", "--site-b", f"{b['lat']},{b['lon']}",
                              "--agl-a", a["antenna_agl_m"], "--agl-b", b["antenna_agl_m"], "--draws", "300",
                              "--json"))
        assert float(row["p_meets"]) == rec["confidence"]["p_meets_criterion"]
        assert float(row["p_los"]) == rec["confidence"]["p_line_of_sight"]


def test_plain_screen_has_no_probability_columns(tmp_path):
    out = tmp_path / "s.csv"
    _run("screen", REPO / "data" / "demo" / "sites.csv", "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", out,
         "--workers", "1", "--max-km", "4", "-q")
    assert "p_meets" not in out.read_text().splitlines()[0]


def test_link_file_confidence_table_and_flags_over_it(tmp_path):
    text = (EXAMPLES / "demo-2-grazing.toml").read_text().replace("../data/demo/terrain.tif", str(DEMO_DEM))
    f = tmp_path / "link.toml"
    f.write_text(text + "\n[confidence]\ndraws = 200\ndem_error_m = 1.5\ndem_error_corr_m = \"inf\"\n")
    r = json.loads(_run("link", f, "--json"))["confidence"]["model"]
    assert (r["draws"], r["dem_error"]["sigma_m"], r["dem_error"]["correlation_length_m"]) == (200, 1.5, "whole profile")
    r = json.loads(_run("link", f, "--draws", "300", "--json"))["confidence"]["model"]
    assert (r["draws"], r["dem_error"]["sigma_m"]) == (300, 1.5)


def test_zero_error_reproduces_the_plain_figures_exactly():
    r = json.loads(_run("link", EXAMPLES / "demo-1-clear.toml", "--dem-error-m", "0", "--antenna-error-m", "0",
                        "--json"))
    c = r["confidence"]
    assert c["p_meets_criterion"] == float(r["meets_criterion"]) == 1.0
    assert set(c["worst_f1_fraction"].values()) == {r["clearance"]["worst_f1_fraction"]}
    assert set(c["diffraction_loss_db"].values()) == {r["loss_db"]["diffraction"]}
    assert set(c["fade_margin_db"].values()) == {r["budget"]["fade_margin_db"]}
