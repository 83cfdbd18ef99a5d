"""Fresnel radius, earth bulge and k-factor against published forms."""

import numpy as np
import pytest

from profiler.geometry import earth_bulge_m, fresnel_radius_m


def test_f1_against_p530():
    # ITU-R P.530-17 (12/2017), section 2.2.2 / eq. (2): F1 = 17.3 sqrt(d1 d2 / (f d)) m,
    # f in GHz, d in km. d1 = d2 = 10 km at 10 GHz: 12.233 m (computed).
    # 12.233 m uses the rounded 17.3; the exact constant sqrt(299.79) = 17.314 gives 12.243 m.
    assert fresnel_radius_m(10_000.0, 10_000.0, 10.0) == pytest.approx(12.233, rel=1e-3)
    d1, d2, f = np.array([1.0, 5.0, 17.0]), np.array([9.0, 5.0, 3.0]), np.array([2.4, 5.8, 23.0])
    p530 = 17.3 * np.sqrt(d1 * d2 / (f * (d1 + d2)))
    # 17.3 is a rounded constant (exact: sqrt(c/1e9 * 1e3) = 17.314), so agree to 0.1 %.
    assert fresnel_radius_m(d1 * 1e3, d2 * 1e3, f) == pytest.approx(p530, rel=1e-3)


def test_fresnel_zone_n_against_p526():
    # ITU-R P.526-15 section 2, eq. (2): Rn = 550 sqrt(n d1 d2 / ((d1 + d2) f)), f in MHz, d in km.
    d1, d2, f_mhz, n = 3.0, 7.0, 5800.0, 2
    expected = 550.0 * np.sqrt(n * d1 * d2 / ((d1 + d2) * f_mhz))
    # 550 is rounded from sqrt(299 792) = 547.5, so agree to 0.5 %.
    assert fresnel_radius_m(d1 * 1e3, d2 * 1e3, f_mhz / 1e3, zone=n) == pytest.approx(expected, rel=5e-3)


def test_bulge_handbook_form():
    # Handbook form h = d1 d2 / (12.742 k) m with km (a = 6371 km); 36.79 m at the midpoint
    # of a 50 km path at k = 4/3 (computed).
    assert earth_bulge_m(25_000.0, 25_000.0, 4 / 3) == pytest.approx(36.79, abs=0.01)
    assert earth_bulge_m(3_000.0, 9_000.0, 0.8) == pytest.approx(3 * 9 / (12.742 * 0.8), rel=1e-4)


def test_k_from_refractivity_gradient():
    # ITU-R P.453-14 / handbook: k = 157 / (157 + dN/dh); dN/dh = -40 N/km gives k = 1.342
    # and an effective radius near 8 500 km (computed).
    k = 157.0 / (157.0 - 40.0)
    assert k == pytest.approx(1.342, abs=0.001)
    assert k * 6371 == pytest.approx(8549, abs=5)
