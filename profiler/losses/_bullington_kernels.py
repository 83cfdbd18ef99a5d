"""Kernel of the Bullington family: one pass over each profile at one k-factor.

One reduction serves Bullington, the knife-edge method and both Bullington
terms of delta-Bullington: the largest slopes from each antenna, the largest
Fresnel-Kirchhoff v and its column, and, when asked, the smooth-surface
heights of ITU-R P.526-15 section 4.5.2.  The compiled loop sits beside its
numpy twin (same arithmetic, same order, same bits); the rule that picks one
is :func:`profiler._compiled.use_numba`.  Pure functions, no I/O.
"""

from __future__ import annotations

import numpy as np

from .._compiled import twin
from ..units import EARTH_RADIUS_M

__all__ = ["diffraction_reductions", "diffraction_reductions_numpy", "bullington_reductions",
           "bullington_reductions_numpy", "smooth_heights_numpy"]


def bullington_reductions_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray, radius: float = EARTH_RADIUS_M,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Bullington reductions of profiles at one k-factor: ``stim``, ``srim``, ``v_max``, ``i_max``, each (P,).

    Inputs: ``d1``, ``surface`` (m, no bulge), ``interior`` (P, N); ``ha``,
    ``hb``, ``length``, ``lam`` (m) and ``k`` (P,); ``radius`` the earth's, m.
    Over the interior samples with 0 < d1 < d (d2 = d - d1), with
    elev = surface + d1 d2 / (2 k a) and h = elev - (ha + (hb - ha) d1 / d):

    * ``stim`` = max (elev - ha) / d1, ``srim`` = max (elev - hb) / d2: the
      Bullington slopes (ITU-R P.526-15 section 4.5.1);
    * ``v_max`` = max v, v = h sqrt(2 / lam (1/d1 + 1/d2)) (ITU-R P.526-15
      eq. 26; equal to Bullington's h sqrt(2 d / (lam d1 d2)) as d1 + d2 = d),
      and ``i_max`` its first column (0 if none).

    Maxima over no sample are -inf.  Each quotient by d1, d2, d or 2 k a is a
    product with its reciprocal, exactly as in the compiled twin (same bits).
    """
    ha_, hb_, len_, lam_, k_ = (np.asarray(x, dtype=float)[:, None] for x in (ha, hb, length, lam, k))
    d2 = len_ - d1
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_den = 1.0 / (2.0 * k_ * radius)
        slope = (hb_ - ha_) * (1.0 / len_)
        inv1 = 1.0 / d1
        inv2 = 1.0 / d2
        elev = surface + d1 * d2 * inv_den
        height = elev - (ha_ + d1 * slope)
        inner = interior & (d1 > 0.0) & (d2 > 0.0)
        v = np.where(inner, height * np.sqrt(2.0 / lam_ * (inv1 + inv2)), -np.inf)
        i_max = np.argmax(v, axis=1)
        v_max = v.max(axis=1)
        stim = np.where(inner, (elev - ha_) * inv1, -np.inf).max(axis=1)
        srim = np.where(inner, (elev - hb_) * inv2, -np.inf).max(axis=1)
    return stim, srim, v_max, i_max


def _sum_left_to_right(terms: np.ndarray) -> np.ndarray:
    """Row sums added strictly left to right (np.sum adds pairwise: other last bits)."""
    if terms.shape[1] == 0:
        return np.zeros(terms.shape[0])
    return np.cumsum(terms, axis=1)[:, -1]


def smooth_heights_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Smooth-surface heights hstd, hsrd at a and b (ITU-R P.526-15 section 4.5.2), m, each (P,).

    Least-squares line through the surface (no bulge) from the sums v1, v2
    (hst = (2 v1 d - v2) / d^2, hsr = (v2 - v1 d) / d^2), lowered under the
    highest obstacle hobs above the antenna line in the ratio of aobt to aobr
    when hobs > 0, capped at the ground at each end.
    """
    ha_, hb_, len_ = (np.asarray(x, dtype=float)[:, None] for x in (ha, hb, length))
    d2 = len_ - d1
    h = surface
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_d = 1.0 / len_
        inner = interior & (d1 > 0.0) & (d2 > 0.0)
        step = d1[:, 1:] - d1[:, :-1]
        t1 = step * (h[:, 1:] + h[:, :-1])
        t2 = step * (h[:, 1:] * (2.0 * d1[:, 1:] + d1[:, :-1]) + h[:, :-1] * (d1[:, 1:] + 2.0 * d1[:, :-1]))
        obst = h - (ha_ * d2 + hb_ * d1) * inv_d
        hobs = np.where(inner, obst, -np.inf).max(axis=1)
        aobt = np.where(inner, obst * (1.0 / d1), -np.inf).max(axis=1)
        aobr = np.where(inner, obst * (1.0 / d2), -np.inf).max(axis=1)
    v1 = _sum_left_to_right(t1)
    v2 = _sum_left_to_right(t2)
    d = np.asarray(length, dtype=float)
    hst = (2.0 * v1 * d - v2) / (d * d)
    hsr = (v2 - v1 * d) / (d * d)
    with np.errstate(divide="ignore", invalid="ignore"):
        share_t = aobt / (aobt + aobr)
    lower = hobs > 0.0
    hst = np.where(lower, hst - hobs * share_t, hst)
    hsr = np.where(lower, hsr - hobs * (1.0 - share_t), hsr)
    return np.minimum(hst, surface[:, 0]), np.minimum(hsr, surface[:, -1])


def diffraction_reductions_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray, radius: float = EARTH_RADIUS_M, smooth: bool = True,
) -> tuple[np.ndarray, ...]:
    """``stim``, ``srim``, ``v_max``, ``i_max`` (:func:`bullington_reductions_numpy`) and, with
    ``smooth``, the smooth-surface heights ``hstd``, ``hsrd`` (:func:`smooth_heights_numpy`; NaN without)."""
    out = bullington_reductions_numpy(d1, surface, interior, ha, hb, length, lam, k, radius)
    if not smooth:
        nan = np.full(out[0].shape, np.nan)
        return (*out, nan, nan)
    return (*out, *smooth_heights_numpy(d1, surface, interior, ha, hb, length))


def _examples(rng: np.random.Generator) -> list[tuple]:
    # Rough profiles of uneven lengths (padding repeats the end), antennas from below
    # the ground to far above it, frequencies 0.2-38 GHz, k = 4/3 and a flat earth.
    n_paths, width = 120, 90
    length = rng.uniform(200.0, 60_000.0, n_paths)
    n = rng.integers(3, width + 1, n_paths)
    cols = np.arange(width)[None, :]
    last = (n - 1)[:, None]
    d1 = np.minimum(cols, last) / last * length[:, None]
    surface = 100.0 + np.cumsum(rng.normal(0.0, 8.0, (n_paths, width)), axis=1)
    surface = np.take_along_axis(surface, np.minimum(cols, last), axis=1)
    interior = (cols > 0) & (cols < last)
    ha = surface[:, 0] + rng.choice([-2.0, 0.5, 5.0, 30.0, 200.0], n_paths)
    hb = surface[:, -1] + rng.choice([0.5, 5.0, 30.0, 200.0], n_paths)
    lam = 0.299792458 / rng.choice([0.2, 2.4, 5.8, 18.0, 38.0], n_paths)
    out = []
    for kk in (4.0 / 3.0, np.inf):
        k = np.full(n_paths, kk)
        for smooth in (True, False):
            out.append((d1, surface, interior, ha, hb, length, lam, k, EARTH_RADIUS_M, smooth))
        out.append((d1, np.zeros_like(surface), interior, ha - surface[:, 0], hb - surface[:, -1], length, lam, k,
                    EARTH_RADIUS_M, False))
    return out


def _warm(_dtypes: tuple) -> list[tuple]:
    col = np.ones(1)
    return [(np.array([[0.0, 1.0, 2.0]]), np.zeros((1, 3)), np.ones((1, 3), dtype=np.bool_),
             col, col, 2.0 * col, col, col, EARTH_RADIUS_M, smooth) for smooth in (True, False)]


# The loop first fills row buffers in branch-free loops (which the compiler turns
# into SIMD code; IEEE operations give the same bits in every lane), then takes
# maxima over the interior in scalar loops.  One function of about 100 lines on
# purpose: a single pass over each profile, with the row buffers reused across
# paths, is what makes it fast; split into calls it would read each row twice.
@twin("diffraction_reductions", diffraction_reductions_numpy, _examples, _warm, error_model="numpy")
def _reductions_loop(d1, surface, interior, ha, hb, length, lam, k, radius, smooth):  # pragma: no cover
    n_paths, width = d1.shape
    stim = np.full(n_paths, -np.inf)
    srim = np.full(n_paths, -np.inf)
    v_max = np.full(n_paths, -np.inf)
    i_max = np.zeros(n_paths, dtype=np.int64)
    hstd = np.full(n_paths, np.nan)
    hsrd = np.full(n_paths, np.nan)
    inv1 = np.empty(width)
    inv2 = np.empty(width)
    ob = np.empty(width)
    b1 = np.empty(width)
    b2 = np.empty(width)
    b3 = np.empty(width)
    ok = np.empty(width, dtype=np.bool_)
    for i in range(n_paths):
        a = ha[i]
        b = hb[i]
        d = length[i]
        inv_den = 1.0 / (2.0 * k[i] * radius)
        inv_d = 1.0 / d
        slope = (b - a) * inv_d
        two_over_lam = 2.0 / lam[i]
        # Pass 1 (no k): reciprocals; the smooth-surface sums and obstacle maxima.
        for c in range(width):
            x1 = d1[i, c]
            x2 = d - x1
            ok[c] = interior[i, c] & (x1 > 0.0) & (x2 > 0.0)
            inv1[c] = 1.0 / x1
            inv2[c] = 1.0 / x2
        if smooth:
            for c in range(width):
                x1 = d1[i, c]
                o = surface[i, c] - (a * (d - x1) + b * x1) * inv_d
                ob[c] = o
                b1[c] = o * inv1[c]
                b2[c] = o * inv2[c]
            acc1 = 0.0
            acc2 = 0.0
            o_h = -np.inf
            o_t = -np.inf
            o_r = -np.inf
            for c in range(width):
                if c > 0:
                    x1 = d1[i, c]
                    h = surface[i, c]
                    xp = d1[i, c - 1]
                    hp = surface[i, c - 1]
                    step = x1 - xp
                    acc1 += step * (h + hp)
                    acc2 += step * (h * (2.0 * x1 + xp) + hp * (x1 + 2.0 * xp))
                if not ok[c]:
                    continue
                t = ob[c]
                if t > o_h or t != t:
                    o_h = t
                t = b1[c]
                if t > o_t or t != t:
                    o_t = t
                t = b2[c]
                if t > o_r or t != t:
                    o_r = t
            hst = (2.0 * acc1 * d - acc2) / (d * d)
            hsr = (acc2 - acc1 * d) / (d * d)
            share_t = o_t / (o_t + o_r)
            if o_h > 0.0:
                hst = hst - o_h * share_t
                hsr = hsr - o_h * (1.0 - share_t)
            h0 = surface[i, 0]
            hn = surface[i, width - 1]
            hst = h0 if h0 < hst else hst  # np.minimum: NaN stays NaN
            hsr = hn if hn < hsr else hsr
            hstd[i] = hst
            hsrd[i] = hsr
        # Pass 2 (at k): Bullington over the profile.
        for c in range(width):
            x1 = d1[i, c]
            i1 = inv1[c]
            i2 = inv2[c]
            elev = surface[i, c] + x1 * (d - x1) * inv_den
            b1[c] = (elev - (a + x1 * slope)) * np.sqrt(two_over_lam * (i1 + i2))
            b2[c] = (elev - a) * i1
            b3[c] = (elev - b) * i2
        s_a = -np.inf
        s_b = -np.inf
        s_m = -np.inf
        s_i = 0
        for c in range(width):
            if not ok[c]:
                continue
            v = b1[c]
            if v > s_m or (v != v and s_m == s_m):
                s_m = v
                s_i = c
            t = b2[c]
            if t > s_a or t != t:
                s_a = t
            t = b3[c]
            if t > s_b or t != t:
                s_b = t
        stim[i] = s_a
        srim[i] = s_b
        v_max[i] = s_m
        i_max[i] = s_i
    return stim, srim, v_max, i_max, hstd, hsrd


def _columns(*arrays) -> tuple[np.ndarray, ...]:
    return tuple(np.ascontiguousarray(np.asarray(a, dtype=float).reshape(-1)) for a in arrays)


def diffraction_reductions(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray, smooth: bool = True,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``stim``, ``srim``, ``v_max``, ``i_max``, ``hstd``, ``hsrd`` of profiles (see
    :func:`diffraction_reductions_numpy`), compiled for large batches."""
    return _reductions_loop(
        d1.size, np.ascontiguousarray(d1, dtype=float), np.ascontiguousarray(surface, dtype=float),
        np.ascontiguousarray(interior, dtype=np.bool_), *_columns(ha, hb, length, lam, k), EARTH_RADIUS_M,
        bool(smooth),
    )


def bullington_reductions(
    d1: np.ndarray, interior: np.ndarray, ha: np.ndarray, hb: np.ndarray,
    length: np.ndarray, lam: np.ndarray, k: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``stim``, ``srim``, ``v_max`` over a bare smooth earth (elev = d1 d2 / (2 k a)), antennas
    ``ha``, ``hb`` above it (the Lbulls term of ITU-R P.526-15 section 4.5.2): the same
    reduction on a zero surface."""
    return diffraction_reductions(d1, np.zeros(np.shape(d1)), interior, ha, hb, length, lam, k, False)[:3]
