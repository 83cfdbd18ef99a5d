"""Knife-edge diffraction (ITU-R P.526-15, section 4.1).

The single-edge building blocks: the Fresnel-Kirchhoff parameter ``v`` and
the loss ``J(v)``.  Terrain methods built on them live beside this module.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..units import wavelength_m

__all__ = ["fresnel_kirchhoff_v", "knife_edge_loss_db", "knife_edge_loss_exact_db"]


def fresnel_kirchhoff_v(
    height_m: ArrayLike, d1_m: ArrayLike, d2_m: ArrayLike, freq_ghz: ArrayLike
) -> np.ndarray:
    """Dimensionless diffraction parameter v of an edge.

    v = h sqrt((2 / lambda) (1/d1 + 1/d2))  (ITU-R P.526-15, eq. 26),
    ``height_m`` the edge height above the straight line between the antennas
    (positive when the edge blocks it), ``d1_m``, ``d2_m`` its distances from
    the two ends.
    """
    h = np.asarray(height_m, dtype=float)
    d1 = np.asarray(d1_m, dtype=float)
    d2 = np.asarray(d2_m, dtype=float)
    lam = wavelength_m(freq_ghz)
    return h * np.sqrt(2.0 / lam * (1.0 / d1 + 1.0 / d2))


def knife_edge_loss_db(v: ArrayLike) -> np.ndarray:
    """Single knife-edge loss J(v) in dB, the approximation of ITU-R P.526-15 eq. 31.

    J(v) = 6.9 + 20 log10(sqrt((v - 0.1)^2 + 1) + v - 0.1) for v > -0.78, else 0.
    """
    v = np.asarray(v, dtype=float)
    t = v - 0.1
    with np.errstate(invalid="ignore", divide="ignore"):
        j = 6.9 + 20.0 * np.log10(np.sqrt(t * t + 1.0) + t)
    return np.where(v > -0.78, j, 0.0)


def knife_edge_loss_exact_db(v: ArrayLike) -> np.ndarray:
    """Single knife-edge loss in dB from the Fresnel integrals (ITU-R P.526-15 eq. 27).

    J(v) = -20 log10( sqrt((1 - C - S)^2 + (C - S)^2) / 2 ), C and S the Fresnel
    integrals of v.  Needs scipy; used as a check of the approximation.
    """
    from scipy.special import fresnel  # lazy: scipy is optional at run time

    s, c = fresnel(np.asarray(v, dtype=float))
    return -20.0 * np.log10(np.sqrt((1.0 - c - s) ** 2 + (c - s) ** 2) / 2.0)
