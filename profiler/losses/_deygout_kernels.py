"""Kernel of Deygout's distinct-summit rule: how far each profile dips between
a sample and the main edge.  The compiled loop sits beside its numpy twin (same
bits); :func:`profiler._compiled.use_numba` picks one.  Pure functions, no I/O.
"""

from __future__ import annotations

import numpy as np

from .._compiled import twin

__all__ = ["summit_dips", "summit_dips_numpy"]


def summit_dips_numpy(elev: np.ndarray, ip: np.ndarray, ep: np.ndarray) -> np.ndarray:
    """How far the profile dips between each sample and the main edge, m, shape (P, N).

    For column j of row p on either side of the main edge column ``ip[p]``
    (top ``ep[p]``): min(elev_j, ep) minus the lowest ``elev`` strictly
    between j and ``ip``; -inf at ``ip`` itself and where nothing lies between.
    Used by Deygout's distinct-summit rule (profiler.losses.terrain_diffraction).
    """
    n_cols = elev.shape[1]
    cols = np.arange(n_cols)[None, :]
    ipc = ip[:, None]
    epc = ep[:, None]
    dip = np.full(elev.shape, -np.inf)
    with np.errstate(invalid="ignore"):
        before = cols < ipc
        z = np.where(before, elev, np.inf)
        run = np.minimum.accumulate(z[:, ::-1], axis=1)[:, ::-1]  # lowest from j to the edge
        dip[:, :-1] = np.where(before[:, :-1], np.minimum(z[:, :-1], epc) - run[:, 1:], -np.inf)
        after = cols > ipc
        z = np.where(after, elev, np.inf)
        run = np.minimum.accumulate(z, axis=1)
        dip[:, 1:] = np.where(after[:, 1:], np.minimum(z[:, 1:], epc) - run[:, :-1], dip[:, 1:])
    return dip


def _examples(rng: np.random.Generator) -> list[tuple]:
    # Rough profiles, main edges anywhere (ends included), plateaus of equal
    # heights (ties) and padding that repeats the last sample.
    elev = np.round(np.cumsum(rng.normal(0.0, 3.0, (60, 97)), axis=1), 1)
    elev[5, 20:40] = 50.0
    elev[6, 80:] = elev[6, 79]
    ip = rng.integers(0, 97, 60).astype(np.int64)
    ip[:3] = (0, 96, 48)
    ep = elev[np.arange(60), ip] + rng.normal(0.0, 1.0, 60)
    return [(elev, ip, ep)]


def _warm(_dtypes: tuple) -> list[tuple]:
    return [(np.zeros((1, 3)), np.ones(1, dtype=np.int64), np.zeros(1))]


@twin("summit_dips", summit_dips_numpy, _examples, _warm)
def _summit_dips_loop(elev, ip, ep):  # pragma: no cover - compiled
    n_paths, n_cols = elev.shape
    dip = np.empty((n_paths, n_cols))
    for p in range(n_paths):
        i = ip[p]
        e = ep[p]
        for j in range(n_cols):
            dip[p, j] = -np.inf
        low = np.inf
        for j in range(i - 1, -1, -1):
            z = elev[p, j]
            dip[p, j] = (z if z < e else e) - low
            if z < low:
                low = z
        low = np.inf
        for j in range(i + 1, n_cols):
            z = elev[p, j]
            dip[p, j] = (z if z < e else e) - low
            if z < low:
                low = z
    return dip


def summit_dips(elev: np.ndarray, ip: np.ndarray, ep: np.ndarray) -> np.ndarray:
    """Dip between each sample and the main edge (see :func:`summit_dips_numpy`), m, (P, N)."""
    return _summit_dips_loop(
        elev.size, np.ascontiguousarray(elev, dtype=float), np.ascontiguousarray(ip, dtype=np.int64),
        np.ascontiguousarray(ep, dtype=float))
