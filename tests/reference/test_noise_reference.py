"""Thermal noise: k T0 B with the exact SI Boltzmann constant (SI brochure 2019) at T0 = 290 K
(ITU-R P.372 reference temperature)."""

import pytest

from profiler.budget import noise_floor_dbm, thermal_noise_dbm


def test_kt0_per_hertz():
    # k = 1.380649e-23 J/K exactly: kT0 = -173.975 dBm/Hz, usually rounded to -174 (common practice).
    assert thermal_noise_dbm(1.0) == pytest.approx(-173.975, abs=0.001)
    assert round(float(thermal_noise_dbm(1.0))) == -174


def test_noise_floor_example():
    # -173.977 + 10 log10(5 MHz) + 9 dB = -97.99 dBm (computed).
    assert noise_floor_dbm(5.0, 9.0) == pytest.approx(-97.99, abs=0.01)


def test_20_mhz_channel():
    # Common practice: -174 + 10 log10(20e6) = -101 dBm before the noise figure.
    assert noise_floor_dbm(20.0, 0.0) == pytest.approx(-100.96, abs=0.01)
