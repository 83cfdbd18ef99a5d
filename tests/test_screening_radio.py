"""Screening with radio profiles: the modulation columns equal terrahop link's, profiles per site,
pairs whose ends name different radios reported and skipped, no radio columns without a profile."""

from __future__ import annotations

import math
import shutil

import numpy as np
import pandas as pd
import pytest

from profiler.budget import Radio
from profiler.io.columns import RADIO_COLUMNS
from profiler.io.sites import read_sites
from profiler.jobs import resolve_radio_plan
from profiler.link import Settings, Site, analyse_link
from profiler.terrain import ElevationModel
from tests._screening_data import DEMO_DEM, DEMO_SITES
from tests.cli.bad_input import run_command
from tests.radio_profiles import EXAMPLE

RADIO = Radio(18.0, tx_power_dbm=20, gain_a_dbi=38, gain_b_dbi=38, loss_a_db=0.5, loss_b_db=0.5)
FLAGS = ["--freq-ghz", "18", "--tx-power-dbm", "20", "--gain-a-dbi", "38", "--gain-b-dbi", "38",
         "--loss-a-db", "0.5", "--loss-b-db", "0.5", "--workers", "1"]


def _screen(tmp_path, sites, *extra):
    out = tmp_path / "r.gpkg"  # full precision (CSV rounds to meaningful digits)
    result = run_command(["screen", str(sites), "--dem", str(DEMO_DEM), *FLAGS, "-o", str(out), *extra])
    assert result.exit_code == 0, result.stderr
    import pyogrio

    return pd.DataFrame(pyogrio.read_dataframe(out, layer="links", read_geometry=False)), result


def test_a_screened_pair_gives_exactly_the_modulation_of_terrahop_link(tmp_path):
    links, _ = _screen(tmp_path, DEMO_SITES, "--radio", str(EXAMPLE), "--channel-mhz", "28", "--max-km", "14",
                       "--max-eirp-dbm", "55")
    assert set(RADIO_COLUMNS) <= set(links.columns)
    radio, plan, limit = resolve_radio_plan({"radio_profile": str(EXAMPLE), "channel_mhz": 28.0, "tx_power_dbm": 20.0,
                                             "max_eirp_dbm": 55.0}, {}, {}, RADIO)
    sites, _ = read_sites(DEMO_SITES)
    index = {n: k for k, n in enumerate(sites.names)}
    profiled = links[links["verdict"] != "error"]
    picks = profiled.iloc[np.linspace(0, len(profiled) - 1, 6).astype(int)]
    seen_target = False
    with ElevationModel([DEMO_DEM]) as model:
        for _, row in picks.iterrows():
            a, b = index[row["site_a"]], index[row["site_b"]]
            sa = Site(str(sites.names[a]), sites.lat_deg[a], sites.lon_deg[a], sites.antenna_agl_m[a])
            sb = Site(str(sites.names[b]), sites.lat_deg[b], sites.lon_deg[b], sites.antenna_agl_m[b])
            rec = analyse_link(model, sa, sb, radio, Settings(), radio_plan=plan, eirp_limit=limit).record(0)
            m = rec["modulation"]
            assert row["fade_margin_db"] == rec["budget"]["fade_margin_db"]
            if m["chosen_step"] is None:
                assert pd.isna(row["best_step"]) and math.isnan(row["capacity_mbps"])
            else:
                assert row["best_step"] == m["chosen_step"] and row["capacity_mbps"] == m["capacity_mbps"]
            if m["capacity_at_target_mbps"] is None:
                assert math.isnan(row["capacity_at_target_mbps"])
            else:
                seen_target = True
                assert row["capacity_at_target_mbps"] == m["capacity_at_target_mbps"]
            e = rec["eirp_limit"]
            assert row["eirp_over_limit_db"] == pytest.approx(max(e["eirp_a_dbm"], e["eirp_b_dbm"]) - 55.0, abs=0)
    assert seen_target


def test_profiles_per_site_and_pairs_with_different_radios(tmp_path):
    other = tmp_path / "radios" / "other.toml"
    other.parent.mkdir()
    shutil.copy(EXAMPLE, tmp_path / "radios" / "same.toml")
    other.write_text(EXAMPLE.read_text().replace("noise_figure_db = 6.5", "noise_figure_db = 9"))
    frame = pd.read_csv(DEMO_SITES)
    frame["radio"] = ["radios/same.toml"] * (len(frame) - 2) + ["radios/other.toml"] * 2
    sites = tmp_path / "sites.csv"
    frame.to_csv(sites, index=False)
    links, result = _screen(tmp_path, sites, "--channel-mhz", "28")
    odd = set(frame["name"].iloc[-2:])
    mixed = links[links["site_a"].isin(odd) != links["site_b"].isin(odd)]
    assert len(mixed) == 2 * (len(frame) - 2)
    assert (mixed["verdict"] == "error").all()
    assert mixed["problem"].str.contains("name different radios").all()
    assert "different radios" in result.stderr  # reported, and the run went on
    assert "radios: " in result.stdout and "other.toml, 28 MHz): 2 sites" in result.stdout
    same = links[~links.index.isin(mixed.index)]
    assert (same["verdict"] != "error").any() and same["best_step"].notna().any()
    # The two sites with the noisier radio get 2.5 dB less SNR than the same pair would with the other.
    both_odd = links[links["site_a"].isin(odd) & links["site_b"].isin(odd)]
    assert len(both_odd) == 1 and both_odd["noise_floor_dbm"].iloc[0] == pytest.approx(
        same["noise_floor_dbm"].iloc[0] + 2.5)


def test_no_radio_columns_without_a_profile(tmp_path):
    links, _ = _screen(tmp_path, DEMO_SITES, "--max-km", "6")
    assert not set(RADIO_COLUMNS) & set(links.columns)


def test_an_eirp_limit_alone_gives_the_eirp_column(tmp_path):
    links, _ = _screen(tmp_path, DEMO_SITES, "--max-km", "6", "--max-eirp-dbm", "50")
    ok = links["verdict"] != "error"
    np.testing.assert_allclose(links.loc[ok, "eirp_over_limit_db"], links.loc[ok, "eirp_dbm"] - 50.0, rtol=0, atol=1e-12)
    assert links["best_step"].isna().all() and links["capacity_mbps"].isna().all()
