"""Kernel of the clearance reductions of :func:`profiler.geometry.clearance`.

The compiled loop finds, per path, the worst point of the first Fresnel zone,
the line of sight and the shortfall in one pass, with no (paths, samples)
temporaries; its numpy twin does the same arithmetic in the same order (same
bits).  Pure functions, no I/O.
"""

from __future__ import annotations

import numpy as np

from ._compiled import twin, use_numba

__all__ = ["clearance_reductions", "clearance_reductions_numpy"]


def clearance_reductions_numpy(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, length: np.ndarray,
    ha: np.ndarray, hb: np.ndarray, lam: np.ndarray, den: float, fraction: float,
) -> tuple[np.ndarray, ...]:
    """Worst index, its F1 fraction and clearance (m), line of sight, shortfall (m), each (P,).

    Clearance = antenna line - (surface + d1 d2 / ``den``), ``den`` = 2 k a;
    F1 = sqrt(lam d1 d2 / (d1 + d2)) (ITU-R P.526-15 eq. 2); shortfall =
    max(``fraction`` F1 - clearance) over the interior.  See profiler.geometry.clearance.
    """
    d_ = length[:, None]
    a_ = ha[:, None]
    rise = (hb - ha)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        x2 = np.maximum(d_ - d1, 0.0)
        s = d1 + x2
        r2 = lam[:, None] * d1 * x2 / s
        f1 = np.sqrt(np.where(s > 0, r2, 0.0))
        gap = (a_ + rise * d1 / d_) - (surface + d1 * x2 / den)
        q = gap / f1
        short_terms = fraction * f1 - gap
    usable = interior & (f1 > 0) & ~np.isnan(q)
    idx = np.argmin(np.where(usable, q, np.inf), axis=1)
    rows = np.arange(d1.shape[0])
    worst_frac = np.where(~interior[rows, idx], np.inf, np.where(f1[rows, idx] > 0, q[rows, idx], np.nan))
    los = np.min(np.where(interior, gap, np.inf), axis=1) > 0.0
    shortfall = np.max(np.where(interior, short_terms, -np.inf), axis=1)
    return idx.astype(np.int64), worst_frac, gap[rows, idx], los, shortfall


def _examples(rng: np.random.Generator) -> list[tuple]:
    out = []
    for n_paths, width in ((60, 50), (5, 3)):
        length = rng.uniform(100.0, 30_000.0, n_paths)
        d1 = np.linspace(0.0, 1.0, width)[None, :] * length[:, None]
        d1[0, -5:] = length[0]  # padding repeats the end
        surface = rng.normal(100.0, 20.0, (n_paths, width))
        interior = np.ones((n_paths, width), dtype=np.bool_)
        interior[:, [0, -1]] = False
        interior[0, -5:] = False
        interior[1, :] = False  # no interior sample at all
        ha = surface[:, 0] + rng.uniform(-5.0, 60.0, n_paths)
        hb = surface[:, -1] + rng.uniform(-5.0, 60.0, n_paths)
        lam = rng.choice([0.05, 0.005], n_paths)
        for den in (2.0 * 4.0 / 3.0 * 6_371_000.0, np.inf):
            out.append((d1, surface, interior, length, ha, hb, lam, den, 0.6))
    return out


@twin("clearance_reductions", clearance_reductions_numpy, _examples, error_model="numpy")
def _clearance_loop(d1, surface, interior, length, ha, hb, lam, den, fraction):  # pragma: no cover
    n_paths, width = d1.shape
    worst = np.zeros(n_paths, dtype=np.int64)
    worst_frac = np.empty(n_paths)
    worst_gap = np.empty(n_paths)
    los = np.empty(n_paths, dtype=np.bool_)
    shortfall = np.full(n_paths, -np.inf)
    fb = np.empty(width)
    gb = np.empty(width)
    qb = np.empty(width)
    for i in range(n_paths):
        d = length[i]
        a = ha[i]
        rise = hb[i] - a
        la = lam[i]
        for c in range(width):
            x1 = d1[i, c]
            x2 = max(d - x1, 0.0)
            s = x1 + x2
            r2 = la * x1 * x2 / s
            f1 = np.sqrt(r2 if s > 0 else 0.0)
            gap = (a + rise * x1 / d) - (surface[i, c] + x1 * x2 / den)
            fb[c] = f1
            gb[c] = gap
            qb[c] = gap / f1
        best = np.inf
        idx = 0
        g_min = np.inf
        short = -np.inf
        for c in range(width):
            if not interior[i, c]:
                continue
            f1 = fb[c]
            gap = gb[c]
            if f1 > 0 and qb[c] < best:
                best = qb[c]
                idx = c
            if gap < g_min or gap != gap:
                g_min = gap
            t = fraction * f1 - gap
            if t > short or t != t:
                short = t
        if not interior[i, idx]:
            worst_frac[i] = np.inf
        elif fb[idx] > 0:
            worst_frac[i] = qb[idx]
        else:
            worst_frac[i] = np.nan
        worst[i] = idx
        worst_gap[i] = gb[idx]
        los[i] = g_min > 0.0
        shortfall[i] = short
    return worst, worst_frac, worst_gap, los, shortfall


def _columns(*arrays) -> tuple[np.ndarray, ...]:
    return tuple(np.ascontiguousarray(np.asarray(a, dtype=float).reshape(-1)) for a in arrays)


def clearance_reductions(
    d1: np.ndarray, surface: np.ndarray, interior: np.ndarray, length: np.ndarray,
    ha: np.ndarray, hb: np.ndarray, lam: np.ndarray, bulge_den: float, fraction: float | None,
) -> tuple[np.ndarray, ...] | None:
    """Worst point, line of sight and shortfall of large batches in one compiled pass, or None.

    The arithmetic is that of :func:`profiler.geometry.clearance` (bulge d1 d2 /
    ``bulge_den``, ``bulge_den`` = 2 k a; F1 = sqrt(lam d1 d2 / (d1 + d2))), in
    the same order, so the numbers are the same bits.  None for batches that
    :func:`profiler._compiled.use_numba` leaves to numpy: the caller then makes
    the full arrays, which it keeps for the profile drawings.
    """
    if not use_numba(d1.size):
        return None
    return _clearance_loop.compiled()(
        np.ascontiguousarray(d1, dtype=float), np.ascontiguousarray(surface, dtype=float),
        np.ascontiguousarray(interior, dtype=np.bool_), *_columns(length, ha, hb, lam),
        float(bulge_den), 0.0 if fraction is None else float(fraction),
    )
