"""terrahop link, sheet and heights with a radio profile, end to end on the demo files."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.cli.bad_input import run_command
from tests.radio_profiles import DEMO_18, EXAMPLE

DONE = ["link", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "28"]


def _json(args):
    out = run_command([*args, "--json"])
    assert out.exit_code == 0, out.stderr
    return json.loads(out.stdout)


@pytest.fixture(scope="module")
def done_record():
    return _json(DONE)


def test_done_means_command_gives_every_step_the_chosen_one_and_the_share_of_the_year(done_record):
    m = done_record["modulation"]
    assert m["radio"].endswith("(invented)") and m["channel_mhz"] == 28.0 and m["file"] == str(EXAMPLE)
    assert [s["label"] for s in m["steps"]] == ["QPSK", "16QAM", "32QAM", "64QAM", "128QAM", "256QAM", "512QAM",
                                                "1024QAM", "2048QAM"]
    shares = [s["share_of_year_pct"] for s in m["steps"]]
    assert all(x is not None for x in shares) and shares == sorted(shares, reverse=True)
    chosen = m["steps"][m["chosen_step"] - 1]
    assert chosen["fade_margin_db"] >= 10.0 and m["capacity_mbps"] == chosen["capacity_mbps"]
    above = m["steps"][m["chosen_step"]:] if m["chosen_step"] < len(m["steps"]) else []
    assert all(s["fade_margin_db"] < 10.0 for s in above)
    # The budget describes step 1 (QPSK) with the profile's noise figure and the channel as noise bandwidth.
    radio = done_record["inputs"]["radio"]
    assert radio["bandwidth_mhz"] == 28.0 and radio["noise_figure_db"] == 6.5
    assert radio["required_snr_db"] == m["steps"][0]["required_snr_db"]
    assert done_record["budget"]["fade_margin_db"] == m["steps"][0]["fade_margin_db"]
    assert done_record["availability"]["availability_pct"] == m["steps"][0]["share_of_year_pct"]
    # --tx-power-dbm 18 of the link file lowers the profile's 21 dBm; the 15 dBm step keeps its own.
    assert [s["tx_power_dbm"] for s in m["steps"]][::4] == [18.0, 18.0, 15.0]
    assert m["shannon_capacity_mbps"] > m["capacity_mbps"]
    assert m["mean_capacity_mbps"] is not None
    assert m["steps"][0]["capacity_mbps"] < m["mean_capacity_mbps"] <= m["steps"][-1]["capacity_mbps"]
    assert any("required_snr_db" in r for r in m["replaced_settings"])


def test_a_link_file_naming_the_profile_gives_the_same_modulation(tmp_path, done_record):
    text = DEMO_18.read_text().replace('rasters = ["../data/demo/terrain.tif"]',
                                       f'rasters = ["{DEMO_18.parent.parent / "data/demo/terrain.tif"}"]')
    radio = "[radio]\nfreq_ghz = 18.0\ntx_power_dbm = 18\ngain_a_dbi = 41\ngain_b_dbi = 41\nloss_a_db = 0.5\n" \
            "loss_b_db = 0.5\nprofile = \"radios/r18.toml\"\nchannel_mhz = 28\n"
    start, end = text.index("[radio]"), text.index("[analysis]")
    (tmp_path / "radios").mkdir()
    (tmp_path / "radios" / "r18.toml").write_text(EXAMPLE.read_text())
    link = tmp_path / "link.toml"
    link.write_text(text[:start] + radio + "\n" + text[end:])
    rec = _json(["link", str(link)])
    m, ref = rec["modulation"], done_record["modulation"]
    assert m["steps"] == ref["steps"] and m["chosen_step"] == ref["chosen_step"]
    assert m["file"] == str(tmp_path / "radios" / "r18.toml") and m["replaced_settings"] == []


def test_records_without_a_profile_have_no_modulation_block():
    rec = _json(["link", str(DEMO_18)])
    assert "modulation" not in rec and "eirp_limit" not in rec


def test_summary_table_and_eirp_limit(done_record):
    out = run_command([*DONE, "--max-eirp-dbm", "55"])
    assert out.exit_code == 0, out.stderr
    text = out.stdout
    assert "modulation" in text and "2048QAM" in text and "Shannon ceiling" in text
    assert "EIRP limit       55 dBm (--max-eirp-dbm): EXCEEDED by 3.5 dB" in text
    assert "warning: EIRP exceeds the limit of 55 dBm" in text
    rec = _json([*DONE, "--max-eirp-dbm", "60"])
    assert rec["eirp_limit"]["exceeds"] is False and rec["eirp_limit"]["eirp_a_dbm"] == 58.5
    assert not any("EIRP" in w for w in rec.get("warnings", []))


def test_min_margin_moves_the_chosen_step(done_record):
    rec = _json([*DONE, "--min-margin-db", "25"])
    m = rec["modulation"]
    assert m["min_margin_db"] == 25.0 and m["chosen_step"] < done_record["modulation"]["chosen_step"]
    assert m["steps"][m["chosen_step"] - 1]["fade_margin_db"] >= 25.0


def test_sheet_has_the_radio_rows_and_a_radio_page(tmp_path):
    out = run_command(["sheet", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "28", "-o",
                       str(tmp_path / "s.pdf")])
    assert out.exit_code == 0, out.stderr
    assert "(2 pages)" in out.stdout
    pypdf = pytest.importorskip("pypdf")
    reader = pypdf.PdfReader(tmp_path / "s.pdf")
    assert len(reader.pages) == 2
    main, radio = (page.extract_text() for page in reader.pages)
    assert "RADIO PROFILE" in main and "Chosen step" in main
    assert "Radio and modulation steps" in radio and "2048QAM" in radio and "share of year" in radio


def test_sheet_png_pages(tmp_path):
    out = run_command(["sheet", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "28", "-o",
                       str(tmp_path / "s.png")])
    assert out.exit_code == 0, out.stderr
    assert (tmp_path / "s.png").exists() and (tmp_path / "s-radio.png").exists()


def test_heights_takes_the_profile():
    out = run_command(["heights", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "14", "--json"])
    assert out.exit_code == 0, out.stderr
    assert '"modulation"' in out.stdout and '"channel_mhz": 14.0' in out.stdout
