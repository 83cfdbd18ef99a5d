"""Link jobs from Python: a link file plus overrides, without the command line."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from profiler.availability import ClimateSettings
from profiler.budget import Radio
from profiler.cli.options import flag_form
from profiler.errors import InputError
from profiler.jobs import (
    DEFAULT_AGL_M,
    analyse_job,
    default_text,
    open_job_data,
    resolve_link_job,
)
from profiler.link import Settings

REPO = Path(__file__).resolve().parents[1]
CLEAR = str(REPO / "examples" / "demo-1-clear.toml")
DEM = str(REPO / "data" / "demo" / "terrain.tif")


def test_overrides_win_over_the_link_file_and_the_job_analyses():
    job = resolve_link_job(CLEAR, {"freq_ghz": 11.0, "agl_b": 30.0, "k": "4/3"})
    assert job.radio.freq_ghz == 11.0 and job.radio.gain_a_dbi == 23.0  # override, then file
    assert job.site_b.antenna_agl_m == 30.0 and job.site_a.antenna_agl_m == 20.0
    assert job.title == "Orrin Water Tank to Brackwell Silo"
    with open_job_data(job) as (model, surroundings):
        record = analyse_job(job, model, surroundings).record(0)
    assert surroundings is None
    assert record["inputs"]["radio"]["freq_ghz"] == 11.0
    assert record["sites"]["b"]["antenna_agl_m"] == 30.0


def test_a_job_without_a_file_takes_the_defaults_of_the_python_types():
    job = resolve_link_job(None, {"dem": [DEM], "site_a": (-30.426077, -20.973967),
                                  "site_b": (-30.403493, -20.916715), "freq_ghz": 5.8})
    assert job.radio == Radio(5.8)
    assert job.settings.k == Settings().k and job.settings.criterion == Settings().criterion
    assert job.site_a.antenna_agl_m == DEFAULT_AGL_M and job.site_a.name == "A"


@pytest.mark.parametrize(
    "overrides, parameter, api_words, cli_words",
    [
        ({"site_a": (0.0, 0.0), "site_b": (0.0, 0.1), "freq_ghz": 5.8}, "dem", "give dem=FILE", "give --dem FILE"),
        ({"dem": [DEM], "site_b": (0.0, 0.1), "freq_ghz": 5.8}, "site_a", "give site_a=LAT,LON",
         "give --site-a LAT,LON"),
        ({"dem": [DEM], "site_a": (0.0, 0.0), "site_b": (0.0, 0.1)}, "freq_ghz", "give freq_ghz or",
         "give --freq-ghz or"),
        ({"agl_a": -3.0}, "agl_a", "site a (agl_a)", "site a (--agl-a)"),
        ({"dn1_n_per_km": 900.0}, "dn1_n_per_km", "dn1_n_per_km: dN1", "--dn1: dN1"),
        ({"nodata_fill_m": float("nan")}, "nodata_fill_m", "nodata_fill_m: nodata fill", "--nodata-fill-m: nodata"),
    ],
)
def test_errors_name_the_override_as_an_argument_and_the_cli_as_a_flag(overrides, parameter, api_words, cli_words):
    with pytest.raises(InputError) as info:
        resolve_link_job(CLEAR if "dem" not in overrides and "site_a" not in overrides else None, overrides)
    assert info.value.parameter == parameter
    assert api_words in str(info.value) and "--" not in str(info.value)
    assert cli_words in info.value.render(flag_form)


def test_values_from_the_file_are_named_by_file_and_table(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(Path(CLEAR).read_text().replace("tx_power_dbm = 20", "tx_power_dbm = 500"))
    with pytest.raises(InputError, match=r"bad.toml \[radio\] tx_power_dbm") as info:
        resolve_link_job(str(bad), {})
    assert info.value.parameter is None


def test_help_defaults_are_the_defaults_of_the_types():
    radio = {f.name: f.default for f in dataclasses.fields(Radio) if f.name != "freq_ghz"}
    for name, value in radio.items():
        assert float(default_text(name)) == value
    climate = ClimateSettings()
    for name in ("rain_rate_mm_h", "dn1_n_per_km", "pressure_hpa", "water_vapour_g_m3"):
        assert float(default_text(name)) == getattr(climate, name)
    assert default_text("k") == "4/3" and default_text("k_worst") == "2/3"
    assert default_text("diffraction_method") == Settings().diffraction_method
    assert float(default_text("agl")) == DEFAULT_AGL_M


def test_cli_help_shows_the_filled_defaults():
    from click.testing import CliRunner

    from profiler.cli.main import cli

    out = CliRunner().invoke(cli, ["link", "--help"], terminal_width=200).output
    assert "{default}" not in out
    assert "Transmitter power at site a, dBm [default: 20]." in " ".join(out.split())
    assert "[default: 4/3]" in out
