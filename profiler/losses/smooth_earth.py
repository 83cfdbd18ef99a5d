"""Diffraction over a smooth spherical earth (ITU-R P.526-15, section 3).

Array functions for many paths at once.  Heights are antenna heights above
the smooth surface in metres, distances in metres, the earth radius is the
effective radius ``k * 6371 km``.  The formulas are written in the mixed
units of the Recommendation (km, m, GHz) internally and converted at the
boundary.

Sources
-------
* ITU-R P.526-15 (10/2019), section 3.1.1: the first-term residue series
  (functions F(X) and G(Y), surface admittance K, weight beta), here in its
  GHz form as written in ITU-R P.452-17 section 4.2.2.1.
* ITU-R P.526-15, section 3.2: loss at any distance, with the interpolation
  inside the radio horizon (modified effective radius ``aem``, required
  clearance ``hreq``).
* Ground constants: ITU-R P.452-17 section 4.2.2.1 uses relative permittivity
  22 and conductivity 0.003 S/m for land, 80 and 5 S/m for sea (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError
from ..units import EARTH_RADIUS_M, wavelength_m

__all__ = [
    "GroundConstants",
    "GROUND_TYPES",
    "POLARISATIONS",
    "resolve_ground",
    "resolve_polarisation",
    "surface_admittance_k",
    "first_term_loss_db",
    "smooth_earth_loss_db",
    "radio_horizon_m",
]


@dataclass(frozen=True)
class GroundConstants:
    """Electrical constants of the ground: relative permittivity and conductivity (S/m)."""

    relative_permittivity: float
    conductivity_s_per_m: float

    def __post_init__(self) -> None:
        if not self.relative_permittivity >= 1.0:
            raise InputError(
                f"ground relative permittivity must be at least 1: got {self.relative_permittivity!r}"
            )
        if not self.conductivity_s_per_m >= 0.0:
            raise InputError(
                f"ground conductivity must be zero or positive (S/m): got {self.conductivity_s_per_m!r}"
            )


#: Named ground types (ITU-R P.452-17 section 4.2.2.1, from memory).
GROUND_TYPES: dict[str, GroundConstants] = {
    "land": GroundConstants(22.0, 0.003),
    "sea": GroundConstants(80.0, 5.0),
}
# The reflection ground types (profiler.reflection) map to the nearer of the two: water to sea, ground to land.
GROUND_TYPES.update({"sea-water": GROUND_TYPES["sea"], "fresh-water": GROUND_TYPES["sea"],
                     "wet-ground": GROUND_TYPES["land"], "dry-ground": GROUND_TYPES["land"]})

#: Polarisations accepted by the first-term formula.
POLARISATIONS: tuple[str, ...] = ("horizontal", "vertical")


def resolve_ground(ground: str | GroundConstants) -> GroundConstants:
    """Ground constants from a name in :data:`GROUND_TYPES` or a :class:`GroundConstants`."""
    if isinstance(ground, GroundConstants):
        return ground
    try:
        return GROUND_TYPES[str(ground).strip().lower()]
    except KeyError:
        raise InputError(
            f"unknown ground type {ground!r}: choose one of {', '.join(GROUND_TYPES)}"
        ) from None


def resolve_polarisation(polarisation: str) -> str:
    """Normalised polarisation name; raises InputError for anything else."""
    name = str(polarisation).strip().lower()
    aliases = {"h": "horizontal", "v": "vertical"}
    name = aliases.get(name, name)
    if name not in POLARISATIONS:
        raise InputError(
            f"unknown polarisation {polarisation!r}: choose one of {', '.join(POLARISATIONS)}"
        )
    return name


def surface_admittance_k(
    effective_radius_km: ArrayLike,
    freq_ghz: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> np.ndarray:
    """Normalised surface admittance K (dimensionless).

    KH = 0.036 (ae f)^(-1/3) [(er - 1)^2 + (18 s / f)^2]^(-1/4),
    KV = KH [er^2 + (18 s / f)^2]^(1/2), ae in km, f in GHz
    (ITU-R P.526-15 section 3.1.1; GHz form as in ITU-R P.452-17 section 4.2.2.1).
    """
    g = resolve_ground(ground)
    pol = resolve_polarisation(polarisation)
    ae = np.asarray(effective_radius_km, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    er = g.relative_permittivity
    x = 18.0 * g.conductivity_s_per_m / f
    k_h = 0.036 * (ae * f) ** (-1.0 / 3.0) * ((er - 1.0) ** 2 + x * x) ** (-0.25)
    if pol == "horizontal":
        return k_h
    return k_h * np.sqrt(er * er + x * x)


def _height_gain_db(y: np.ndarray, beta: np.ndarray, k_adm: np.ndarray) -> np.ndarray:
    """Height-gain G(Y) in dB, floored at 2 + 20 log10 K (ITU-R P.526-15 section 3.1.1)."""
    b = beta * y
    with np.errstate(divide="ignore", invalid="ignore"):
        high = 17.6 * np.sqrt(np.maximum(b - 1.1, 0.0)) - 5.0 * np.log10(np.maximum(b - 1.1, 1e-300)) - 8.0
        low = 20.0 * np.log10(b + 0.1 * b**3)
        g = np.where(b > 2.0, high, low)
        floor = 2.0 + 20.0 * np.log10(k_adm)
    return np.maximum(g, floor)


def _distance_term_db(x: np.ndarray) -> np.ndarray:
    """Distance term F(X) in dB (ITU-R P.526-15 section 3.1.1)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        far = 11.0 + 10.0 * np.log10(x) - 17.6 * x
        near = -20.0 * np.log10(x) - 5.6488 * x**1.425
    return np.where(x >= 1.6, far, near)


def _first_term_km(
    d_km: np.ndarray,
    hte_m: np.ndarray,
    hre_m: np.ndarray,
    f_ghz: np.ndarray,
    ae_km: np.ndarray,
    polarisation: str,
    ground: GroundConstants,
) -> np.ndarray:
    """First-term loss in dB, mixed units (see :func:`first_term_loss_db`)."""
    k_adm = surface_admittance_k(ae_km, f_ghz, polarisation=polarisation, ground=ground)
    k2 = k_adm * k_adm
    k4 = k2 * k2
    beta = (1.0 + 1.6 * k2 + 0.67 * k4) / (1.0 + 4.5 * k2 + 1.53 * k4)
    x = 21.88 * beta * (f_ghz / ae_km**2) ** (1.0 / 3.0) * d_km
    y_scale = 0.9575 * beta * (f_ghz**2 / ae_km) ** (1.0 / 3.0)
    y_t = y_scale * hte_m
    y_r = y_scale * hre_m
    return -_distance_term_db(x) - _height_gain_db(y_t, beta, k_adm) - _height_gain_db(y_r, beta, k_adm)


def first_term_loss_db(
    distance_m: ArrayLike,
    height_a_m: ArrayLike,
    height_b_m: ArrayLike,
    freq_ghz: ArrayLike,
    effective_radius_m: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> np.ndarray:
    """Smooth-earth diffraction loss by the first term of the residue series, dB.

    Ldft = -F(X) - G(Ya) - G(Yb), X = 21.88 beta (f / ae^2)^(1/3) d,
    Y = 0.9575 beta (f^2 / ae)^(1/3) h (d, ae in km, h in m, f in GHz;
    ITU-R P.526-15 section 3.1.1, GHz form as in ITU-R P.452-17 section 4.2.2.1).
    Heights are above the smooth surface.  May be negative inside the horizon.
    """
    g = resolve_ground(ground)
    pol = resolve_polarisation(polarisation)
    d_km = np.asarray(distance_m, dtype=float) / 1000.0
    ae_km = np.asarray(effective_radius_m, dtype=float) / 1000.0
    hte = np.asarray(height_a_m, dtype=float)
    hre = np.asarray(height_b_m, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    return _first_term_km(d_km, hte, hre, f, ae_km, pol, g)


def radio_horizon_m(height_a_m: ArrayLike, height_b_m: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Smooth-earth line-of-sight distance, m: sqrt(2 ae)(sqrt(ha) + sqrt(hb)) (ITU-R P.526-15 section 3.2)."""
    ae = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    ha = np.maximum(np.asarray(height_a_m, dtype=float), 0.0)
    hb = np.maximum(np.asarray(height_b_m, dtype=float), 0.0)
    return np.sqrt(2.0 * ae) * (np.sqrt(ha) + np.sqrt(hb))


def smooth_earth_loss_db(
    distance_m: ArrayLike,
    height_a_m: ArrayLike,
    height_b_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> np.ndarray:
    """Spherical-earth diffraction loss at any distance, dB (never negative).

    ITU-R P.526-15 section 3.2: beyond the radio horizon dlos the first-term
    loss with ae = k * 6371 km; inside it, zero when the ray clears the
    surface by more than hreq = 17.456 sqrt(d1 d2 lambda / d), otherwise
    (1 - h/hreq) times the first-term loss with the modified radius
    aem = 500 (d / (sqrt(ha) + sqrt(hb)))^2.  Heights are antenna heights
    above the smooth surface, m; ``k`` may be ``inf`` (flat earth: loss 0
    unless the antennas sit on the surface).
    """
    g = resolve_ground(ground)
    pol = resolve_polarisation(polarisation)
    d_m = np.asarray(distance_m, dtype=float)
    hte = np.maximum(np.asarray(height_a_m, dtype=float), 0.0)
    hre = np.maximum(np.asarray(height_b_m, dtype=float), 0.0)
    f = np.asarray(freq_ghz, dtype=float)
    kk = np.asarray(k, dtype=float)
    d_m, hte, hre, f, kk = np.broadcast_arrays(d_m, hte, hre, f, kk)
    d = d_m / 1000.0
    ae = kk * (EARTH_RADIUS_M / 1000.0)
    lam = wavelength_m(f)

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        dlos = np.sqrt(2.0 * ae) * (np.sqrt(0.001 * hte) + np.sqrt(0.001 * hre))
        beyond = d >= dlos
        loss_beyond = _first_term_km(d, hte, hre, f, ae, pol, g)

        hsum = np.maximum(hte + hre, 1e-9)
        c = (hte - hre) / hsum
        m = np.maximum(250.0 * d * d / (ae * hsum), 1e-12)
        arg = np.clip(1.5 * c * np.sqrt(3.0 * m / (m + 1.0) ** 3), -1.0, 1.0)
        b = 2.0 * np.sqrt((m + 1.0) / (3.0 * m)) * np.cos(np.pi / 3.0 + np.arccos(arg) / 3.0)
        dse1 = d * (1.0 + b) / 2.0
        dse2 = d - dse1
        hse = ((hte - 500.0 * dse1**2 / ae) * dse2 + (hre - 500.0 * dse2**2 / ae) * dse1) / d
        hreq = 17.456 * np.sqrt(np.maximum(dse1 * dse2, 0.0) * lam / d)
        root_sum = np.maximum(np.sqrt(hte) + np.sqrt(hre), 1e-9)
        aem = 500.0 * (d / root_sum) ** 2
        loss_aem = _first_term_km(d, hte, hre, f, aem, pol, g)
        loss_inside = np.where(
            hse > hreq, 0.0, (1.0 - hse / np.where(hreq > 0, hreq, 1.0)) * np.maximum(loss_aem, 0.0)
        )
        loss = np.where(beyond, loss_beyond, loss_inside)
    loss = np.where(d > 0.0, loss, 0.0)
    return np.maximum(loss, 0.0)
