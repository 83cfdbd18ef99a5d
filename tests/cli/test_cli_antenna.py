"""End to end: antennas, installer figures, --date and --profile-csv on the demo files."""

from __future__ import annotations

import csv
import json
import math
import shutil

import pytest

from profiler.equipment.antennas import aperture_gain_dbi
from tests.conftest import DEMO_DEM, EXAMPLES

DEMO6 = EXAMPLES / "demo-6-availability-18ghz.toml"
DISH = EXAMPLES / "dish-0.6m.toml"


def _run(cli, *args):
    result = cli(*map(str, args))
    assert result.exit_code == 0, result.output
    return result


@pytest.fixture(scope="module")
def with_dishes():
    from click.testing import CliRunner

    from profiler.cli.main import cli

    r = CliRunner().invoke(cli, ["link", str(DEMO6), "--antenna-a", str(DISH), "--antenna-b", str(DISH),
                                 "--json", "--date", "2026-03-01"])
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


def test_done_means_link_with_two_dishes(with_dishes):
    r = with_dishes
    gain = float(aperture_gain_dbi(0.6, 18.0, 0.55))
    assert r["inputs"]["radio"]["gain_a_dbi"] == pytest.approx(gain)
    assert r["inputs"]["radio"]["gain_b_dbi"] == pytest.approx(gain)
    ants = r["inputs"]["antennas"]
    assert ants["a"]["file"] == str(DISH) and ants["b"]["gain_dbi"] == pytest.approx(gain)
    inst = r["installation"]
    assert inst["magnetic_model"] == "WMM-2025" and inst["magnetic_model_epoch"] == 2025.0
    assert inst["date"] == "2026-03-01"
    for tag, az in (("a", r["azimuth_a_to_b_deg"]), ("b", r["azimuth_b_to_a_deg"])):
        e = inst[tag]
        assert e["azimuth_true_deg"] == pytest.approx(az % 360.0)
        assert e["azimuth_magnetic_deg"] == pytest.approx((az - e["declination_deg"]) % 360.0)
        assert e["rx_level_dbm"] == pytest.approx(r["budget"]["rx_level_dbm"])
        assert e["tilt_worst_deg"] < e["tilt_deg"]  # a smaller k bulges more: the antenna looks lower
        assert e["antenna_agl_m"] == r["sites"][tag]["antenna_agl_m"]
        assert e["antenna_amsl_m"] == pytest.approx(r["sites"][tag]["antenna_amsl_m"])
    # site a is 227 m lower, 17.2 km away: it looks up, b looks down
    assert inst["a"]["tilt_deg"] > 0 > inst["b"]["tilt_deg"]
    assert inst["vertical_datum"] == r["inputs"]["vertical_datum"]


def test_dishes_change_the_margin_by_the_gain_difference(with_dishes, cli):
    plain = json.loads(_run(cli, "link", DEMO6, "--json", "--date", "2026-03-01").stdout)
    gain = float(aperture_gain_dbi(0.6, 18.0, 0.55))
    assert with_dishes["budget"]["fade_margin_db"] == pytest.approx(
        plain["budget"]["fade_margin_db"] - 2 * (41.0 - gain), abs=1e-9)
    assert plain["installation"]["a"]["tilt_deg"] == with_dishes["installation"]["a"]["tilt_deg"]
    assert "antennas" not in plain["inputs"]


def test_summary_shows_antennas_and_installer_figures(cli):
    text = _run(cli, "link", DEMO6, "--antenna-a", DISH, "--antenna-b", DISH, "--date", "2026-03-01").stdout
    assert "antenna a          Invented 0.6 m dish (demo)" in text
    assert "installation       declination WMM-2025 (epoch 2025.0) for 2026-03-01" in text
    assert "magnetic (declination" in text and "align to" in text
    assert "RF exposure" in text


def test_date_moves_the_declination_only(cli):
    early = json.loads(_run(cli, "link", DEMO6, "--json", "--date", "2025-01-01").stdout)
    late = json.loads(_run(cli, "link", DEMO6, "--json", "--date", "2029-12-31").stdout)
    assert early["installation"]["a"]["declination_deg"] != late["installation"]["a"]["declination_deg"]
    assert abs(early["installation"]["a"]["declination_deg"] - late["installation"]["a"]["declination_deg"]) < 2
    assert early["installation"]["a"]["tilt_deg"] == late["installation"]["a"]["tilt_deg"]


def test_default_date_is_today_and_stated(cli):
    import datetime as dt

    r = json.loads(_run(cli, "link", DEMO6, "--json").stdout)
    assert r["installation"]["date"] in {dt.date.today().isoformat(),
                                          dt.datetime.now(dt.timezone.utc).date().isoformat()}


def test_link_file_antenna_tables(tmp_path, cli):
    shutil.copy(DISH, tmp_path / "dish.toml")
    text = (DEMO6.read_text().replace('"../data/demo/terrain.tif"', f'"{DEMO_DEM}"')
            .replace("gain_a_dbi = 41\n", "").replace("gain_b_dbi = 41\n", ""))
    text += '\n[antenna_a]\nfile = "dish.toml"\n\n[antenna_b]\nname = "inline"\ngain_dbi = 35.5\n'
    link = tmp_path / "link.toml"
    link.write_text(text)
    result = _run(cli, "link", link, "--json", "--date", "2026-03-01")
    r = json.loads(result.stdout)
    assert r["inputs"]["radio"]["gain_a_dbi"] == pytest.approx(float(aperture_gain_dbi(0.6, 18.0, 0.55)))
    assert r["inputs"]["radio"]["gain_b_dbi"] == 35.5
    assert r["inputs"]["antennas"]["b"]["file"] == f"{link} [antenna_b]"
    assert "0 dBi" not in result.stderr  # gains given by the antennas: no default-gain warning
    # a gain flag replaces the file's antenna (flags win over the link file)
    r2 = json.loads(_run(cli, "link", link, "--json", "--gain-b-dbi", "30", "--date", "2026-03-01").stdout)
    assert r2["inputs"]["radio"]["gain_b_dbi"] == 30 and "b" not in r2["inputs"]["antennas"]


def test_profile_csv_holds_the_engine_values(tmp_path, cli):
    out = tmp_path / "profile.csv"
    r = json.loads(_run(cli, "link", DEMO6, "--json", "--profile-csv", out, "--date", "2026-03-01").stdout)
    rows = list(csv.DictReader(out.open()))
    assert list(rows[0]) == ["distance_km", "lat_deg", "lon_deg", "ground_m", "clutter_m", "bulge_design_m",
                             "bulge_worst_m", "ray_m", "f1_radius_m", "clearance_design_m", "clearance_worst_m"]
    assert len(rows) == r["inputs"]["samples"]
    first, last = rows[0], rows[-1]
    assert float(first["ray_m"]) == pytest.approx(r["sites"]["a"]["antenna_amsl_m"])
    assert float(last["ray_m"]) == pytest.approx(r["sites"]["b"]["antenna_amsl_m"])
    assert float(last["distance_km"]) == pytest.approx(r["distance_km"])
    assert float(first["lat_deg"]) == pytest.approx(r["sites"]["a"]["lat"])
    worst = min(rows[1:-1], key=lambda row: float(row["clearance_design_m"]) / float(row["f1_radius_m"]))
    assert float(worst["distance_km"]) == pytest.approx(r["clearance"]["worst_distance_km"])
    assert float(worst["clearance_design_m"]) == pytest.approx(r["clearance"]["worst_clearance_m"])
    mid = rows[len(rows) // 2]
    d1, d = float(mid["distance_km"]) * 1e3, r["distance_km"] * 1e3
    # bulge d1 d2 / (2 k a) at both k (the engine's, read back)
    assert float(mid["bulge_design_m"]) == pytest.approx(d1 * (d - d1) / (2 * 4 / 3 * 6371e3), rel=1e-9)
    assert float(mid["bulge_worst_m"]) == pytest.approx(2 * float(mid["bulge_design_m"]), rel=1e-9)
    assert math.isclose(float(mid["clearance_design_m"]),
                        float(mid["ray_m"]) - float(mid["ground_m"]) - float(mid["clutter_m"])
                        - float(mid["bulge_design_m"]), abs_tol=1e-9)
    assert not list(tmp_path.glob(".*.tmp"))  # the temporary file was renamed


def test_sheet_shows_the_installer_figures(tmp_path, cli):
    pypdf = pytest.importorskip("pypdf")
    out = tmp_path / "s.pdf"
    _run(cli, "sheet", DEMO6, "--antenna-a", DISH, "--antenna-b", DISH, "-o", out, "--date", "2026-03-01")
    text = pypdf.PdfReader(str(out)).pages[0].extract_text()
    assert "WMM-2025 epoch 2025.0, 2026-03-01" in text
    assert "magnetic" in text and "tilt" in text and "align both ends to" in text
    assert "38.5 dBi" in text  # the antenna gain in the parameter table


def test_heights_records_carry_installer_figures(cli):
    r = json.loads(_run(cli, "heights", DEMO6, "--json", "--date", "2026-03-01").stdout)
    assert r["given"]["installation"]["date"] == "2026-03-01"


def test_screen_antenna_column_equals_link_with_antennas(tmp_path, cli):
    shutil.copy(DISH, tmp_path / "dish.toml")
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,antenna_agl_m,antenna\n"
                     "Fellgate Depot,-30.543381,-20.947872,12,dish.toml\n"
                     "Kestrel Knoll,-30.407957,-20.860490,10,dish.toml\n")
    out = tmp_path / "out.gpkg"  # full precision (CSV rounds to meaningful digits)
    _run(cli, "screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "18", "--tx-power-dbm", "18", "--loss-a-db", "0.5",
         "--loss-b-db", "0.5", "--bandwidth-mhz", "28", "--noise-figure-db", "7", "--required-snr-db", "22",
         "--polarisation", "vertical", "--rain-rate-mm-h", "42", "--target-availability-pct", "99.99",
         "--dn1", "-250", "--terrain-roughness-m", "35", "--out", out, "--workers", "1", "-q")
    import pyogrio

    row = pyogrio.read_dataframe(out, layer="links").iloc[0]
    link = json.loads(_run(cli, "link", DEMO6, "--antenna-a", DISH, "--antenna-b", DISH, "--json",
                           "--date", "2026-03-01").stdout)
    assert float(row["fade_margin_db"]) == pytest.approx(link["budget"]["fade_margin_db"], abs=1e-9)
    assert float(row["eirp_dbm"]) == pytest.approx(link["budget"]["eirp_dbm"], abs=1e-9)
    # the same with --antenna for every site
    out2 = tmp_path / "out2.gpkg"
    plain = tmp_path / "plain.csv"
    plain.write_text("\n".join(line.rsplit(",", 1)[0] for line in sites.read_text().splitlines()) + "\n")
    _run(cli, "screen", plain, "--dem", DEMO_DEM, "--freq-ghz", "18", "--tx-power-dbm", "18", "--loss-a-db", "0.5",
         "--loss-b-db", "0.5", "--bandwidth-mhz", "28", "--noise-figure-db", "7", "--required-snr-db", "22",
         "--polarisation", "vertical", "--antenna", DISH, "--out", out2, "--workers", "1", "-q")
    row2 = pyogrio.read_dataframe(out2, layer="links").iloc[0]
    assert float(row2["fade_margin_db"]) == pytest.approx(link["budget"]["fade_margin_db"], abs=1e-9)


def test_screen_skips_a_site_whose_antenna_fails(tmp_path, cli):
    shutil.copy(DISH, tmp_path / "dish.toml")
    src = (DEMO_DEM.parent / "sites.csv").read_text().splitlines()
    lines = [src[0] + ",antenna"] + [f"{line},{'dish.toml' if i != 2 else 'gone.toml'}"
                                     for i, line in enumerate(src[1:], 1)]
    sites = tmp_path / "sites.csv"
    sites.write_text("\n".join(lines) + "\n")
    result = _run(cli, "screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "18", "--out", tmp_path / "o.csv",
                  "--workers", "1", "-q")
    assert "row 3" in result.stderr and "antenna file not found" in result.stderr
    out_sites = list(csv.DictReader((tmp_path / "o-sites.csv").open()))
    assert len(out_sites) == len(src) - 2


def test_sheet_free_text_date_leaves_the_declination_at_today(tmp_path, cli):
    import datetime as dt

    pypdf = pytest.importorskip("pypdf")
    out = tmp_path / "s.pdf"
    _run(cli, "sheet", DEMO6, "-o", out, "--date", "2 March 2026")
    text = pypdf.PdfReader(str(out)).pages[0].extract_text()
    assert "2 March 2026" in text  # the title block keeps the words
    today = {dt.date.today().isoformat(), dt.datetime.now(dt.timezone.utc).date().isoformat()}
    assert any(f"epoch 2025.0, {d})" in text.replace("\n", " ") for d in today)
