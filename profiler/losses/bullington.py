"""Bullington (ITU-R P.526-15 section 4.5.1) and the complete delta-Bullington method
(section 4.5.2) on a :class:`~profiler.losses.path_geometry.PathGeometry`.

Both read per-path reductions of the profile (one pass, no (P, N) temporaries:
:mod:`profiler.losses._bullington_kernels`).  Results are dB of loss in
excess of free space, shape (P,).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._bullington_kernels import bullington_reductions, diffraction_reductions
from .knife_edge import knife_edge_loss_db
from .path_geometry import PathGeometry
from .smooth_earth import GroundConstants, smooth_earth_loss_db

__all__ = ["Reduced", "reduce_profiles", "bullington_from", "bullington_reduced", "delta_bullington"]


@dataclass(frozen=True)
class Reduced:
    """Per-path reductions of a path geometry at its k (see profiler.losses._bullington_kernels)."""

    g: PathGeometry
    stim: np.ndarray
    srim: np.ndarray
    v_max: np.ndarray
    i_max: np.ndarray
    hstd: np.ndarray  # smooth surface (NaN unless asked for)
    hsrd: np.ndarray


def reduce_profiles(g: PathGeometry, smooth: bool) -> Reduced:
    """The reductions of ``g``; with ``smooth`` also the smooth-surface heights."""
    out = diffraction_reductions(g.distance_m, g.surface_m, g.interior, g.antenna_a_amsl_m, g.antenna_b_amsl_m,
                                 g.length_m, g.wavelength_m, g.k, smooth)
    return Reduced(g, *out)


def bullington_from(
    stim: np.ndarray, srim: np.ndarray, v_max: np.ndarray,
    ha: np.ndarray, hb: np.ndarray, d: np.ndarray, lam: np.ndarray,
) -> np.ndarray:
    """Bullington loss (ITU-R P.526-15 section 4.5.1) from the profile's reductions, dB (P,).

    ``stim``, ``srim``: largest slopes from each antenna to the profile; ``v_max``:
    largest v (the line-of-sight case); ha, hb, d, lam in metres, each (P,).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        s_tr = (hb - ha) / d
        # Trans-horizon case: the point where the two horizon rays meet.
        denom = stim + srim
        dbp = (hb - ha + srim * d) / denom
        h_bp = ha + stim * dbp - (ha * (d - dbp) + hb * dbp) / d
        v_b = h_bp * np.sqrt(2.0 * d / (lam * dbp * (d - dbp)))
    nlos = (stim > s_tr) & (denom > 0.0) & np.isfinite(v_b)
    luc = knife_edge_loss_db(np.where(nlos, v_b, v_max))
    return luc + (1.0 - np.exp(-luc / 6.0)) * (10.0 + 0.02 * d / 1000.0)


def bullington_reduced(r: Reduced) -> np.ndarray:
    """Bullington loss of the real profile (Lbulla of section 4.5.2), dB (P,)."""
    g = r.g
    return bullington_from(r.stim, r.srim, r.v_max, g.antenna_a_amsl_m, g.antenna_b_amsl_m, g.length_m,
                           g.wavelength_m)


def delta_bullington(r: Reduced, polarisation: str, ground: str | GroundConstants,
                     l_bulla: np.ndarray | None = None) -> np.ndarray:
    """Complete method Ld = Lbulla + max(Ldsph - Lbulls, 0) (ITU-R P.526-15 section 4.5.2), dB (P,).

    Lbulls is Bullington over the bare smooth earth (bulge only) with the
    antennas at hts = ha - hstd, hrs = hb - hsrd above the smooth surface.
    """
    g = r.g
    if l_bulla is None:
        l_bulla = bullington_reduced(r)
    length, k, lam = g.length_m, g.k, g.wavelength_m
    hts_s = g.antenna_a_amsl_m - r.hstd
    hrs_s = g.antenna_b_amsl_m - r.hsrd
    l_dsph = smooth_earth_loss_db(
        length, hts_s, hrs_s, g.freq_ghz, k, polarisation=polarisation, ground=ground
    )
    # Lbulls >= 0, so where Ldsph is exactly 0 the excess max(Ldsph - Lbulls, 0) is 0 whatever
    # Lbulls is: it is computed only for the other paths (mostly those near or past the horizon).
    l_bulls = np.zeros(l_dsph.shape)
    rows = np.flatnonzero(~(l_dsph == 0.0))
    if rows.size:
        stim, srim, v_max = bullington_reductions(
            g.distance_m[rows], g.interior[rows], hts_s[rows], hrs_s[rows], length[rows], lam[rows], k[rows])
        l_bulls[rows] = bullington_from(stim, srim, v_max, hts_s[rows], hrs_s[rows], length[rows], lam[rows])
    return l_bulla + np.maximum(l_dsph - l_bulls, 0.0)
