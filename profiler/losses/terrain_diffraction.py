"""Diffraction loss over terrain profiles: knife-edge, Deygout, Epstein-Peterson,
Bullington and the complete (delta-Bullington) method of ITU-R P.526-15.

Every function takes a batch of P profiles of N samples as arrays:

``distance_m`` (P, N)
    distance from site a, m; rows shorter than N are padded by repeating the
    last sample (padded columns have distance equal to the path length);
``surface_m`` (P, N)
    ground plus clutter above sea level, m, *without* earth bulge (the
    methods add curvature through the effective radius k * 6371 km);
``interior`` (P, N) bool
    True for samples strictly between the two ends (not ends, not padding);
``antenna_a_amsl_m``, ``antenna_b_amsl_m``, ``path_length_m`` (P,)
    antenna centre heights above sea level and path lengths, m;
``freq_ghz``, ``k``
    scalars or (P,); ``k`` may be ``inf`` for a flat earth.

No Python loop runs over samples or paths: every step is a whole-array
operation, and Deygout's sub-paths are masked maxima over column ranges.
Results are dB of loss in excess of free space, shape (P,).

Sources
-------
* Knife-edge parameter v and loss J(v): ITU-R P.526-15 (10/2019) section 4.1.
* Bullington construction: ITU-R P.526-15 section 4.5.1.
* Complete (delta-Bullington) method and smooth-surface fit: ITU-R P.526-15
  section 4.5.2 (the same method as ITU-R P.452-17 section 4.2 and P.1812).
* Deygout: J. Deygout, "Multiple knife-edge diffraction of microwaves",
  IEEE Trans. Antennas Propag. AP-14(4), 1966 (from memory).
* Epstein-Peterson: J. Epstein and D. W. Peterson, "An experimental study of
  wave propagation at 850 Mc", Proc. IRE 41(5), 1953 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError
from ..units import EARTH_RADIUS_M, wavelength_m
from .diffraction import fresnel_kirchhoff_v, knife_edge_loss_db
from .smooth_earth import GroundConstants, resolve_ground, resolve_polarisation, smooth_earth_loss_db

__all__ = [
    "DIFFRACTION_METHODS",
    "DEFAULT_DIFFRACTION_METHOD",
    "DiffractionResult",
    "resolve_method",
    "diffraction_loss_db",
    "diffraction_by_method",
    "diffraction_with_warnings",
    "diffraction_validity_warnings",
    "knife_edge_profile_loss_db",
    "deygout_loss_db",
    "epstein_peterson_loss_db",
    "bullington_loss_db",
    "delta_bullington_loss_db",
    "smooth_surface_heights_m",
]

#: Method names accepted by :func:`diffraction_loss_db`.
DIFFRACTION_METHODS: tuple[str, ...] = (
    "delta-bullington",
    "bullington",
    "deygout",
    "epstein-peterson",
    "knife-edge",
)
#: Default for terrain paths: the complete method of ITU-R P.526-15 section 4.5.2.
DEFAULT_DIFFRACTION_METHOD = "delta-bullington"

#: Frequency ranges (GHz) outside which a method earns a validity warning.
#: Bullington and delta-Bullington: the ranges of the Recommendations built on
#: them, ITU-R P.1812 (from 30 MHz) and ITU-R P.452 (to 50 GHz) (from memory).
_FREQ_RANGE_GHZ: dict[str, tuple[float, float]] = {
    "bullington": (0.03, 50.0),
    "delta-bullington": (0.03, 50.0),
}
#: Largest diffraction angle (rad) for the small-angle knife-edge formulas of
#: ITU-R P.526-15 section 4.1 (about 12 degrees; from memory).
_MAX_DIFFRACTION_ANGLE_RAD = 0.2
#: J(v) is zero at and below this v (ITU-R P.526-15 section 4.1).
_V_NO_LOSS = -0.78
#: Elements per block when a large batch is processed in pieces (memory bound).
_BLOCK_ELEMENTS = 1 << 17


@dataclass(frozen=True)
class DiffractionResult:
    """Loss by one method with its validity warnings, one tuple of messages per path."""

    method: str
    loss_db: np.ndarray
    warnings: tuple[tuple[str, ...], ...]


def resolve_method(method: str) -> str:
    """Normalised method name; raises InputError listing the valid names."""
    name = str(method).strip().lower().replace("_", "-")
    aliases = {"knife": "knife-edge", "knifeedge": "knife-edge", "delta": "delta-bullington",
               "complete": "delta-bullington", "epstein": "epstein-peterson"}
    name = aliases.get(name, name)
    if name not in DIFFRACTION_METHODS:
        raise InputError(
            f"unknown diffraction method {method!r}: choose one of {', '.join(DIFFRACTION_METHODS)}"
        )
    return name


# --------------------------------------------------------------------------
# Batch preparation


@dataclass(frozen=True)
class _Batch:
    """Validated arrays plus quantities every method shares."""

    d1: np.ndarray  # (P, N) distance from a, m
    d2: np.ndarray  # (P, N) distance to b, m
    surface: np.ndarray  # (P, N) surface without bulge, m
    interior: np.ndarray  # (P, N) bool
    elev: np.ndarray  # (P, N) surface plus earth bulge at k, m
    height: np.ndarray  # (P, N) elev above the straight antenna line, m
    v: np.ndarray  # (P, N) Fresnel-Kirchhoff v, -inf outside interior
    ha: np.ndarray  # (P, 1)
    hb: np.ndarray  # (P, 1)
    length: np.ndarray  # (P, 1)
    freq: np.ndarray  # (P, 1)
    k: np.ndarray  # (P, 1)
    lam: np.ndarray  # (P, 1)


def _as_column(value: ArrayLike, n_paths: int, name: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        return np.full((n_paths, 1), float(arr))
    arr = arr.reshape(-1)
    if arr.shape[0] != n_paths:
        raise InputError(f"{name} has {arr.shape[0]} values for {n_paths} paths")
    return arr[:, None]


@dataclass(frozen=True)
class _Checked:
    """Validated inputs: (P, N) arrays and (P, 1) columns."""

    d1: np.ndarray
    surface: np.ndarray
    interior: np.ndarray
    ha: np.ndarray
    hb: np.ndarray
    length: np.ndarray
    freq: np.ndarray
    k: np.ndarray


def _prepare(
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
) -> _Batch:
    c = _check(distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    d1, surface, inner, ha, hb, length, freq, kk = (
        c.d1, c.surface, c.interior, c.ha, c.hb, c.length, c.freq, c.k)
    d2 = length - d1
    lam = wavelength_m(freq)
    with np.errstate(divide="ignore", invalid="ignore"):
        elev = surface + d1 * d2 / (2.0 * kk * EARTH_RADIUS_M)
        height = elev - (ha + (hb - ha) * d1 / length)
        v = fresnel_kirchhoff_v(height, d1, d2, freq)
    inner = inner & (d1 > 0.0) & (d2 > 0.0)
    v = np.where(inner, v, -np.inf)
    return _Batch(d1, d2, surface, inner, elev, height, v, ha, hb, length, freq, kk, lam)


def _check(
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
) -> _Checked:
    d1 = np.atleast_2d(np.asarray(distance_m, dtype=float))
    surface = np.atleast_2d(np.asarray(surface_m, dtype=float))
    inner = np.atleast_2d(np.asarray(interior, dtype=bool))
    if d1.ndim != 2 or surface.shape != d1.shape or inner.shape != d1.shape:
        raise InputError(
            "distance_m, surface_m and interior must share one (paths, samples) shape: got "
            f"{d1.shape}, {surface.shape} and {inner.shape}"
        )
    n_paths = d1.shape[0]
    ha = _as_column(antenna_a_amsl_m, n_paths, "antenna_a_amsl_m")
    hb = _as_column(antenna_b_amsl_m, n_paths, "antenna_b_amsl_m")
    length = _as_column(path_length_m, n_paths, "path_length_m")
    freq = _as_column(freq_ghz, n_paths, "freq_ghz")
    kk = _as_column(k, n_paths, "k")

    _check_positive(length, "path length (m)")
    _check_positive(freq, "frequency (GHz)")
    _check_positive(kk, "k-factor")
    for arr, name in ((ha, "antenna a height (m above sea level)"), (hb, "antenna b height (m above sea level)")):
        bad = ~np.isfinite(arr[:, 0])
        if bad.any():
            raise InputError(f"{name} is not a finite number on path {int(np.argmax(bad))}")
    bad_rows = ~np.isfinite(surface).all(axis=1) | ~np.isfinite(d1).all(axis=1)
    if bad_rows.any():
        row = int(np.argmax(bad_rows))
        col = int(np.argmax(~np.isfinite(surface[row]) | ~np.isfinite(d1[row])))
        raise InputError(
            f"profile of path {row} has a missing (NaN) height or distance at sample {col} "
            f"({d1[row, col] / 1000.0:.3f} km from site a)"
        )
    return _Checked(d1, surface, inner, ha, hb, length, freq, kk)


def _check_positive(arr: np.ndarray, name: str) -> None:
    bad = ~(arr[:, 0] > 0.0)  # catches NaN too; inf allowed
    if bad.any():
        row = int(np.argmax(bad))
        raise InputError(f"{name} must be positive: got {arr[row, 0]!r} on path {row}")


def _rows(arr: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """Value of each row at column ``idx`` (P,) -> (P, 1)."""
    return np.take_along_axis(arr, idx[:, None], axis=1)


def _masked_argmax(values: np.ndarray, mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Column of the largest value where mask holds, and that value (-inf if none)."""
    masked = np.where(mask, values, -np.inf)
    idx = np.argmax(masked, axis=1)
    return idx, _rows(masked, idx)[:, 0]


# --------------------------------------------------------------------------
# Methods on a prepared batch


def _knife_edge(b: _Batch) -> np.ndarray:
    """J(v) of the sample of largest v (ITU-R P.526-15 section 4.1)."""
    return knife_edge_loss_db(b.v.max(axis=1))


#: Two edges are distinct summits only if the profile between them dips below the
#: lower of the two by at least this fraction of the first Fresnel radius of the
#: side sub-path at the side edge (see :func:`_deygout_parts`).
SUMMIT_DIP_F1_FRACTION = 0.6
#: The same threshold as a Fresnel-Kirchhoff v: h / F1 >= 0.6 is v = sqrt(2) h / F1 >= 0.6 sqrt(2)
#: (v = sqrt(2) h / F1: ITU-R P.526-15 section 4.1 with F1 of eq. 2).
_SUMMIT_DIP_V = SUMMIT_DIP_F1_FRACTION * np.sqrt(2.0)


def _deygout_parts(b: _Batch) -> dict[str, np.ndarray]:
    """Main edge, and the dominant distinct summit of each side sub-path (Deygout 1966)."""
    n_cols = b.d1.shape[1]
    cols = np.arange(n_cols)[None, :]
    ip, vp = _masked_argmax(b.v, b.interior)
    hp = _rows(b.height, ip)
    dp = _rows(b.d1, ip)
    ep = _rows(b.elev, ip)
    ipc = ip[:, None]
    from ..kernels import summit_dips

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
    return {"ip": ip, "vp": vp, "it": it, "vt": vt, "ir": ir, "vr": vr, "hp": hp[:, 0], "dp": dp[:, 0]}


def _deygout(b: _Batch, parts: dict[str, np.ndarray] | None = None) -> np.ndarray:
    """Deygout with up to three edges; side edges count only if the main edge blocks (v > 0)."""
    p = parts if parts is not None else _deygout_parts(b)
    blocked = p["vp"] > 0.0
    sides = knife_edge_loss_db(p["vt"]) + knife_edge_loss_db(p["vr"])
    return knife_edge_loss_db(p["vp"]) + np.where(blocked, sides, 0.0)


def _epstein_peterson(b: _Batch, parts: dict[str, np.ndarray] | None = None) -> np.ndarray:
    """Epstein-Peterson over Deygout's edges: each edge's v against the line joining its neighbours."""
    p = parts if parts is not None else _deygout_parts(b)
    blocked = p["vp"] > 0.0
    use_t = blocked & (p["vt"] > _V_NO_LOSS)
    use_r = blocked & (p["vr"] > _V_NO_LOSS)
    length = b.length[:, 0]
    # Neighbours of the main edge, as (distance from a, height above the main line).
    d_left = np.where(use_t, _rows(b.d1, p["it"])[:, 0], 0.0)
    h_left = np.where(use_t, _rows(b.height, p["it"])[:, 0], 0.0)
    d_right = np.where(use_r, _rows(b.d1, p["ir"])[:, 0], length)
    h_right = np.where(use_r, _rows(b.height, p["ir"])[:, 0], 0.0)
    s1 = p["dp"] - d_left
    s2 = d_right - p["dp"]
    with np.errstate(divide="ignore", invalid="ignore"):
        h_main = p["hp"] - (h_left + (h_right - h_left) * s1 / (s1 + s2))
        v_main = fresnel_kirchhoff_v(h_main, s1, s2, b.freq[:, 0])
    v_main = np.where(np.isfinite(p["vp"]), v_main, -np.inf)
    loss = knife_edge_loss_db(v_main)
    loss = loss + np.where(use_t, knife_edge_loss_db(p["vt"]), 0.0)
    return loss + np.where(use_r, knife_edge_loss_db(p["vr"]), 0.0)


def _bullington_from(
    stim: np.ndarray, srim: np.ndarray, v_max: np.ndarray,
    ha: np.ndarray, hb: np.ndarray, d: np.ndarray, lam: np.ndarray,
) -> np.ndarray:
    """Bullington loss (ITU-R P.526-15 section 4.5.1) from the profile's reductions, dB (P,).

    ``stim``, ``srim``: largest slopes from each antenna to the profile; ``v_max``:
    largest v (the line-of-sight case) (see :func:`profiler.kernels.diffraction_reductions`);
    ha, hb, d, lam in metres, each (P,).
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


@dataclass(frozen=True)
class _Reduced:
    """Per-path reductions of checked profiles at one k (see profiler.kernels.diffraction_reductions)."""

    c: _Checked
    lam: np.ndarray  # (P,)
    stim: np.ndarray
    srim: np.ndarray
    v_max: np.ndarray
    i_max: np.ndarray
    hstd: np.ndarray  # smooth surface (NaN unless asked for)
    hsrd: np.ndarray

    def column(self, name: str) -> np.ndarray:
        return getattr(self.c, name)[:, 0]


def _reduce(c: _Checked, smooth: bool) -> _Reduced:
    from ..kernels import diffraction_reductions

    lam = wavelength_m(c.freq[:, 0])
    out = diffraction_reductions(c.d1, c.surface, c.interior, c.ha[:, 0], c.hb[:, 0], c.length[:, 0], lam,
                                 c.k[:, 0], smooth)
    return _Reduced(c, lam, *out)


def _bullington_reduced(r: _Reduced) -> np.ndarray:
    return _bullington_from(r.stim, r.srim, r.v_max, r.column("ha"), r.column("hb"), r.column("length"), r.lam)


def _delta_bullington(r: _Reduced, polarisation: str, ground: str | GroundConstants,
                      l_bulla: np.ndarray | None = None) -> np.ndarray:
    """Complete method Ld = Lbulla + max(Ldsph - Lbulls, 0) (ITU-R P.526-15 section 4.5.2).

    Lbulls is Bullington over the bare smooth earth (bulge only) with the
    antennas at hts = ha - hstd, hrs = hb - hsrd above the smooth surface.
    """
    from ..kernels import bullington_reductions

    if l_bulla is None:
        l_bulla = _bullington_reduced(r)
    length, k = r.column("length"), r.column("k")
    hts_s = r.column("ha") - r.hstd
    hrs_s = r.column("hb") - r.hsrd
    l_dsph = smooth_earth_loss_db(
        length, hts_s, hrs_s, r.column("freq"), k, polarisation=polarisation, ground=ground
    )
    # Lbulls >= 0, so where Ldsph is exactly 0 the excess max(Ldsph - Lbulls, 0) is 0 whatever
    # Lbulls is: it is computed only for the other paths (mostly those near or past the horizon).
    l_bulls = np.zeros(l_dsph.shape)
    rows = np.flatnonzero(~(l_dsph == 0.0))
    if rows.size:
        stim, srim, v_max = bullington_reductions(
            r.c.d1[rows], r.c.interior[rows], hts_s[rows], hrs_s[rows], length[rows], r.lam[rows], k[rows])
        l_bulls[rows] = _bullington_from(stim, srim, v_max, hts_s[rows], hrs_s[rows], length[rows], r.lam[rows])
    return l_bulla + np.maximum(l_dsph - l_bulls, 0.0)


# --------------------------------------------------------------------------
# Public entry points


def _blocks(n_paths: int, n_cols: int) -> list[slice]:
    rows = max(1, _BLOCK_ELEMENTS // max(n_cols, 1))
    return [slice(i, min(i + rows, n_paths)) for i in range(0, max(n_paths, 1), rows)]


def _split_args(args: tuple, sl: slice, n_paths: int) -> tuple:
    """Rows ``sl`` of every per-path argument (scalars pass through)."""
    out = []
    for a in args:
        arr = np.asarray(a)
        if arr.ndim == 0:
            out.append(arr)
        elif arr.ndim == 1 and arr.shape[0] == n_paths:
            out.append(arr[sl])
        else:
            out.append(np.atleast_2d(arr)[sl])
    return tuple(out)


#: Methods computed from per-path reductions (no (P, N) temporaries).
_REDUCED_METHODS = frozenset({"knife-edge", "bullington", "delta-bullington"})


def _run(methods: tuple[str, ...], args: tuple, polarisation: str,
         ground: str | GroundConstants, warn: str | None = None,
         ) -> tuple[dict[str, np.ndarray], list[tuple[str, ...]]]:
    """Losses of several methods (and the validity warnings of method ``warn``), block by block."""
    polarisation = resolve_polarisation(polarisation)
    ground = resolve_ground(ground)
    shape = np.atleast_2d(np.asarray(args[0])).shape
    n_paths, n_cols = shape
    pieces: dict[str, list[np.ndarray]] = {m: [] for m in methods}
    warnings: list[tuple[str, ...]] = []
    from ..kernels import use_numba

    # The compiled reductions make no (P, N) temporaries: no need to cut the batch then.
    whole = not ({"deygout", "epstein-peterson"} & set(methods)) and use_numba(n_paths * n_cols)
    for sl in [slice(0, n_paths)] if whole else _blocks(n_paths, n_cols):
        part = _split_args(args, sl, n_paths)
        c = _check(*part)
        r = _reduce(c, "delta-bullington" in methods) if (_REDUCED_METHODS & set(methods)) or warn else None
        b = parts = None
        if {"deygout", "epstein-peterson"} & set(methods):
            b = _prepare(*part)
            parts = _deygout_parts(b)
        l_bull = _bullington_reduced(r) if {"bullington", "delta-bullington"} & set(methods) else None
        for m in methods:
            if m == "knife-edge":
                loss = knife_edge_loss_db(r.v_max)
            elif m == "deygout":
                loss = _deygout(b, parts)
            elif m == "epstein-peterson":
                loss = _epstein_peterson(b, parts)
            elif m == "bullington":
                loss = l_bull
            else:
                loss = _delta_bullington(r, polarisation, ground, l_bull)
            pieces[m].append(loss)
        if warn:
            warnings.extend(_warnings(warn, r))
    return {m: np.concatenate(p) if p else np.zeros(0) for m, p in pieces.items()}, warnings


def diffraction_loss_db(
    method: str,
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> np.ndarray:
    """Diffraction loss in dB, shape (P,), by ``method`` (one of :data:`DIFFRACTION_METHODS`).

    See the module docstring for the array convention and each method's
    source.  ``polarisation`` and ``ground`` matter only for delta-bullington
    (its smooth-earth term, ITU-R P.526-15 section 3.2).  Raises
    :class:`~profiler.errors.InputError` for an unknown method or bad arrays.
    """
    name = resolve_method(method)
    args = (distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    return _run((name,), args, polarisation, ground)[0][name]


def diffraction_by_method(
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> dict[str, np.ndarray]:
    """Loss of every method in :data:`DIFFRACTION_METHODS` for the same profiles, dB, each (P,)."""
    args = (distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    return _run(DIFFRACTION_METHODS, args, polarisation, ground)[0]


def _single(method: str):
    def fn(
        distance_m: ArrayLike,
        surface_m: ArrayLike,
        interior: ArrayLike,
        antenna_a_amsl_m: ArrayLike,
        antenna_b_amsl_m: ArrayLike,
        path_length_m: ArrayLike,
        freq_ghz: ArrayLike,
        k: ArrayLike,
        *,
        polarisation: str = "horizontal",
        ground: str | GroundConstants = "land",
    ) -> np.ndarray:
        return diffraction_loss_db(
            method, distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m,
            path_length_m, freq_ghz, k, polarisation=polarisation, ground=ground,
        )

    return fn


knife_edge_profile_loss_db = _single("knife-edge")
knife_edge_profile_loss_db.__name__ = "knife_edge_profile_loss_db"
knife_edge_profile_loss_db.__doc__ = """Single dominant edge: J(v) at the interior sample of largest v, dB (P,).

The edge height above the straight antenna line includes the earth bulge
d1 d2 / (2 k a) (ITU-R P.526-15 section 4.1; bulge: handbook form)."""

deygout_loss_db = _single("deygout")
deygout_loss_db.__name__ = "deygout_loss_db"
deygout_loss_db.__doc__ = """Deygout construction with up to three edges, dB (P,).

Main edge by largest v over the whole path; if it blocks the direct line
(v > 0), add J(v) of the dominant edge of each side sub-path, measured against
the line from that antenna to the main edge top (Deygout, IEEE Trans. AP-14,
1966, from memory; limiting to three edges and to blocking main edges is
common practice).  A side edge must be a summit distinct from the main edge:
the profile between them dips below the lower of the two by at least 0.6 F1
of the side sub-path at the side edge (common practice, our rule), so the
flanks of one rounded summit are not counted as further edges.  Vectorised
with masked maxima over column ranges."""

epstein_peterson_loss_db = _single("epstein-peterson")
epstein_peterson_loss_db.__name__ = "epstein_peterson_loss_db"
epstein_peterson_loss_db.__doc__ = """Epstein-Peterson sum over the Deygout edges, dB (P,).

The edges are the main edge and, when it blocks, the side edges (distinct
summits, as for Deygout) that obstruct their sub-paths (v > -0.78); each edge's v is measured against the line
joining its neighbouring edges or antennas and the J(v) add (Epstein and
Peterson, Proc. IRE 41, 1953, from memory)."""

bullington_loss_db = _single("bullington")
bullington_loss_db.__name__ = "bullington_loss_db"
bullington_loss_db.__doc__ = """Bullington equivalent-edge loss with its empirical correction, dB (P,).

Lbull = Luc + (1 - exp(-Luc/6)) (10 + 0.02 d[km]), Luc = J of the line-of-sight
sample of largest v or of the crossing of the two horizon rays
(ITU-R P.526-15 section 4.5.1)."""

delta_bullington_loss_db = _single("delta-bullington")
delta_bullington_loss_db.__name__ = "delta_bullington_loss_db"
delta_bullington_loss_db.__doc__ = """Complete (delta-Bullington) method, dB (P,).

Ld = Lbulla + max(Ldsph - Lbulls, 0): Bullington on the real profile plus the
smooth spherical-earth loss (section 3.2) over a fitted smooth surface, minus
Bullington on that smooth surface (ITU-R P.526-15 section 4.5.2)."""


def smooth_surface_heights_m(
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike = 1.0,
    k: ArrayLike = 4.0 / 3.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Smooth-surface heights (hstd, hsrd) above sea level at a and b, m, each (P,).

    ITU-R P.526-15 section 4.5.2: least-squares line through the profile,
    lowered under the highest obstacle, capped by the ground at each end.
    """
    c = _check(distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    r = _reduce(c, True)
    return r.hstd, r.hsrd


def diffraction_validity_warnings(
    method: str,
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
) -> list[tuple[str, ...]]:
    """Validity warnings for ``method``, one tuple of messages per path (empty if none).

    Checks: frequency within the method's published range (Bullington and
    delta-Bullington, see ``_FREQ_RANGE_GHZ``); diffraction angle at the
    dominant edge within the small-angle range of ITU-R P.526-15 section 4.1
    (0.2 rad, from memory); each antenna above the surface at its own site.
    """
    name = resolve_method(method)
    args = (distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    return _run((), args, "horizontal", "land", warn=name)[1]


def _warnings(name: str, r: _Reduced) -> list[tuple[str, ...]]:
    """Validity warnings of method ``name`` for the paths of ``r`` (see diffraction_validity_warnings)."""
    c = r.c
    freq = c.freq[:, 0]
    # Diffraction angle at the edge of largest v: height (1/d1 + 1/d2).
    idx = r.i_max
    rows = np.arange(idx.shape[0])
    d1 = c.d1[rows, idx]
    ha, hb, length, kk = c.ha[:, 0], c.hb[:, 0], c.length[:, 0], c.k[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        d2 = length - d1
        elev = c.surface[rows, idx] + d1 * d2 / (2.0 * kk * EARTH_RADIUS_M)
        height = elev - (ha + (hb - ha) * d1 / length)
        angle = height * (1.0 / d1 + 1.0 / d2)
    has_edge = np.isfinite(r.v_max)
    lo, hi = _FREQ_RANGE_GHZ.get(name, (0.0, np.inf))
    bad_freq = ~((freq >= lo) & (freq <= hi))
    steep = has_edge & (angle > _MAX_DIFFRACTION_ANGLE_RAD)
    low_a = ha < c.surface[:, 0]
    low_b = hb < c.surface[:, -1]
    block_msgs: list[tuple[str, ...]] = [()] * freq.shape[0]
    for row in np.flatnonzero(bad_freq | steep | low_a | low_b):  # message text only
        msgs: list[str] = []
        if bad_freq[row]:
            msgs.append(
                f"{name} diffraction: frequency {freq[row]:g} GHz lies outside {lo:g}-{hi:g} GHz, "
                "the range of the ITU-R Recommendations built on this method; loss less certain"
            )
        if steep[row]:
            msgs.append(
                f"{name} diffraction: steep obstacle {d1[row] / 1000.0:.3f} km from site a bends the "
                f"path by {np.degrees(angle[row]):.1f} degrees, beyond the small-angle range "
                f"(about {np.degrees(_MAX_DIFFRACTION_ANGLE_RAD):.0f} degrees) of ITU-R P.526-15 section 4.1; "
                "loss less certain"
            )
        if low_a[row]:
            msgs.append(
                f"{name} diffraction: antenna a ({ha[row]:.1f} m above sea level) is below the "
                f"surface at its own site ({c.surface[row, 0]:.1f} m); check its height"
            )
        if low_b[row]:
            msgs.append(
                f"{name} diffraction: antenna b ({hb[row]:.1f} m above sea level) is below the "
                f"surface at its own site ({c.surface[row, -1]:.1f} m); check its height"
            )
        block_msgs[row] = tuple(msgs)
    return block_msgs


def diffraction_with_warnings(
    method: str,
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike,
    k: ArrayLike,
    *,
    polarisation: str = "horizontal",
    ground: str | GroundConstants = "land",
) -> DiffractionResult:
    """Loss by ``method`` together with its validity warnings (see the two functions it joins)."""
    name = resolve_method(method)
    args = (distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m, freq_ghz, k)
    losses, warnings = _run((name,), args, polarisation, ground, warn=name)
    return DiffractionResult(name, losses[name], tuple(warnings))
