"""Deygout and Epstein-Peterson multiple knife-edge methods on a
:class:`~profiler.losses.path_geometry.PathGeometry`.

No Python loop runs over samples or paths: Deygout's sub-paths are masked
maxima over column ranges of (P, N) arrays.  Results are dB of loss in excess
of free space, shape (P,).

Sources: knife-edge parameter v and J(v): ITU-R P.526-15 (10/2019) section 4.1.
Deygout: J. Deygout, "Multiple knife-edge diffraction of microwaves", IEEE
Trans. Antennas Propag. AP-14(4), 1966 (from memory).  Epstein-Peterson:
J. Epstein and D. W. Peterson, "An experimental study of wave propagation at
850 Mc", Proc. IRE 41(5), 1953 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import EARTH_RADIUS_M
from ._deygout_kernels import summit_dips
from .knife_edge import fresnel_kirchhoff_v, knife_edge_loss_db
from .path_geometry import PathGeometry

__all__ = ["EdgeArrays", "DeygoutEdges", "SUMMIT_DIP_F1_FRACTION", "edge_arrays", "deygout_edges",
           "deygout", "epstein_peterson"]

#: J(v) is zero at and below this v (ITU-R P.526-15 section 4.1).
V_NO_LOSS = -0.78
#: Two edges are distinct summits only if the profile between them dips below the
#: lower of the two by at least this fraction of the first Fresnel radius of the
#: side sub-path at the side edge (see :func:`deygout_edges`).
SUMMIT_DIP_F1_FRACTION = 0.6
#: The same threshold as a Fresnel-Kirchhoff v: h / F1 >= 0.6 is v = sqrt(2) h / F1 >= 0.6 sqrt(2)
#: (v = sqrt(2) h / F1: ITU-R P.526-15 section 4.1 with F1 of eq. 2).
_SUMMIT_DIP_V = SUMMIT_DIP_F1_FRACTION * np.sqrt(2.0)


@dataclass(frozen=True)
class EdgeArrays:
    """(P, N) arrays of a path geometry at its k, and (P, 1) columns."""

    d1: np.ndarray  # distance from a, m
    d2: np.ndarray  # distance to b, m
    interior: np.ndarray  # bool, strictly between the ends
    elev: np.ndarray  # surface plus earth bulge at k, m
    height: np.ndarray  # elev above the straight antenna line, m
    v: np.ndarray  # Fresnel-Kirchhoff v, -inf outside interior
    length: np.ndarray  # (P, 1), m
    freq: np.ndarray  # (P, 1), GHz
    lam: np.ndarray  # (P, 1), m


def edge_arrays(g: PathGeometry) -> EdgeArrays:
    """Bulge, height above the antenna line and v at every sample of ``g`` (ITU-R P.526-15 section 4.1)."""
    d1, surface = g.distance_m, g.surface_m
    ha, hb, length, freq, kk = (x[:, None] for x in (g.antenna_a_amsl_m, g.antenna_b_amsl_m, g.length_m,
                                                     g.freq_ghz, g.k))
    d2 = length - d1
    with np.errstate(divide="ignore", invalid="ignore"):
        elev = surface + d1 * d2 / (2.0 * kk * EARTH_RADIUS_M)
        height = elev - (ha + (hb - ha) * d1 / length)
        v = fresnel_kirchhoff_v(height, d1, d2, freq)
    inner = g.interior & (d1 > 0.0) & (d2 > 0.0)
    v = np.where(inner, v, -np.inf)
    return EdgeArrays(d1, d2, inner, elev, height, v, length, freq, g.wavelength_m[:, None])


def _rows(arr: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """Value of each row at column ``idx`` (P,) -> (P, 1)."""
    return np.take_along_axis(arr, idx[:, None], axis=1)


def _masked_argmax(values: np.ndarray, mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Column of the largest value where mask holds, and that value (-inf if none)."""
    masked = np.where(mask, values, -np.inf)
    idx = np.argmax(masked, axis=1)
    return idx, _rows(masked, idx)[:, 0]


@dataclass(frozen=True)
class DeygoutEdges:
    """Main edge (column ``ip``, v ``vp``, height ``hp`` above the antenna line, distance ``dp``)
    and the dominant distinct summit of each side sub-path (``it``/``vt`` on side a,
    ``ir``/``vr`` on side b; v -inf if none), each (P,)."""

    ip: np.ndarray
    vp: np.ndarray
    it: np.ndarray
    vt: np.ndarray
    ir: np.ndarray
    vr: np.ndarray
    hp: np.ndarray
    dp: np.ndarray


def deygout_edges(b: EdgeArrays) -> DeygoutEdges:
    """Main edge, and the dominant distinct summit of each side sub-path (Deygout 1966)."""
    n_cols = b.d1.shape[1]
    cols = np.arange(n_cols)[None, :]
    ip, vp = _masked_argmax(b.v, b.interior)
    hp = _rows(b.height, ip)
    dp = _rows(b.d1, ip)
    ep = _rows(b.elev, ip)
    ipc = ip[:, None]
    # Distinct summits only: the profile between a side edge and the main edge dips below
    # the lower of the two by 0.6 F1 of the side sub-path at the side edge, i.e. dip * (the
    # v factor sqrt(2/lambda (1/d1 + 1/d2)) of that sub-path) >= 0.6 sqrt(2).  The flanks of
    # one rounded summit, and slopes climbing to it, have no such dip; a second ridge beyond
    # a valley keeps its own edge.  Our rule, common practice: Deygout's construction
    # assumes separate edges, and 0.6 F1 is the usual clear-path amount (this tool's
    # default clearance criterion).
    dip = summit_dips(b.elev, ip, ep[:, 0])
    with np.errstate(divide="ignore", invalid="ignore"):
        # Side a: line from antenna a (height 0 above the main line) to the main edge top.
        left_d2 = dp - b.d1
        left_h = b.height - hp * b.d1 / dp
        before = cols < ipc
        left_ok = b.interior & before & (left_d2 > 0.0)
        factor = np.sqrt(2.0 / b.lam * (1.0 / b.d1 + 1.0 / left_d2))
        left_ok &= dip * factor >= _SUMMIT_DIP_V
        it, vt = _masked_argmax(left_h * factor, left_ok)
        # Side b: line from the main edge top to antenna b.
        right_d1 = b.d1 - dp
        right_h = b.height - hp * b.d2 / (b.length - dp)
        after = cols > ipc
        right_ok = b.interior & after & (right_d1 > 0.0)
        factor = np.sqrt(2.0 / b.lam * (1.0 / right_d1 + 1.0 / b.d2))
        right_ok &= dip * factor >= _SUMMIT_DIP_V
        ir, vr = _masked_argmax(right_h * factor, right_ok)
    return DeygoutEdges(ip, vp, it, vt, ir, vr, hp[:, 0], dp[:, 0])


def deygout(p: DeygoutEdges) -> np.ndarray:
    """Deygout with up to three edges; side edges count only if the main edge blocks (v > 0), dB (P,)."""
    blocked = p.vp > 0.0
    sides = knife_edge_loss_db(p.vt) + knife_edge_loss_db(p.vr)
    return knife_edge_loss_db(p.vp) + np.where(blocked, sides, 0.0)


def epstein_peterson(b: EdgeArrays, p: DeygoutEdges) -> np.ndarray:
    """Epstein-Peterson over Deygout's edges: each edge's v against the line joining its neighbours, dB (P,)."""
    blocked = p.vp > 0.0
    use_t = blocked & (p.vt > V_NO_LOSS)
    use_r = blocked & (p.vr > V_NO_LOSS)
    length = b.length[:, 0]
    # Neighbours of the main edge, as (distance from a, height above the main line).
    d_left = np.where(use_t, _rows(b.d1, p.it)[:, 0], 0.0)
    h_left = np.where(use_t, _rows(b.height, p.it)[:, 0], 0.0)
    d_right = np.where(use_r, _rows(b.d1, p.ir)[:, 0], length)
    h_right = np.where(use_r, _rows(b.height, p.ir)[:, 0], 0.0)
    s1 = p.dp - d_left
    s2 = d_right - p.dp
    with np.errstate(divide="ignore", invalid="ignore"):
        h_main = p.hp - (h_left + (h_right - h_left) * s1 / (s1 + s2))
        v_main = fresnel_kirchhoff_v(h_main, s1, s2, b.freq[:, 0])
    v_main = np.where(np.isfinite(p.vp), v_main, -np.inf)
    loss = knife_edge_loss_db(v_main)
    loss = loss + np.where(use_t, knife_edge_loss_db(p.vt), 0.0)
    return loss + np.where(use_r, knife_edge_loss_db(p.vr), 0.0)
