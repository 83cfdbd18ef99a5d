"""Antenna gain and beamwidth against the textbook aperture relations (sources beside each check)."""

from __future__ import annotations

import math

import pytest

from profiler.equipment.antennas import aperture_beamwidth_deg, aperture_gain_dbi, read_antenna_file
from tests.conftest import REPO

C_M_S = 299_792_458.0  # speed of light, exact (SI)


def test_dish_06m_18ghz_efficiency_055_is_385_dbi():
    """G = e (pi D / lambda)^2 (Kraus and Marhefka, Antennas for All Applications, 3rd ed., chapter 2,
    effective aperture: G = 4 pi A_e / lambda^2 with A_e = e pi D^2 / 4; from memory), computed here by hand."""
    lam = C_M_S / 18e9
    expected = 10 * math.log10(0.55 * (math.pi * 0.6 / lam) ** 2)
    assert expected == pytest.approx(38.48, abs=0.01)  # the check value, 38.5 dBi
    assert float(aperture_gain_dbi(0.6, 18.0, 0.55)) == pytest.approx(expected, abs=1e-9)
    assert read_antenna_file(REPO / "examples" / "dish-0.6m.toml").gain_dbi_at(18.0) == pytest.approx(expected)


def test_effective_aperture_form_agrees():
    """Same relation written as 4 pi A_e / lambda^2 (the effective-aperture definition, same source)."""
    lam = C_M_S / 11e9
    area = 0.6 * math.pi * 1.2 ** 2 / 4
    assert float(aperture_gain_dbi(1.2, 11.0, 0.6)) == pytest.approx(10 * math.log10(4 * math.pi * area / lam ** 2))


def test_f699_relation_between_gain_and_d_over_lambda():
    """ITU-R F.699 (from memory): 20 log10(D / lambda) ~= G_max - 7.7 dB when D / lambda is not given.
    That is the aperture formula with efficiency about 0.6: 10 log10(0.6 pi^2) = 7.72 dB."""
    for d_m, f_ghz in ((0.3, 23.0), (0.6, 18.0), (1.8, 6.0)):
        g = float(aperture_gain_dbi(d_m, f_ghz, 0.6))
        assert g - 20 * math.log10(d_m / (C_M_S / (f_ghz * 1e9))) == pytest.approx(7.7, abs=0.05)


def test_beamwidth_70_lambda_over_d():
    """Half-power beamwidth about 70 lambda / D degrees (textbook rule of thumb for dishes, from memory)."""
    lam = C_M_S / 18e9
    assert float(aperture_beamwidth_deg(0.6, 18.0)) == pytest.approx(70 * lam / 0.6)
    assert float(aperture_beamwidth_deg(0.6, 18.0)) == pytest.approx(1.943, abs=1e-3)
    # doubling the diameter halves the beamwidth; doubling it adds 6.02 dB of gain
    assert float(aperture_beamwidth_deg(1.2, 18.0)) == pytest.approx(float(aperture_beamwidth_deg(0.6, 18.0)) / 2)
    assert float(aperture_gain_dbi(1.2, 18.0) - aperture_gain_dbi(0.6, 18.0)) == pytest.approx(6.0206, abs=1e-4)
