"""Path geometry: earth bulge at a k-factor, the line between antennas,
Fresnel radii and clearance.

The earth is drawn flat and the terrain raised by the bulge of an earth of
effective radius k x 6371 km; the radio ray is then a straight line.
Heights in metres, distances in metres.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike

from ._clearance_kernels import clearance_reductions
from .units import EARTH_RADIUS_M, wavelength_m

__all__ = [
    "effective_radius_m",
    "earth_bulge_m",
    "fresnel_radius_m",
    "line_height_m",
    "Clearance",
    "clearance",
]


def effective_radius_m(k: ArrayLike) -> np.ndarray:
    """Effective earth radius k x 6371 km, in metres (ITU-R P.453-14, P.526-15 section 2)."""
    return np.asarray(k, dtype=float) * EARTH_RADIUS_M


def earth_bulge_m(d1_m: ArrayLike, d2_m: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Rise of the earth above the chord between the ends, metres.

    h = d1 d2 / (2 k a) (handbook form; d1 d2 / (12.742 k) m with km, a = 6371 km).
    """
    return np.asarray(d1_m, dtype=float) * np.asarray(d2_m, dtype=float) / (
        2.0 * effective_radius_m(k)
    )


def fresnel_radius_m(
    d1_m: ArrayLike, d2_m: ArrayLike, freq_ghz: ArrayLike, zone: int = 1
) -> np.ndarray:
    """Radius of the n-th Fresnel zone, metres.

    R_n = sqrt(n lambda d1 d2 / (d1 + d2)) (ITU-R P.526-15 eq. 2; P.530-17
    writes F1 = 17.3 sqrt(d1 d2 / (f d)) with km and GHz).
    """
    d1 = np.asarray(d1_m, dtype=float)
    d2 = np.asarray(d2_m, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        r2 = zone * wavelength_m(freq_ghz) * d1 * d2 / (d1 + d2)
    return np.sqrt(np.where(d1 + d2 > 0, r2, 0.0))


def line_height_m(
    distance_m: ArrayLike, length_m: ArrayLike, height_a_m: ArrayLike, height_b_m: ArrayLike
) -> np.ndarray:
    """Height of the straight line from antenna a to antenna b at each distance."""
    d = np.asarray(distance_m, dtype=float)
    length = np.asarray(length_m, dtype=float)[..., None]
    ha = np.asarray(height_a_m, dtype=float)[..., None]
    hb = np.asarray(height_b_m, dtype=float)[..., None]
    return ha + (hb - ha) * d / length


@dataclass(frozen=True)
class Clearance:
    """Clearance of many paths at one k-factor.

    Arrays of shape (paths, samples), made on first use: ``bulge_m``,
    ``line_m``, ``f1_m``, ``clearance_m`` (line minus surface-plus-bulge;
    negative when blocked), ``f1_fraction``.  Arrays of shape (paths,): the
    worst interior point, and ``shortfall_m`` (the largest c F1 - clearance
    over the interior samples, for the fraction c asked of :func:`clearance`;
    None if none was asked).
    """

    k: float
    worst_index: np.ndarray
    worst_f1_fraction: np.ndarray
    worst_clearance_m: np.ndarray
    worst_distance_m: np.ndarray
    line_of_sight: np.ndarray
    shortfall_m: np.ndarray | None = None
    _inputs: tuple = field(default=(), repr=False, compare=False)

    @cached_property
    def _arrays(self) -> dict[str, np.ndarray]:
        return _clearance_arrays(*self._inputs)

    @property
    def bulge_m(self) -> np.ndarray:
        return self._arrays["bulge"]

    @property
    def line_m(self) -> np.ndarray:
        return self._arrays["line"]

    @property
    def f1_m(self) -> np.ndarray:
        return self._arrays["f1"]

    @property
    def clearance_m(self) -> np.ndarray:
        return self._arrays["gap"]

    @property
    def f1_fraction(self) -> np.ndarray:
        return self._arrays["frac"]


def _clearance_arrays(
    distance_m: np.ndarray, surface_m: np.ndarray, interior: np.ndarray, length_m: np.ndarray,
    antenna_a_amsl_m: ArrayLike, antenna_b_amsl_m: ArrayLike, freq_ghz: ArrayLike, k: float,
) -> dict[str, np.ndarray]:
    """Bulge, line, F1, clearance and its fraction of F1 at every sample (see :func:`clearance`)."""
    d1 = distance_m
    d2 = np.maximum(np.asarray(length_m, dtype=float)[:, None] - d1, 0.0)
    bulge = earth_bulge_m(d1, d2, k)
    line = line_height_m(d1, length_m, antenna_a_amsl_m, antenna_b_amsl_m)
    f_arr = np.asarray(freq_ghz, dtype=float)
    f1 = fresnel_radius_m(d1, d2, f_arr[:, None] if f_arr.ndim else f_arr)
    gap = line - (surface_m + bulge)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(interior, gap / np.where(f1 > 0, f1, np.nan), np.inf)
    return {"bulge": bulge, "line": line, "f1": f1, "gap": gap, "frac": frac}


def clearance(
    distance_m: np.ndarray,
    surface_m: np.ndarray,
    interior: np.ndarray,
    length_m: np.ndarray,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: float,
    shortfall_f1_fraction: float | None = None,
) -> Clearance:
    """Clearance of the first Fresnel zone along many paths at one k-factor.

    The worst point is the interior sample with the smallest clearance as a
    fraction of the first Fresnel radius; the path is line of sight when every
    interior sample lies strictly below the line.  With ``shortfall_f1_fraction``
    c, also the largest c F1 - clearance over the interior (the equal rise of
    both antennas that gives c F1 everywhere, when positive).  Large batches
    take one compiled pass (same bits); the full arrays are made on first use.
    """
    inputs = (distance_m, surface_m, interior, length_m, antenna_a_amsl_m, antenna_b_amsl_m, freq_ghz, k)
    n_paths = distance_m.shape[0]
    ha = np.broadcast_to(np.asarray(antenna_a_amsl_m, dtype=float), (n_paths,))
    hb = np.broadcast_to(np.asarray(antenna_b_amsl_m, dtype=float), (n_paths,))
    lam = np.broadcast_to(wavelength_m(np.asarray(freq_ghz, dtype=float)), (n_paths,))
    reduced = clearance_reductions(
        distance_m, surface_m, interior, np.asarray(length_m, dtype=float), ha, hb, lam,
        float(2.0 * effective_radius_m(k)), shortfall_f1_fraction,
    )
    if reduced is None:  # small batch: from the full arrays
        arr = _clearance_arrays(*inputs)
        frac, gap = arr["frac"], arr["gap"]
        worst = np.argmin(np.where(np.isnan(frac), np.inf, frac), axis=1)
        rows = np.arange(n_paths)
        shortfall = None
        if shortfall_f1_fraction is not None:
            shortfall = np.max(np.where(interior, shortfall_f1_fraction * arr["f1"] - gap, -np.inf), axis=1)
        c = Clearance(
            k=float(k),
            worst_index=worst,
            worst_f1_fraction=frac[rows, worst],
            worst_clearance_m=gap[rows, worst],
            worst_distance_m=distance_m[rows, worst],
            line_of_sight=np.min(np.where(interior, gap, np.inf), axis=1) > 0.0,
            shortfall_m=shortfall,
            _inputs=inputs,
        )
        c.__dict__["_arrays"] = arr  # made already
        return c
    worst, worst_frac, worst_gap, los, shortfall = reduced
    return Clearance(
        k=float(k),
        worst_index=worst,
        worst_f1_fraction=worst_frac,
        worst_clearance_m=worst_gap,
        worst_distance_m=distance_m[np.arange(n_paths), worst],
        line_of_sight=los,
        shortfall_m=shortfall if shortfall_f1_fraction is not None else None,
        _inputs=inputs,
    )
