"""Where a ray reflects: the specular point on a smooth sphere (the cubic) and on a tilted facet.

Part of :mod:`profiler.reflection` (the cubic's source in its docstring).  The
earth is drawn flat with the terrain raised by the bulge of an earth of radius
k x 6371 km, so rays are straight lines; a facet is the line y = c0 + g x plus
that bulge, and the specular point is where the grazing angles seen from the
two antennas are equal (small angles).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from ..units import EARTH_RADIUS_M

__all__ = [
    "reflection_point_cubic_coefficients", "reflection_point_m", "bulge_m", "bulge_slope", "grazing_angles",
    "grazing_angles_inv",
]

def reflection_point_cubic_coefficients(h1_m: float, h2_m: float, d_m: float, k: float) -> tuple[float, ...]:
    """Coefficients (highest power first) of the cubic in d1: 2 d1^3 - 3 d d1^2 + (d^2 - 2 ka (h1+h2)) d1 + 2 ka h1 d."""
    ae = k * EARTH_RADIUS_M
    return (2.0, -3.0 * d_m, d_m * d_m - 2.0 * ae * (h1_m + h2_m), 2.0 * ae * h1_m * d_m)


def reflection_point_m(h1_m: ArrayLike, h2_m: ArrayLike, d_m: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Distance from end 1 of the specular point on a smooth sphere of radius k a, m (NaN where none).

    h1, h2: antenna heights above the reflecting surface at the ends; the
    trigonometric solution of the textbook cubic (module docstring); k = inf
    gives the flat-earth point d h1 / (h1 + h2).  NaN where a ray would meet
    the sphere before the point (no line of sight over the smooth surface).
    """
    h1 = np.asarray(h1_m, dtype=float)
    h2 = np.asarray(h2_m, dtype=float)
    d = np.asarray(d_m, dtype=float)
    ae = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    h1, h2, d, ae = np.broadcast_arrays(h1, h2, d, ae)
    out = np.full(h1.shape, np.nan)
    ok = (h1 > 0) & (h2 > 0) & (d > 0)
    hs = np.where(ok, h1 + h2, 1.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        m = np.where(np.isinf(ae), 0.0, d * d / (4.0 * ae * hs))
        c = (h1 - h2) / hs
        flat = m < 1e-9
        mm = np.where(flat, 1.0, m)
        arg = np.clip(1.5 * c * np.sqrt(3.0 * mm / (mm + 1.0) ** 3), -1.0, 1.0)
        b = 2.0 * np.sqrt((mm + 1.0) / (3.0 * mm)) * np.cos(np.pi / 3.0 + np.arccos(arg) / 3.0)
        b = np.where(flat, c, b)
        d1 = d * (1.0 + b) / 2.0
        d2 = d - d1
        h1e = h1 - np.where(np.isinf(ae), 0.0, d1 * d1 / (2.0 * ae))
        h2e = h2 - np.where(np.isinf(ae), 0.0, d2 * d2 / (2.0 * ae))
    good = ok & (h1e > 0) & (h2e > 0) & (d1 > 0) & (d2 > 0)
    out[good] = d1[good]
    return out


def bulge_m(x: np.ndarray, d: np.ndarray, ae: float) -> np.ndarray:
    """Earth bulge x (d - x) / (2 k a) at x along a path of length d, m; 0 for k = infinity (ae = k a, m)."""
    return np.zeros_like(x) if math.isinf(ae) else x * (d - x) / (2.0 * ae)


def bulge_slope(x: np.ndarray, d: np.ndarray, ae: float) -> np.ndarray:
    """Slope of :func:`bulge_m` along the path, (d - 2 x) / (2 k a); 0 for k = infinity."""
    return np.zeros_like(x) if math.isinf(ae) else (d - 2.0 * x) / (2.0 * ae)


def grazing_angles(x, d, ha, hb, c0, g, ae):
    """Grazing angles seen from a and from b on the facet y = c0 + g x + bulge (small angles), rad, and y, m."""
    y = c0 + g * x + bulge_m(x, d, ae)
    t = g + bulge_slope(x, d, ae)
    with np.errstate(divide="ignore", invalid="ignore"):
        psi1 = t + (ha - y) / x
        psi2 = (hb - y) / (d - x) - t
    return psi1, psi2, y


def grazing_angles_inv(x, d, ha, hb, c0, g, inv_ae):
    """As :func:`grazing_angles` with 1/(k a) as an array (0 for k = infinity)."""
    y = c0 + g * x + x * (d - x) * inv_ae / 2.0
    t = g + (d - 2.0 * x) * inv_ae / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return t + (ha - y) / x, (hb - y) / (d - x) - t, y
