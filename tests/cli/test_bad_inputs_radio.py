"""Bad-input corpus: radio profiles, channel widths, EIRP limits (harness in tests/cli/bad_input.py)."""

from __future__ import annotations

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM
from tests.radio_profiles import DEMO_18, EXAMPLE, SMALL, write

LINK = ["link", str(DEMO_18)]


def _profile(tmp_path, old, new):
    assert old in SMALL
    return write(tmp_path, SMALL.replace(old, new, 1))


@pytest.mark.parametrize("old, new, words", [
    ("noise_figure_db = 6", "noise_figure_db = 6\nvendor = 'x'", ["unknown key", "vendor"]),
    ("capacity_mbps = 80,", "capacity_mbps = 20,", ["steps out of order", "capacity_mbps"]),
    (", rx_threshold_dbm = -81 }", " }", ["threshold missing", "step 2 (16QAM)"]),
    ("noise_figure_db = 6", "noise_figure_db = '6 dB'", ["noise_figure_db", "must be a number"]),
    ("threshold_error_ratio = 1e-6\n", "", ["threshold_error_ratio"]),
])
def test_bad_profiles_name_the_file_and_the_key(tmp_path, old, new, words):
    path = _profile(tmp_path, old, new)
    out = assert_refused([*LINK, "--radio", str(path), "--channel-mhz", "28"], words, inputs=[path, DEMO_18])
    assert str(path) in out.stderr


def test_a_channel_width_the_profile_lacks_lists_the_widths():
    assert_refused([*LINK, "--radio", str(EXAMPLE), "--channel-mhz", "40"],
                   ["no channel of 40 MHz", "14, 28, 56 MHz", "radio-18ghz.toml"], inputs=[EXAMPLE])


def test_several_widths_and_none_chosen():
    assert_refused([*LINK, "--radio", str(EXAMPLE)], ["several channel widths", "--channel-mhz"])


def test_a_frequency_outside_the_profiles_bands():
    assert_refused([*LINK, "--radio", str(EXAMPLE), "--channel-mhz", "28", "--freq-ghz", "23"],
                   ["23 GHz lies outside", "17.7-19.7 GHz", "radio-18ghz.toml"])


def test_one_step_flags_beside_a_profile_are_refused():
    assert_refused([*LINK, "--radio", str(EXAMPLE), "--channel-mhz", "28", "--required-snr-db", "20"],
                   ["--required-snr-db", "one-step radio", "drop one"])
    assert_refused([*LINK, "--radio", str(EXAMPLE), "--channel-mhz", "28", "--bandwidth-mhz", "28"],
                   ["--bandwidth-mhz", "radio profile gives it"])


def test_profile_flags_without_a_profile():
    assert_refused([*LINK, "--channel-mhz", "28"], ["--channel-mhz", "radio profile"])
    # --min-margin-db needs no profile: it is also the viable margin of --kml (tests/cli/test_cli_kml.py).
    assert_refused([*LINK, "--min-margin-db", "nan"], ["--min-margin-db"])


def test_more_power_than_the_radio_has():
    assert_refused([*LINK, "--radio", str(EXAMPLE), "--channel-mhz", "28", "--tx-power-dbm", "25"],
                   ["highest transmit power is 21 dBm", "--tx-power-dbm"])


def test_missing_profile_file(tmp_path):
    assert_refused([*LINK, "--radio", str(tmp_path / "none.toml"), "--channel-mhz", "28"],
                   ["radio profile not found", "none.toml"])


def test_eirp_limit_out_of_range():
    assert_refused([*LINK, "--max-eirp-dbm", "1e9"], ["--max-eirp-dbm", "EIRP limit"])


def test_link_file_with_profile_and_required_snr(tmp_path):
    text = DEMO_18.read_text().replace('rasters = ["../data/demo/terrain.tif"]', f'rasters = ["{DEMO_DEM}"]')
    text = text.replace("required_snr_db = 22", f'required_snr_db = 22\nprofile = "{EXAMPLE}"\nchannel_mhz = 28')
    link = tmp_path / "link.toml"
    link.write_text(text)
    assert_refused(["link", str(link)], ["link.toml", "[radio] bandwidth_mhz", "[radio] profile", "drop one"],
                   inputs=[link])


def test_link_file_profile_must_be_text(tmp_path):
    text = DEMO_18.read_text().replace("required_snr_db = 22", "profile = 18")
    link = tmp_path / "link.toml"
    link.write_text(text)
    assert_refused(["link", str(link)], ["[radio] profile", "text"], inputs=[link])


def test_sheet_and_heights_refuse_a_bad_channel(tmp_path):
    assert_refused(["sheet", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "7", "-o",
                    str(tmp_path / "s.pdf")], ["no channel of 7 MHz"])
    assert not (tmp_path / "s.pdf").exists()
    assert_refused(["heights", str(DEMO_18), "--radio", str(EXAMPLE), "--channel-mhz", "7"], ["no channel of 7 MHz"])


def test_screen_site_naming_a_missing_profile(tmp_path):
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,antenna_agl_m,radio\n"
                     "Orrin,-30.426077,-20.973967,20,\n"
                     "Brackwell,-30.403493,-20.916715,15,nothing.toml\n")
    assert_refused(["screen", str(sites), "--dem", str(DEMO_DEM), "--freq-ghz", "18", "-o", str(tmp_path / "r.csv")],
                   ["sites.csv", "Brackwell", "row 3", "nothing.toml", "not found"], inputs=[sites])
    assert not (tmp_path / "r.csv").exists()
