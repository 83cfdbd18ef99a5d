import numpy as np
import pytest

from profiler.budget import Radio, link_budget, noise_floor_dbm, shannon_capacity_mbps
from profiler.errors import InputError


def test_budget_chain():
    radio = Radio(freq_ghz=5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=20, loss_a_db=1,
                  loss_b_db=2, bandwidth_mhz=20, noise_figure_db=6, required_snr_db=15)
    b = link_budget(radio, np.array([120.0, 130.0]))
    assert b.eirp_dbm.tolist() == [42.0, 42.0]
    assert b.rx_level_dbm.tolist() == [-60.0, -70.0]
    assert b.noise_floor_dbm[0] == pytest.approx(-173.975 + 73.0103 + 6, abs=1e-3)
    assert b.snr_db == pytest.approx(b.rx_level_dbm - b.noise_floor_dbm)
    assert b.fade_margin_db == pytest.approx(b.snr_db - 15.0)


def test_budget_accepts_per_path_arrays():
    radio = Radio(freq_ghz=5.8, gain_a_dbi=np.array([10.0, 20.0]))
    b = link_budget(radio, np.array([100.0, 100.0]))
    assert b.eirp_dbm.tolist() == [30.0, 40.0]


def test_noise_floor_grows_10_db_per_decade_of_bandwidth():
    assert noise_floor_dbm(200.0, 5.0) - noise_floor_dbm(20.0, 5.0) == pytest.approx(10.0)


def test_shannon_bound():
    assert shannon_capacity_mbps(20.0, 0.0) == pytest.approx(20.0)


@pytest.mark.parametrize(
    "kwargs, word",
    [({"freq_ghz": 0.0}, "freq_ghz"), ({"freq_ghz": -5.0}, "freq_ghz"),
     ({"freq_ghz": 5.0, "bandwidth_mhz": 0.0}, "bandwidth_mhz"),
     ({"freq_ghz": 5.0, "loss_a_db": -1.0}, "loss_a_db"),
     ({"freq_ghz": float("nan")}, "freq_ghz")],
)
def test_radio_validation(kwargs, word):
    with pytest.raises(InputError, match=word):
        Radio(**kwargs).validate()
