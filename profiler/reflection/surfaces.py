"""Reflecting surfaces: their electrical constants and the Fresnel, divergence and roughness factors.

Part of :mod:`profiler.reflection` (sources in its docstring): ground constants
read from ITU-R P.527 curves, water through a Debye model, the Fresnel
coefficients of a smooth plane, the divergence factor of the curved earth and
the roughness reduction of the specular field.  Pure, batch first.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError
from ..units import EARTH_RADIUS_M, wavelength_m

__all__ = [
    "WATER_TYPES", "SURFACE_TYPES", "SMOOTH_EARTH_GROUND", "resolve_surface", "water_type_for",
    "complex_permittivity", "fresnel_coefficient", "brewster_grazing_angle_rad", "divergence_factor",
    "roughness_factor", "rayleigh_limit_m",
]

#: Water surfaces (reflection from a water layer or sea level uses one of these).
WATER_TYPES = ("sea-water", "fresh-water")

#: Ground types of ``--ground`` for reflections: (relative permittivity, conductivity S/m) for the
#: ground types, None for water (Debye model, :func:`complex_permittivity`).  ITU-R P.527-3 Table 1
#: (from memory: wet ground 30 and 0.15 S/m, medium dry 15 and 0.035 S/m near 1-3 GHz); "land" keeps
#: the average ground of ITU-R P.452-17 s. 4.2.2.1 (22, 0.003 S/m) that delta-Bullington uses.
SURFACE_TYPES: dict[str, tuple[float, float] | None] = {
    "land": (22.0, 0.003),
    "sea": None,  # sea water
    "sea-water": None,
    "fresh-water": None,
    "wet-ground": (30.0, 0.15),
    "dry-ground": (15.0, 0.035),
}

#: What each ``--ground`` name gives the smooth-earth part of delta-Bullington (ITU-R P.452-17
#: s. 4.2.2.1 land and sea; new names mapped to the nearer of the two: water to sea, ground to land).
SMOOTH_EARTH_GROUND = {"land": "land", "sea": "sea", "sea-water": "sea", "fresh-water": "sea",
                       "wet-ground": "land", "dry-ground": "land"}

#: Debye parameters of water at 20 degC: static and high-frequency permittivity, relaxation
#: frequency GHz, ionic conductivity S/m (from memory; sea water of salinity 35 g/kg).
_DEBYE = {"sea-water": (72.0, 4.9, 17.0, 4.8), "fresh-water": (80.1, 4.9, 17.1, 0.01)}
_EPS0 = 8.8541878128e-12


def resolve_surface(name: str) -> str:
    """Normalised ground type for reflections; InputError naming the choices otherwise."""
    key = str(name).strip().lower().replace("_", "-")
    if key not in SURFACE_TYPES:
        raise InputError(f"unknown ground type {name!r}: choose one of {', '.join(SURFACE_TYPES)}",
                         parameter="ground", value_word="TYPE")
    return key


def water_type_for(ground: str) -> str:
    """Water marked on a path: sea water when the ground is sea, else fresh water (our choice, README)."""
    return "sea-water" if resolve_surface(ground) in ("sea", "sea-water") else "fresh-water"


def complex_permittivity(surface: str, freq_ghz: ArrayLike) -> np.ndarray:
    """Complex relative permittivity eps' - j eps'' of a surface at a frequency (ITU-R P.527; see module).

    Ground: eta = eps_r - j 60 lambda sigma (ITU-R P.527-6, from memory), constants fixed with frequency.
    Water: Debye eps_inf + (eps_s - eps_inf) / (1 + j f / f_r) - j sigma / (2 pi f eps0).
    """
    key = resolve_surface(surface)
    f = np.asarray(freq_ghz, dtype=float)
    if key == "sea":
        key = "sea-water"
    constants = SURFACE_TYPES[key]
    if constants is not None:
        eps_r, sigma = constants
        return eps_r - 1j * 60.0 * wavelength_m(f) * sigma
    eps_s, eps_inf, f_r, sigma = _DEBYE[key]
    return eps_inf + (eps_s - eps_inf) / (1.0 + 1j * f / f_r) - 1j * sigma / (2.0 * np.pi * f * 1e9 * _EPS0)


def fresnel_coefficient(grazing_rad: ArrayLike, permittivity: ArrayLike, polarisation: str) -> np.ndarray:
    """Complex Fresnel reflection coefficient of a smooth plane surface at a grazing angle.

    Horizontal: (sin psi - sqrt(eta - cos^2 psi)) / (sin psi + sqrt(eta - cos^2 psi));
    vertical: (eta sin psi - sqrt(eta - cos^2 psi)) / (eta sin psi + sqrt(eta - cos^2 psi))
    (ITU-R P.2040-1 s. 2.2.1 / P.527 form, from memory).  Tends to -1 at grazing for both.
    """
    from ..losses.smooth_earth import resolve_polarisation

    psi = np.asarray(grazing_rad, dtype=float)
    eta = np.asarray(permittivity, dtype=complex)
    s, c = np.sin(psi), np.cos(psi)
    root = np.sqrt(eta - c * c)
    if resolve_polarisation(polarisation) == "horizontal":
        return (s - root) / (s + root)
    return (eta * s - root) / (eta * s + root)


def brewster_grazing_angle_rad(relative_permittivity: ArrayLike) -> np.ndarray:
    """Grazing angle of the Brewster minimum for a lossless dielectric: atan(1 / sqrt(eps_r)).

    (Measured from the normal this is atan(sqrt(eps_r)).)  For a lossy surface
    the vertical coefficient has a non-zero minimum near this angle.
    """
    return np.arctan(1.0 / np.sqrt(np.asarray(relative_permittivity, dtype=float)))


def divergence_factor(d1_m: ArrayLike, d2_m: ArrayLike, grazing_rad: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Divergence factor of a sphere of radius k a: (1 + 2 d1 d2 / (k a d sin psi))^-1/2 (Beckmann-Spizzichino)."""
    d1 = np.asarray(d1_m, dtype=float)
    d2 = np.asarray(d2_m, dtype=float)
    ae = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    s = np.sin(np.asarray(grazing_rad, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore"):
        term = np.where(np.isinf(ae), 0.0, 2.0 * d1 * d2 / (ae * (d1 + d2) * s))
    return 1.0 / np.sqrt(1.0 + term)


def roughness_factor(sigma_h_m: ArrayLike, grazing_rad: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Specular reduction of a Gaussian rough surface: exp(-8 (pi sigma_h sin psi / lambda)^2) (Ament)."""
    g = np.pi * np.asarray(sigma_h_m, dtype=float) * np.sin(np.asarray(grazing_rad, dtype=float)) / wavelength_m(freq_ghz)
    return np.exp(-8.0 * g * g)


def rayleigh_limit_m(grazing_rad: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Largest RMS height of a surface still smooth by the Rayleigh criterion, lambda / (8 sin psi) (common practice)."""
    with np.errstate(divide="ignore"):
        return wavelength_m(freq_ghz) / (8.0 * np.sin(np.asarray(grazing_rad, dtype=float)))
