"""Reflection geometry and coefficients against their sources (profiler.reflection).

Sources beside each check: flat-earth mirror geometry (d1/d2 = h1/h2); the
textbook reflection-point cubic (Freeman, Radio System Design for
Telecommunications, 3rd ed., reflection point; from memory) solved here with
numpy.roots and, independently, by Fermat's principle on an exact circle; the
Fresnel equations (ITU-R P.2040 / P.527 form, Born and Wolf's Brewster angle
tan(theta_B) = sqrt(eps_r) from the normal); the two-ray path difference
Delta = 2 h1' h2' / d (any radio handbook, common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from profiler.reflection import (
    brewster_grazing_angle_rad, complex_permittivity, diversity_spacing_m, divergence_factor, facet_curve,
    fresnel_coefficient, reflection_point_cubic_coefficients, reflection_point_m, space_diversity_improvement,
    two_ray_level_db,
)
from profiler.units import EARTH_RADIUS_M, wavelength_m


@pytest.mark.parametrize("h1, h2, d", [(30.0, 30.0, 5000.0), (100.0, 20.0, 30000.0), (7.0, 95.0, 12345.0)])
def test_flat_earth_mirror_point(h1, h2, d):
    # Flat earth (k infinite): similar triangles of the mirror image, d1 / d2 = h1 / h2.
    d1 = float(reflection_point_m(h1, h2, d, math.inf))
    assert d1 / (d - d1) == pytest.approx(h1 / h2, rel=1e-12)


def test_cubic_worked_example_against_numpy_roots():
    # Worked example: h1 = 100 m, h2 = 50 m, d = 40 km, k = 4/3.  The cubic
    # 2 d1^3 - 3 d d1^2 + (d^2 - 2 k a (h1 + h2)) d1 + 2 k a h1 d = 0 (Freeman 3rd ed., from memory)
    # solved by numpy.roots: the root inside (0, d).
    h1, h2, d, k = 100.0, 50.0, 40_000.0, 4.0 / 3.0
    ae = k * EARTH_RADIUS_M
    coeffs = (2.0, -3.0 * d, d * d - 2.0 * ae * (h1 + h2), 2.0 * ae * h1 * d)
    assert reflection_point_cubic_coefficients(h1, h2, d, k) == pytest.approx(coeffs)
    roots = np.roots(coeffs)
    inside = [r.real for r in roots if abs(r.imag) < 1e-6 and 0 < r.real < d]
    assert len(inside) == 1
    assert float(reflection_point_m(h1, h2, d, k)) == pytest.approx(inside[0], abs=1e-6)
    # By hand: d1 = 25.156 km gives h1' = 100 - d1^2/(2ka) = 62.75 m, h2' = 37.03 m and equal grazing
    # angles h1'/d1 = h2'/d2 = 2.495 mrad (flat earth would put it at 26.67 km).
    d1 = inside[0]
    assert d1 == pytest.approx(25_156.0, abs=1.0)
    assert (h1 - d1**2 / (2 * ae)) / d1 == pytest.approx((h2 - (d - d1) ** 2 / (2 * ae)) / (d - d1), rel=1e-9)


def test_cubic_against_fermat_on_an_exact_circle():
    # Independent check: on a circle of radius k a the specular point makes the path a -> P -> b
    # stationary (Fermat).  The cubic is the small-angle form, so the two agree to well under 1 %.
    h1, h2, d, k = 100.0, 50.0, 40_000.0, 4.0 / 3.0
    R = k * EARTH_RADIUS_M
    phi = d / R
    A = (R + h1) * np.array([0.0, 1.0])
    B = (R + h2) * np.array([math.sin(phi), math.cos(phi)])
    t = np.linspace(0.0, phi, 400_001)
    P = R * np.column_stack([np.sin(t), np.cos(t)])
    length = np.hypot(*(P - A).T) + np.hypot(*(P - B).T)
    d1_exact = R * t[np.argmin(length)]
    assert float(reflection_point_m(h1, h2, d, k)) == pytest.approx(d1_exact, rel=5e-3)


@pytest.mark.parametrize("surface", ["sea-water", "fresh-water", "land", "wet-ground", "dry-ground"])
@pytest.mark.parametrize("freq_ghz", [2.0, 6.0, 18.0])
def test_horizontal_coefficient_tends_to_minus_one_at_grazing(surface, freq_ghz):
    # Fresnel equations: at grazing incidence R_h -> -1 for any permittivity.
    eta = complex_permittivity(surface, freq_ghz)
    r = fresnel_coefficient(np.array([1e-7, 1e-4]), eta, "horizontal")
    assert abs(r[0] + 1.0) < 1e-5
    assert abs(r[1] + 1.0) < 0.05


@pytest.mark.parametrize("eps_r", [4.0, 15.0, 30.0, 81.0])
def test_brewster_minimum_for_a_lossless_dielectric(eps_r):
    # Brewster: R_v = 0 where tan(theta) = sqrt(eps_r) from the normal, i.e. grazing atan(1 / sqrt(eps_r)).
    psi = np.linspace(1e-4, math.pi / 2 - 1e-4, 200_001)
    r = np.abs(fresnel_coefficient(psi, eps_r + 0j, "vertical"))
    at = psi[np.argmin(r)]
    assert at == pytest.approx(math.atan(1.0 / math.sqrt(eps_r)), abs=2e-5)
    assert float(brewster_grazing_angle_rad(eps_r)) == pytest.approx(math.atan(1.0 / math.sqrt(eps_r)))
    assert r.min() < 1e-4
    # Horizontal polarisation has no such minimum: |R_h| falls monotonically from 1.
    rh = np.abs(fresnel_coefficient(psi, eps_r + 0j, "horizontal"))
    assert np.all(np.diff(rh) <= 1e-12)


def test_lossy_surface_has_a_shallow_not_zero_minimum():
    # Sea water is lossy: the vertical coefficient dips (pseudo-Brewster) but does not reach 0.
    eta = complex_permittivity("sea-water", 6.0)
    psi = np.linspace(1e-4, math.pi / 2 - 1e-4, 100_001)
    r = np.abs(fresnel_coefficient(psi, eta, "vertical"))
    j = int(np.argmin(r))
    assert 0 < j < psi.size - 1 and 0.0 < r[j] < 0.5
    assert psi[j] == pytest.approx(math.atan(1.0 / math.sqrt(abs(eta))), rel=0.3)


def test_water_permittivity_near_published_figures():
    # ITU-R P.527 curves (from memory): sea water near 70 - j 35..40 around 6 GHz; fresh water eps' about 77-80 at 1 GHz.
    sea = complex_permittivity("sea-water", 6.0)
    fresh = complex_permittivity("fresh-water", 1.0)
    assert 60 < sea.real < 75 and 25 < -sea.imag < 45
    assert 75 < fresh.real < 81 and -fresh.imag < 10


def test_divergence_factor_limits():
    # D = (1 + 2 d1 d2 / (k a d sin psi))^-1/2 (Beckmann and Spizzichino): 1 on a flat earth, < 1 on a sphere.
    assert float(divergence_factor(10e3, 10e3, 0.01, math.inf)) == 1.0
    expected = (1 + 2 * 10e3 * 10e3 / (4 / 3 * EARTH_RADIUS_M * 20e3 * math.sin(0.01))) ** -0.5
    assert float(divergence_factor(10e3, 10e3, 0.01, 4 / 3)) == pytest.approx(expected)


def test_level_curve_period_matches_the_path_difference_formula():
    # A calm lake (flat facet at 0 m) under a 40 km path at 6 GHz: nulls of the level curve fall where
    # the reflected ray's phase is a whole number of turns (Delta = n lambda, with the coefficient's
    # 180 degrees), so consecutive nulls differ by one wavelength of Delta; Delta itself matches
    # 2 h1' h2' / d with h' = h - d^2 / (2 k a).
    d, ha, hb, f = 40_000.0, 120.0, 60.0, 6.0
    lam = float(wavelength_m(f))
    facet = {"intercept_m": 0.0, "slope": 0.0, "start_m": 1.0, "end_m": d - 1.0, "roughness_m": 0.0}
    u = np.linspace(0.0, 2.0, 20_001)
    curve = facet_curve(d, ha, hb, f, facet, u, "horizontal", complex_permittivity("fresh-water", f))
    level = curve.level_db
    nulls = [j for j in range(1, u.size - 1) if level[j] < level[j - 1] and level[j] <= level[j + 1]
             and level[j] < -10 and np.isfinite(curve.path_difference_m[j])]
    assert len(nulls) >= 3
    steps = np.diff(curve.path_difference_m[nulls])
    assert np.allclose(np.abs(steps), lam, rtol=0.02)
    turns = curve.path_difference_m[nulls] / lam
    assert np.allclose(turns, np.round(turns), atol=0.02)
    j = int(np.argmin(np.abs(u - 0.75)))  # k = 4/3
    d1 = float(reflection_point_m(ha, hb, d, 4 / 3))
    h1e = ha - d1**2 / (2 * 4 / 3 * EARTH_RADIUS_M)
    h2e = hb - (d - d1) ** 2 / (2 * 4 / 3 * EARTH_RADIUS_M)
    assert curve.path_difference_m[j] == pytest.approx(2 * h1e * h2e / d, rel=0.01)


def test_diversity_spacing_moves_the_pattern_half_a_period():
    # lambda d / (4 h1): raising antenna b by it changes the flat-earth path difference by lambda / 2.
    d, h1, h2, f = 30_000.0, 80.0, 40.0, 6.0
    lam = float(wavelength_m(f))
    s = float(diversity_spacing_m(h1, d, f))

    def delta(hb: float) -> float:
        return math.hypot(d, h1 + hb) - math.hypot(d, h1 - hb)  # image method, flat earth

    assert delta(h2 + s) - delta(h2) == pytest.approx(lam / 2, rel=1e-3)
    # Over a two-ray pattern with an ideal coefficient -1 the level goes from a peak to a null in that step.
    peak = 3.0 * lam / 2  # Delta at a peak (odd half-wavelengths with -1)
    assert float(two_ray_level_db(-1.0, peak, f)) == pytest.approx(20 * math.log10(2))
    assert float(two_ray_level_db(-1.0, peak + lam / 2, f)) == -60.0


def test_space_diversity_improvement_as_printed():
    # ITU-R P.530-17 s. 6.2.1 (from memory): I0 = [1 - exp(-0.04 S^0.87 f^-0.12 d^0.48 p0^-1.04)] 10^((A - V)/10);
    # the equation evaluated by hand for S = 10 m, f = 6 GHz, d = 50 km, p0 = 5 %, A = 30 dB, V = 0.
    by_hand = (1 - math.exp(-0.04 * 10**0.87 * 6**-0.12 * 50**0.48 * 5**-1.04)) * 10**3.0
    assert float(space_diversity_improvement(10.0, 6.0, 50.0, 5.0, 30.0)) == pytest.approx(by_hand)
    assert 100 < by_hand < 1000  # a typical improvement of two to three orders
