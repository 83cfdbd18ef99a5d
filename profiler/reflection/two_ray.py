"""The two-ray level: direct plus reflected ray, its curve over k, and the space-diversity figures.

Part of :mod:`profiler.reflection` (sources in its docstring): the level of
two rays, the level curve of one facet over 1/k, the antenna spacing that
moves the pattern by half a period and the ITU-R P.530-17 s. 6.2.1 improvement.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ..units import EARTH_RADIUS_M, wavelength_m
from .point import grazing_angles_inv
from .surfaces import divergence_factor, fresnel_coefficient, rayleigh_limit_m, roughness_factor

__all__ = [
    "LEVEL_FLOOR_DB", "DIVERSITY_VALIDITY", "two_ray_level_db", "diversity_spacing_m",
    "space_diversity_improvement", "Curve", "facet_curve", "curve_inverse_k",
]

#: Lowest level change reported, dB (an exact null of two equal rays is -infinity).
LEVEL_FLOOR_DB = -60.0


def two_ray_level_db(coefficient: ArrayLike, path_difference_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Level of direct plus reflected ray relative to the direct ray alone, dB: 20 log10 |1 + G exp(-j 2 pi Delta / lambda)|.

    Both rays are taken with the same antenna gain (both within the main beams,
    the worst case); floored at :data:`LEVEL_FLOOR_DB`.
    """
    g = np.asarray(coefficient, dtype=complex)
    phase = 2.0 * np.pi * np.asarray(path_difference_m, dtype=float) / wavelength_m(freq_ghz)
    mag = np.abs(1.0 + g * np.exp(-1j * phase))
    with np.errstate(divide="ignore"):
        return np.maximum(20.0 * np.log10(mag), LEVEL_FLOOR_DB)


def diversity_spacing_m(h_other_eff_m: ArrayLike, d_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Height change of one antenna that moves the two-ray pattern by half a period, m: lambda d / (4 h_other').

    From Delta = 2 h1' h2' / d (flat-earth two-ray path difference with the
    effective heights over the reflecting plane; common practice).
    """
    with np.errstate(divide="ignore"):
        return wavelength_m(freq_ghz) * np.asarray(d_m, dtype=float) / (4.0 * np.asarray(h_other_eff_m, dtype=float))


#: Validity of the P.530 space-diversity improvement (ITU-R P.530-17 s. 6.2.1, from memory).
DIVERSITY_VALIDITY = {"spacing_m": (3.0, 23.0), "freq_ghz": (2.0, 11.0), "distance_km": (43.0, 240.0)}


def space_diversity_improvement(spacing_m: ArrayLike, freq_ghz: ArrayLike, distance_km: ArrayLike,
                                p0_pct: ArrayLike, fade_depth_db: ArrayLike, gain_difference_db: ArrayLike = 0.0
                                ) -> np.ndarray:
    """Narrow-band space-diversity improvement factor I0 (ITU-R P.530-17 s. 6.2.1, from memory).

    I0 = [1 - exp(-0.04 S^0.87 f^-0.12 d^0.48 p0^-1.04)] 10^((A - V)/10): S vertical
    separation of the receiving antennas m, f GHz, d km, p0 the multipath occurrence
    factor %, A the fade depth dB, V the gain difference of the two antennas dB.
    """
    s = np.asarray(spacing_m, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    d = np.asarray(distance_km, dtype=float)
    p0 = np.asarray(p0_pct, dtype=float)
    a = np.asarray(fade_depth_db, dtype=float)
    v = np.asarray(gain_difference_db, dtype=float)
    return (1.0 - np.exp(-0.04 * s**0.87 * f**-0.12 * d**0.48 * p0**-1.04)) * np.power(10.0, (a - v) / 10.0)


@dataclass(frozen=True)
class Curve:
    """Level change versus k of one path's reflecting facet: 1/k, dB (0 where the facet gives no reflection)."""

    inverse_k: np.ndarray
    level_db: np.ndarray
    path_difference_m: np.ndarray


def facet_curve(d_m: float, ha_m: float, hb_m: float, freq_ghz: float, facet: dict, inverse_k: np.ndarray,
                polarisation: str, permittivity: complex) -> Curve:
    """Two-ray level change over many k for one facet (dict of intercept_m, slope, start_m, end_m, roughness_m).

    The specular point is found on the facet at each k by bisection; where it
    leaves the facet, or the facet is rough at that angle, the level change is 0.
    """
    u = np.asarray(inverse_k, dtype=float)
    inv_ae = u / EARTH_RADIUS_M
    lo = np.full(u.shape, max(facet["start_m"], 1e-3))
    hi = np.full(u.shape, min(facet["end_m"], d_m - 1e-3))
    c0, g = facet["intercept_m"], facet["slope"]
    f_lo = np.subtract(*grazing_angles_inv(lo, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
    f_hi = np.subtract(*grazing_angles_inv(hi, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
    ok = (f_lo >= 0) & (f_hi <= 0)
    for _ in range(48):
        mid = 0.5 * (lo + hi)
        fm = np.subtract(*grazing_angles_inv(mid, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
        lo, hi = np.where(fm >= 0, mid, lo), np.where(fm >= 0, hi, mid)
    xr = 0.5 * (lo + hi)
    p1, p2, yr = grazing_angles_inv(xr, d_m, ha_m, hb_m, c0, g, inv_ae)
    psi = 0.5 * (p1 + p2)
    ok &= (psi > 0) & (facet["roughness_m"] < rayleigh_limit_m(np.maximum(psi, 1e-9), freq_ghz))
    delta = (np.hypot(xr, ha_m - yr) + np.hypot(d_m - xr, hb_m - yr)) - math.hypot(d_m, hb_m - ha_m)
    k = np.where(u > 0, 1.0 / np.where(u > 0, u, 1.0), np.inf)
    G = (fresnel_coefficient(np.maximum(psi, 1e-9), permittivity, polarisation)
         * divergence_factor(xr, d_m - xr, np.maximum(psi, 1e-9), k)
         * roughness_factor(facet["roughness_m"], np.maximum(psi, 1e-9), freq_ghz))
    level = np.where(ok, two_ray_level_db(G, delta, freq_ghz), 0.0)
    return Curve(u, level, np.where(ok, delta, np.nan))


def curve_inverse_k(d_m: float, h1_eff_m: float, h2_eff_m: float, d1_m: float, freq_ghz: float,
                    k_min: float, k_max: float) -> np.ndarray:
    """1/k values of the level curve: 0 (k infinite), then [1/k_max, 1/k_min] with at least 12 points a period.

    The period in 1/k follows from dDelta/d(1/k) = (h2' d1^2 + h1' d2^2) / (a d)
    (derivative of Delta = 2 h1' h2' / d with h' = h - d^2 k^-1 / (2 a)); between 101 and 4001 points.
    """
    d2 = d_m - d1_m
    rate = max((h2_eff_m * d1_m**2 + h1_eff_m * d2**2) / (EARTH_RADIUS_M * d_m), 1e-12)
    period = float(wavelength_m(freq_ghz)) / rate
    u0, u1 = 1.0 / k_max, 1.0 / k_min
    n = int(np.clip(math.ceil((u1 - u0) / (period / 12.0)) + 1, 101, 4001))
    return np.concatenate([[0.0], np.linspace(u0, u1, n)])
