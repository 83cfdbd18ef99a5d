"""Antenna files and tables (profiler.equipment.antennas): parsing, checks, gains at a frequency."""

from __future__ import annotations

import math

import pytest

from profiler.equipment.antennas import (
    DEFAULT_EFFICIENCY, Antenna, antenna_from_link_table, aperture_gain_dbi, parse_antenna, read_antenna_file,
)
from profiler.errors import DataFileError, InputError
from tests.conftest import REPO

DISH = REPO / "examples" / "dish-0.6m.toml"


def test_example_dish_reads_and_gives_the_aperture_gain():
    a = read_antenna_file(DISH)
    assert isinstance(a, Antenna)
    assert a.polarisation == "vertical" and a.band_ghz == (17.7, 19.7)
    assert a.gain_dbi_at(18.0) == pytest.approx(float(aperture_gain_dbi(0.6, 18.0, 0.55)))
    assert a.envelope is not None and a.envelope.relative_db_at(1.0) == pytest.approx(-3.0)
    assert a.envelope.relative_db_at(-1.5) == pytest.approx(-10.5)  # folded, linear between points


def test_default_efficiency_is_used_and_said():
    a = parse_antenna({"diameter_m": 1.2}, "x.toml")
    assert a.efficiency_used == DEFAULT_EFFICIENCY
    assert "default, common practice" in a.gain_source()
    assert a.gain_dbi_at(11.0) == pytest.approx(float(aperture_gain_dbi(1.2, 11.0, DEFAULT_EFFICIENCY)))


def test_stated_gain_wins_and_diameter_gives_the_beamwidth():
    a = parse_antenna({"gain_dbi": 38.0, "diameter_m": 0.6}, "x.toml")
    assert a.gain_dbi_at(18.0) == 38.0
    assert a.beamwidth_deg_at(18.0) == pytest.approx(70.0 * 299792458.0 / 18e9 / 0.6)
    assert parse_antenna({"gain_dbi": 20.0}, "x.toml").beamwidth_deg_at(5.0) is None


@pytest.mark.parametrize("table, words", [
    ({"gain_dbi": 30, "colour": "red"}, ["x.toml", "unknown key", "colour"]),
    ({"name": "no gain"}, ["x.toml", "gain_dbi", "diameter_m", "neither"]),
    ({"diameter_m": 0.6, "efficiency": 1.2}, ["x.toml", "efficiency", "at most 1"]),
    ({"diameter_m": 0.6, "efficiency": 0}, ["x.toml", "efficiency", "above 0"]),
    ({"gain_dbi": 30, "efficiency": 0.5}, ["x.toml", "efficiency needs diameter_m"]),
    ({"gain_dbi": 45, "diameter_m": 0.3, "band_ghz": [17.7, 19.7]}, ["x.toml", "gain_dbi", "diameter_m", "disagree"]),
    ({"gain_dbi": "30"}, ["x.toml", "gain_dbi", "number"]),
    ({"gain_dbi": 30, "polarisation": "sideways"}, ["x.toml", "polarisation"]),
    ({"gain_dbi": 30, "band_ghz": [19.7, 17.7]}, ["x.toml", "band_ghz"]),
    ({"gain_dbi": 30, "envelope": {"angle_deg": [0, 5, 2], "relative_db": [0, -10, -20]}},
     ["x.toml", "envelope", "out of order"]),
    ({"gain_dbi": 30, "envelope": {"angle_deg": [0, 5], "relative_db": [0, 3]}}, ["x.toml", "envelope", "rises"]),
    ({"gain_dbi": 30, "envelope": {"angle_deg": [0, 5], "relative_db": [0]}}, ["x.toml", "envelope", "2 values"]),
    ({"gain_dbi": 30, "envelope": {"angle_deg": [0, 200], "relative_db": [0, -40]}}, ["x.toml", "180"]),
])
def test_bad_tables_name_the_file_and_key(table, words):
    with pytest.raises(InputError) as info:
        parse_antenna(table, "x.toml")
    text = str(info.value)
    assert all(w in text for w in words), text


def test_frequency_outside_the_band_is_refused():
    a = read_antenna_file(DISH)
    with pytest.raises(InputError, match=r"23 GHz is outside the antenna's band_ghz 17.7-19.7"):
        a.gain_dbi_at(23.0)


def test_gain_and_diameter_checked_at_the_link_frequency_without_a_band():
    a = parse_antenna({"gain_dbi": 40.0, "diameter_m": 0.3}, "x.toml")  # no band: checked when used
    with pytest.raises(InputError, match="disagree at 6 GHz"):
        a.gain_dbi_at(6.0)


def test_missing_and_garbled_files(tmp_path):
    with pytest.raises(DataFileError, match="antenna file not found"):
        read_antenna_file(tmp_path / "none.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("gain_dbi = = 3\n")
    with pytest.raises(InputError, match="not a valid TOML antenna file"):
        read_antenna_file(bad)


def test_link_table_inline_or_file_relative_to_the_link_file(tmp_path):
    (tmp_path / "ant").mkdir()
    (tmp_path / "ant" / "d.toml").write_text('gain_dbi = 33.5\nname = "d"\n')
    link = str(tmp_path / "link.toml")
    assert antenna_from_link_table({"file": "ant/d.toml"}, link, "antenna_a").gain_dbi == 33.5
    inline = antenna_from_link_table({"diameter_m": 0.3}, link, "antenna_b")
    assert inline.source == f"{link} [antenna_b]"
    with pytest.raises(InputError, match=r"\[antenna_a\] gives file and also gain_dbi"):
        antenna_from_link_table({"file": "ant/d.toml", "gain_dbi": 3}, link, "antenna_a")
    with pytest.raises(InputError, match=r"link.toml \[antenna_b\]: unknown key"):
        antenna_from_link_table({"diameter": 0.3}, link, "antenna_b")


def test_record_names_file_gain_and_how():
    rec = read_antenna_file(DISH).record(18.0)
    assert rec["file"] == str(DISH)
    assert rec["gain_dbi"] == pytest.approx(38.4787, abs=1e-3)
    assert rec["beamwidth_from"] == "70 lambda / D" and rec["envelope_points"] == 9
    assert math.isfinite(rec["beamwidth_deg"])


def test_gains_outside_the_one_gain_range_are_refused_with_the_file():
    with pytest.raises(InputError, match=r"x.toml: gain_dbi must be at least -20 and at most 70"):
        parse_antenna({"gain_dbi": 75}, "x.toml")
    with pytest.raises(InputError, match=r"x.toml: diameter_m 30 gives 85.4 dBi at 80 GHz"):
        parse_antenna({"diameter_m": 30}, "x.toml").gain_dbi_at(80.0)
