"""Free-space loss against ITU-R P.525-4 (08/2019), section 2.2, eq. (4):
L = 32.4 + 20 log10 f[MHz] + 20 log10 d[km]; with c = 299 792 458 m/s the constant is 32.4478.
"""

import numpy as np
import pytest

from profiler.losses.free_space import free_space_loss_db


@pytest.mark.parametrize(
    "freq_ghz, distance_km, expected_db",
    [
        (10.0, 10.0, 132.448),  # ITU-R P.525-4 eq. 4, computed
        (2.4, 1.0, 100.052),    # same source, computed
        (0.9, 1.0, 91.533),     # same source, computed
    ],
)
def test_check_values(freq_ghz, distance_km, expected_db):
    assert free_space_loss_db(distance_km * 1000.0, freq_ghz) == pytest.approx(expected_db, abs=0.001)


def test_mixed_unit_form():
    # ITU-R P.525-4 eq. 4 in MHz and km with the exact speed of light: 32.4478 dB constant.
    f_mhz = np.array([100.0, 5800.0, 38000.0])
    d_km = np.array([0.5, 12.0, 3.0])
    expected = 32.4478 + 20 * np.log10(f_mhz) + 20 * np.log10(d_km)
    assert free_space_loss_db(d_km * 1000, f_mhz / 1000) == pytest.approx(expected, abs=1e-4)


def test_twenty_db_per_decade():
    # Common practice: 20 dB more loss for every tenfold distance.
    assert free_space_loss_db(10_000.0, 5.0) - free_space_loss_db(1_000.0, 5.0) == pytest.approx(20.0)
