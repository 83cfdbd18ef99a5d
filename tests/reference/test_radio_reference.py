"""Radio profiles against published formulas: Shannon capacity and the receive threshold <-> SNR.

Shannon: C = B log2(1 + S/N) (C. E. Shannon, "A Mathematical Theory of Communication", Bell System
Technical Journal 27, 1948, Theorem 17), values computed by hand below.  Threshold <-> SNR: the
noise floor k T0 B + NF with k = 1.380649e-23 J/K exactly (SI brochure 2019) and T0 = 290 K
(ITU-R P.372 reference temperature).
"""

import math

import pytest

from profiler.budget import shannon_capacity_mbps
from profiler.equipment.radios import read_radio_profile, step_table
from tests.radio_profiles import write

K_BOLTZMANN = 1.380649e-23  # J/K, exact (SI 2019)


@pytest.mark.parametrize("b_mhz, snr_db, expected", [
    (28.0, 0.0, 28.0),                 # S/N = 1: B log2 2 = B
    (28.0, 10 * math.log10(3), 56.0),  # S/N = 3: B log2 4 = 2 B
    (56.0, 10 * math.log10(255), 448.0),  # S/N = 255: B log2 256 = 8 B
    (1.0, 30.0, 9.967226258835993),    # log2(1001), by hand
])
def test_shannon_capacity_hand_values(b_mhz, snr_db, expected):
    assert shannon_capacity_mbps(b_mhz, snr_db) == pytest.approx(expected, rel=1e-12)


def test_threshold_to_snr_with_k_t_b(tmp_path):
    p = read_radio_profile(write(tmp_path))
    t = step_table(p, p.channel(28), None, 20.0)
    # -87 dBm in 28 MHz with NF 6 dB: N = 10 log10(k 290 K 28e6 Hz / 1 mW) + 6 = -93.50 dBm (computed)
    noise_dbm = 10 * math.log10(K_BOLTZMANN * 290.0 * 28e6 / 1e-3) + 6.0
    assert noise_dbm == pytest.approx(-93.50, abs=0.01)
    assert t.required_snr_db[0] == pytest.approx(-87.0 - noise_dbm, abs=1e-9)
    # and back: the SNR of the 64QAM step (given as SNR) is its threshold less the same floor
    assert t.rx_threshold_dbm[2] == pytest.approx(19.0 + noise_dbm, abs=1e-9)
