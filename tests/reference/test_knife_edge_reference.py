"""Single knife-edge diffraction against ITU-R P.526-15 (10/2019), section 4.1:
v from eq. (26), J(v) approximation eq. (31), exact form from the Fresnel integrals eq. (27).
"""

import numpy as np
import pytest

from profiler.losses.knife_edge import (
    fresnel_kirchhoff_v,
    knife_edge_loss_db,
    knife_edge_loss_exact_db,
)


@pytest.mark.parametrize(
    "v, exact_db, approx_db",
    # Check values computed from ITU-R P.526-15 eqs. (27) (Fresnel integrals) and (31).
    [(0.0, 6.0206, 6.033), (1.0, 13.864, 13.926), (2.4, 20.618, 20.539), (2.74, 21.745, 21.649)],
)
def test_check_values(v, exact_db, approx_db):
    assert float(knife_edge_loss_db(v)) == pytest.approx(approx_db, abs=5e-4)
    assert float(knife_edge_loss_exact_db(v)) == pytest.approx(exact_db, abs=5e-4)


def test_grazing_is_6_db_and_clear_is_0():
    # P.526-15 section 4.1: J(0) about 6 dB; J is taken as 0 for v <= -0.78.
    assert knife_edge_loss_db(0.0) == pytest.approx(6.0, abs=0.05)
    assert knife_edge_loss_db(-0.78) == 0.0
    assert knife_edge_loss_db(-5.0) == 0.0
    # Just above -0.78 the approximation is already close to 0 dB.
    assert abs(knife_edge_loss_db(-0.7799)) < 0.1


def test_approximation_within_0_12_db_of_exact():
    # ITU-R P.526-15 section 4.1: the approximation (31) is within about 0.12 dB of the exact
    # form (27) for -0.7 <= v <= 10 [computed].
    v = np.linspace(-0.7, 10.0, 5001)
    assert np.max(np.abs(knife_edge_loss_db(v) - knife_edge_loss_exact_db(v))) < 0.13


def test_mixed_unit_form_of_v():
    # P.526-15 eq. (28): v = H sqrt(0.002 d / (lambda d1 d2)), d in km, H and lambda in m.
    h, d1, d2, f = 20.0, 4.0, 6.0, 1.0
    lam = 0.299792458 / f
    expected = h * np.sqrt(0.002 * (d1 + d2) / (lam * d1 * d2))
    assert fresnel_kirchhoff_v(h, d1 * 1e3, d2 * 1e3, f) == pytest.approx(expected, rel=1e-12)


def test_textbook_example():
    # From memory (a common textbook example): lambda = 1/3 m, d1 = d2 = 1 km, h = 25 m:
    # v = 2.74 and about 22 dB; h = 0 gives 6 dB; h = -25 m about 0 dB.
    f_ghz = 0.299792458 * 3.0
    v = fresnel_kirchhoff_v(25.0, 1000.0, 1000.0, f_ghz)
    assert v == pytest.approx(2.74, abs=0.01)
    assert knife_edge_loss_db(v) == pytest.approx(22.0, abs=0.5)
    assert knife_edge_loss_db(fresnel_kirchhoff_v(-25.0, 1000.0, 1000.0, f_ghz)) == 0.0
