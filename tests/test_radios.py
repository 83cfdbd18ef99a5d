"""Radio profile files: loading, the step table, and one clear error per kind of mistake."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.budget import noise_floor_dbm
from profiler.equipment.radios import read_radio_profile, step_table
from profiler.errors import DataFileError, InputError
from tests.radio_profiles import EXAMPLE, SMALL, write


def test_the_example_profile_loads_with_three_widths_and_rising_steps():
    p = read_radio_profile(EXAMPLE)
    assert p.widths_mhz == (14.0, 28.0, 56.0)
    assert "invented" in p.name.lower()
    for c in p.channels:
        t = step_table(p, c, None, 0.0)
        assert 6 <= len(t) <= 10
        assert np.all(np.diff(t.capacity_mbps) > 0) and np.all(np.diff(t.required_snr_db) > 0)
        assert np.all(np.diff(t.tx_power_dbm) <= 0) and t.tx_power_dbm[-1] < t.tx_power_dbm[0]


def test_step_table_turns_thresholds_into_snr_with_the_noise_floor(tmp_path):
    p = read_radio_profile(write(tmp_path))
    t = step_table(p, p.channel(28), None, 30.0)
    noise = float(noise_floor_dbm(28.0, 6.0))
    assert t.noise_floor_dbm == noise and t.noise_bandwidth_mhz == 28.0
    np.testing.assert_allclose(t.required_snr_db, [-87 - noise, -81 - noise, 19.0])
    np.testing.assert_allclose(t.rx_threshold_dbm, [-87, -81, 19 + noise])
    assert t.threshold_given == ("rx_threshold_dbm", "rx_threshold_dbm", "required_snr_db")
    np.testing.assert_array_equal(t.tx_power_dbm, [20, 20, 18])  # the profile's power, then the step's own
    wide = step_table(p, p.channel(56), None, 30.0)
    assert wide.noise_bandwidth_mhz == 50.0 and wide.noise_floor_dbm == float(noise_floor_dbm(50.0, 6.0))


def test_a_given_power_lowers_the_steps_above_it_and_may_not_raise_them(tmp_path):
    p = read_radio_profile(write(tmp_path))
    t = step_table(p, p.channel(28), 19.0, 30.0)
    np.testing.assert_array_equal(t.tx_power_dbm, [19, 19, 18])
    with pytest.raises(InputError, match="highest transmit power is 20 dBm"):
        step_table(p, p.channel(28), 21.0, 30.0)


def test_channel_and_band_lookups_name_what_the_profile_has(tmp_path):
    p = read_radio_profile(write(tmp_path))
    with pytest.raises(InputError, match=r"no channel of 40 MHz.*it has 28, 56 MHz"):
        p.channel(40)
    with pytest.raises(InputError, match="several channel widths"):
        p.channel(None)
    assert p.band(18.0).max_eirp_dbm == 50 and p.band(22.0).max_eirp_dbm is None
    with pytest.raises(InputError, match=r"20 GHz lies outside.*17.7-19.7 GHz, 21.2-23.6 GHz"):
        p.band(20.0)


@pytest.mark.parametrize("change, words", [
    (("noise_figure_db = 6", "noise_figure_db = 6\ncolour = 'red'"), ["unknown key", "colour"]),
    (("capacity_mbps = 80,", "capacity_mbps = 30,"), ["out of order", "capacity_mbps", "step 2"]),
    (("rx_threshold_dbm = -81", "rx_threshold_dbm = -90"), ["out of order", "rx_threshold_dbm"]),
    ((", rx_threshold_dbm = -81 }", " }"), ["threshold missing", "step 2"]),
    (("noise_figure_db = 6", "noise_figure_db = 'six'"), ["noise_figure_db", "must be a number"]),
    (("capacity_mbps = 40,", "capacity_mbps = true,"), ["capacity_mbps", "must be a number"]),
    (("threshold_error_ratio = 1e-6\n", ""), ["threshold_error_ratio"]),
    (("required_snr_db = 19, tx_power_dbm = 18", "required_snr_db = 19, tx_power_dbm = 22"),
     ["tx_power_dbm", "more power"]),
    (("low_ghz = 17.7", "low_ghz = 19.9"), ["band.low_ghz", "below"]),
    (("[[channel]]\nwidth_mhz = 56", "[[channel]]\nwidth_mhz = 28"), ["given twice"]),
    (('{ label = "QPSK", capacity_mbps = 40', '{ label = "QPSK", speed = 1, capacity_mbps = 40'),
     ["unknown key", "speed", "step 1"]),
])
def test_each_mistake_names_the_file_and_the_key(tmp_path, change, words):
    old, new = change
    assert old in SMALL
    path = write(tmp_path, SMALL.replace(old, new, 1))
    with pytest.raises(InputError) as info:
        read_radio_profile(path)
    message = str(info.value)
    assert str(path) in message
    for w in words:
        assert w.lower() in message.lower(), message


def test_missing_file_and_bad_toml(tmp_path):
    with pytest.raises(DataFileError, match="not found"):
        read_radio_profile(tmp_path / "none.toml")
    with pytest.raises(InputError, match="not a valid TOML"):
        read_radio_profile(write(tmp_path, "name = "))
