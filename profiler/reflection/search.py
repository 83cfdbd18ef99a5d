"""The search for ground reflections on actual profiles at one k, and the surface the rays meet.

Part of :mod:`profiler.reflection`: seeds where the grazing angles from the two
antennas change order, the first Fresnel zone fitted by a line, the specular
point on that facet, the Rayleigh test and the rays against the surface outside
the zone; :func:`reflecting_surface` puts water samples at their water level.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..units import EARTH_RADIUS_M, wavelength_m
from .point import bulge_m, grazing_angles
from .surfaces import (complex_permittivity, divergence_factor, fresnel_coefficient, rayleigh_limit_m,
                       resolve_surface, roughness_factor, water_type_for)
from .two_ray import two_ray_level_db

__all__ = ["SEA_LEVEL_TOLERANCE_M", "FacetReflections", "find_reflections", "reflecting_surface"]

#: Samples per block of the ray check (candidates x samples), bounding its memory (about 50 MB of arrays).
_RAY_CHECK_SAMPLES = 1_000_000
#: Tolerance of "at the dataset's sea level", m (common practice for rasters that put the sea at 0).
SEA_LEVEL_TOLERANCE_M = 0.5


@dataclass(frozen=True)
class FacetReflections:
    """The strongest specular reflection of each path at one k (NaN / False where none).

    Per path: ``found``; ``point_m`` from site a; the facet (``plane_m`` its height at
    the point above the datum, ``slope`` its terrain slope, ``start_m``/``end_m`` the
    first Fresnel zone on it); ``grazing_rad``; ``roughness_m`` (RMS about the fit);
    ``over_water``; ``fresnel`` (complex), ``divergence``, ``roughness`` factors and
    their product ``coefficient``; ``path_difference_m``; ``level_db``.
    ``candidates``: all valid points as (path, point_m, |coefficient|, over_water).
    """

    k: float
    found: np.ndarray
    point_m: np.ndarray
    plane_m: np.ndarray
    slope: np.ndarray
    intercept_m: np.ndarray
    start_m: np.ndarray
    end_m: np.ndarray
    grazing_rad: np.ndarray
    roughness_m: np.ndarray
    over_water: np.ndarray
    fresnel: np.ndarray
    divergence: np.ndarray
    roughness: np.ndarray
    coefficient: np.ndarray
    path_difference_m: np.ndarray
    level_db: np.ndarray
    candidates: tuple = ()
    #: How far the search went per path: 0 no geometric point, 1 all rough, 2 rays blocked, 3 found.
    stage: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int8))


def _window_sums(x: np.ndarray, s: np.ndarray, use: np.ndarray) -> tuple[np.ndarray, ...]:
    """Prefix sums (with a leading 0) of 1, x, s, x^2, x s, s^2 over the used samples of each row."""
    w = use.astype(float)
    xs = np.where(use, x, 0.0)
    ss = np.where(use, s, 0.0)
    parts = (w, xs, ss, xs * xs, xs * ss, ss * ss)
    return tuple(np.concatenate([np.zeros((x.shape[0], 1)), np.cumsum(p, axis=1)], axis=1) for p in parts)


def find_reflections(
    distance_m: np.ndarray, surface_m: np.ndarray, n_samples: np.ndarray, length_m: np.ndarray,
    antenna_a_m: np.ndarray, antenna_b_m: np.ndarray, freq_ghz: ArrayLike, k: float,
    water: np.ndarray | None, polarisation: str, ground: str, valid: np.ndarray | None = None,
) -> FacetReflections:
    """Specular reflections of many paths at one k on their actual profiles.

    ``surface_m`` (paths, samples): terrain plus clutter above the datum, water
    samples at their water level; ``water``: True on water samples (or None).
    A candidate is where the grazing angles seen from the two antennas over the
    local surface are equal; it is kept when the surface within its first Fresnel
    zone is smooth by the Rayleigh criterion (RMS about a fitted line) and both
    the incident and the reflected ray are above the surface outside that zone.
    The strongest kept candidate of each path is its reflection at this k.
    """
    b = _batch(distance_m, surface_m, n_samples, length_m, antenna_a_m, antenna_b_m, freq_ghz, k, water, valid)
    P = b.x.shape[0]

    # 1. seeds: the grazing-angle difference changes sign between two samples (local slope over +-2 samples).
    p_idx, j_idx, x0, psi0 = _seeds(b)
    stage = np.zeros(P, dtype=np.int8)  # 0 no geometric point, 1 rough, 2 rays blocked, 3 found
    stage[p_idx] = 1
    empty = _empty_facets(P, k, stage)  # shares ``stage``: a later early return reports how far paths got
    if p_idx.size == 0:
        return empty
    dd = b.d[p_idx, 0]
    lam_c = b.lam[p_idx]

    # 2. the first Fresnel zone on the ground and a straight-line fit of the surface over it.
    start, end, sigma, g, c0 = _fit_facets(b, p_idx, j_idx, x0, psi0, lam_c)

    # 3. the specular point on the fitted facet (bisection: psi1 - psi2 falls along the path).
    bracket, xr, yr, psi = _specular_points(start, end, dd, b.ha[p_idx, 0], b.hb[p_idx, 0], c0, g, b.ae)
    keep = bracket & (psi > 0) & np.isfinite(sigma) & (sigma < rayleigh_limit_m(np.maximum(psi, 1e-9), b.f[p_idx]))
    stage[p_idx[keep]] = 2
    if not keep.any():
        return empty
    sel = np.flatnonzero(keep)
    p_idx, xr, yr, psi, sigma, g, c0 = p_idx[sel], xr[sel], yr[sel], psi[sel], sigma[sel], g[sel], c0[sel]
    dd, lam_c = dd[sel], lam_c[sel]
    half = np.sqrt(lam_c * xr * (dd - xr) / dd) / np.sin(psi)
    start, end = np.maximum(xr - half, 0.0), np.minimum(xr + half, dd)

    # 4. incident and reflected rays above the surface outside the zone (the engine's drawing: surface + bulge).
    clear = _rays_clear(b, p_idx, xr, yr, dd, start, end)
    if not clear.any():
        return empty
    sel = np.flatnonzero(clear)
    p_idx, xr, yr, psi, sigma, g, c0, dd, start, end = (
        v[sel] for v in (p_idx, xr, yr, psi, sigma, g, c0, dd, start, end))
    stage[p_idx] = 3

    # 5. strength and path difference; 6. the strongest per path.
    values = _strength(b, p_idx, xr, yr, psi, sigma, dd, ground, polarisation, k)
    values.update(plane_m=c0 + g * xr, slope=g, intercept_m=c0, start_m=start, end_m=end)
    return _strongest(empty, k, stage, p_idx, values)


@dataclass(frozen=True)
class _Batch:
    """The inputs of :func:`find_reflections` as arrays: (paths, samples), or (paths, 1) columns, or (paths,)."""

    x: np.ndarray
    s: np.ndarray
    n: np.ndarray
    d: np.ndarray
    ha: np.ndarray
    hb: np.ndarray
    f: np.ndarray
    lam: np.ndarray
    ae: float
    inside: np.ndarray
    interior: np.ndarray
    water: np.ndarray


def _batch(distance_m: np.ndarray, surface_m: np.ndarray, n_samples: np.ndarray, length_m: np.ndarray,
           antenna_a_m: np.ndarray, antenna_b_m: np.ndarray, freq_ghz: ArrayLike, k: float,
           water: np.ndarray | None, valid: np.ndarray | None) -> _Batch:
    x = np.asarray(distance_m, dtype=float)
    s = np.asarray(surface_m, dtype=float)
    P, N = x.shape
    n = np.asarray(n_samples)
    f = np.broadcast_to(np.asarray(freq_ghz, dtype=float), (P,))
    col = np.arange(N)[None, :]
    interior = (col > 0) & (col < (n - 1)[:, None])
    if valid is not None:
        interior &= np.asarray(valid, dtype=bool)[:, None]
    return _Batch(
        x=x, s=s, n=n, d=np.asarray(length_m, dtype=float)[:, None],
        ha=np.asarray(antenna_a_m, dtype=float)[:, None], hb=np.asarray(antenna_b_m, dtype=float)[:, None],
        f=f, lam=wavelength_m(f), ae=math.inf if math.isinf(k) else k * EARTH_RADIUS_M,
        inside=col < n[:, None], interior=interior,
        water=np.zeros((P, N), dtype=bool) if water is None else np.asarray(water, dtype=bool),
    )


def _seeds(b: _Batch) -> tuple[np.ndarray, ...]:
    """Path and sample index of each seed, its interpolated distance x0, m, and grazing angle psi0, rad."""
    x, s, n, d, ha, hb, ae = b.x, b.s, b.n, b.d, b.ha, b.hb, b.ae
    P, N = x.shape
    col = np.arange(N)[None, :]
    interior = b.interior
    lo_i = np.clip(col - 2, 0, (n - 1)[:, None])
    hi_i = np.clip(col + 2, 0, (n - 1)[:, None])
    rows = np.arange(P)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = (s[rows, hi_i] - s[rows, lo_i]) / (x[rows, hi_i] - x[rows, lo_i])
    slope = np.where(np.isfinite(slope), slope, 0.0)
    psi1, psi2, _ = grazing_angles(x, d, ha, hb, s - slope * x, slope, ae)
    diff = psi1 - psi2
    seed = interior[:, :-1] & interior[:, 1:] & (diff[:, :-1] >= 0) & (diff[:, 1:] < 0) \
        & (psi1[:, :-1] > 0) & (psi2[:, 1:] > 0)
    p_idx, j_idx = np.nonzero(seed)
    dj = diff[p_idx, j_idx] - diff[p_idx, j_idx + 1]
    frac = np.where(dj > 0, diff[p_idx, j_idx] / np.where(dj > 0, dj, 1.0), 0.5)
    x0 = x[p_idx, j_idx] + frac * (x[p_idx, j_idx + 1] - x[p_idx, j_idx])
    psi0 = np.maximum(0.5 * (psi1[p_idx, j_idx] + psi2[p_idx, j_idx + 1]), 1e-6)
    return p_idx, j_idx, x0, psi0


def _fit_facets(b: _Batch, p_idx: np.ndarray, j_idx: np.ndarray, x0: np.ndarray, psi0: np.ndarray,
                lam_c: np.ndarray) -> tuple[np.ndarray, ...]:
    """Each seed's first Fresnel zone on the ground (start, end, m) and the line fitted over it
    (RMS about it sigma, m; slope g; intercept c0 in distance from site a, m)."""
    x, s, n, d = b.x, b.s, b.n, b.d
    P, N = x.shape
    dd = d[p_idx, 0]
    half = np.sqrt(lam_c * x0 * (dd - x0) / dd) / np.sin(psi0)
    start, end = np.maximum(x0 - half, 0.0), np.minimum(x0 + half, dd)
    centre = 0.5 * d
    xc = x - centre
    sums = _window_sums(xc, s, b.inside)
    # one sorted key over all rows (rows are sorted, padding repeats the last sample; offsets keep rows apart)
    spread = 4.0 * (float(np.nanmax(d)) + 1.0)
    flat_key = (xc + (np.arange(P) * spread)[:, None]).ravel()
    base = p_idx * spread
    i0 = np.searchsorted(flat_key, start - centre[p_idx, 0] + base, side="left") - p_idx * N
    i1 = np.searchsorted(flat_key, end - centre[p_idx, 0] + base, side="right") - p_idx * N
    i0 = np.clip(np.minimum(i0, j_idx - 1), 0, N)
    i1 = np.clip(np.maximum(i1, j_idx + 3), 0, n[p_idx])
    cnt, sx, sy, sxx, sxy, syy = (v[p_idx, i1] - v[p_idx, i0] for v in sums)
    with np.errstate(divide="ignore", invalid="ignore"):
        den = cnt * sxx - sx * sx
        g = np.where(den > 0, (cnt * sxy - sx * sy) / den, 0.0)
        c0c = (sy - g * sx) / cnt
        var = (syy - c0c * sy - g * sxy) / cnt
    sigma = np.sqrt(np.maximum(var, 0.0))
    c0 = c0c - g * centre[p_idx, 0]  # intercept in distance from site a
    return start, end, sigma, g, c0


def _specular_points(start: np.ndarray, end: np.ndarray, dd: np.ndarray, ha_c: np.ndarray, hb_c: np.ndarray,
                     c0: np.ndarray, g: np.ndarray, ae: float) -> tuple[np.ndarray, ...]:
    """Whether the zone brackets a specular point, and that point on the facet: distance, height, m, grazing rad."""
    a_lo, a_hi = np.maximum(start, 1e-3), np.minimum(end, dd - 1e-3)
    f_lo = np.subtract(*grazing_angles(a_lo, dd, ha_c, hb_c, c0, g, ae)[:2])
    f_hi = np.subtract(*grazing_angles(a_hi, dd, ha_c, hb_c, c0, g, ae)[:2])
    bracket = (f_lo >= 0) & (f_hi <= 0)
    lo_b, hi_b = a_lo.copy(), a_hi.copy()
    for _ in range(48):
        mid = 0.5 * (lo_b + hi_b)
        fm = np.subtract(*grazing_angles(mid, dd, ha_c, hb_c, c0, g, ae)[:2])
        lo_b = np.where(fm >= 0, mid, lo_b)
        hi_b = np.where(fm >= 0, hi_b, mid)
    xr = 0.5 * (lo_b + hi_b)
    p1, p2, yr = grazing_angles(xr, dd, ha_c, hb_c, c0, g, ae)
    psi = 0.5 * (p1 + p2)
    return bracket, xr, yr, psi


def _rays_clear(b: _Batch, p_idx: np.ndarray, xr: np.ndarray, yr: np.ndarray, dd: np.ndarray,
                start: np.ndarray, end: np.ndarray) -> np.ndarray:
    """True where neither ray meets the surface (plus bulge) outside the candidate's zone."""
    x, s, d, ha, hb, ae, inside = b.x, b.s, b.d, b.ha, b.hb, b.ae, b.inside
    N = x.shape[1]
    clear = np.ones(p_idx.size, dtype=bool)
    block = max(1, _RAY_CHECK_SAMPLES // max(N, 1))  # candidates per block: (block, samples) arrays stay small
    for b0 in range(0, p_idx.size, block):
        sl = slice(b0, b0 + block)
        pc = p_idx[sl]
        xs, ss = x[pc], s[pc]
        ys = ss + bulge_m(xs, d[pc], ae)
        ha_c, hb_c, yc, xc_, dc = ha[pc, 0], hb[pc, 0], yr[sl], xr[sl], dd[sl]
        with np.errstate(divide="ignore", invalid="ignore"):
            ray_in = ha_c[:, None] + (yc - ha_c)[:, None] * xs / xc_[:, None]
            ray_out = yc[:, None] + (hb_c - yc)[:, None] * (xs - xc_[:, None]) / (dc - xc_)[:, None]
        ins = inside[pc] & (xs > 0) & (xs < dc[:, None])
        blocked = ((ins & (xs < start[sl, None]) & (ys >= ray_in))
                   | (ins & (xs > end[sl, None]) & (ys >= ray_out)))
        clear[sl] = ~blocked.any(axis=1)
    return clear


def _strength(b: _Batch, p_idx: np.ndarray, xr: np.ndarray, yr: np.ndarray, psi: np.ndarray, sigma: np.ndarray,
              dd: np.ndarray, ground: str, polarisation: str, k: float) -> dict[str, Any]:
    """The figures of each kept candidate: surface, Fresnel, divergence and roughness factors, level."""
    f = b.f
    nearest = np.argmin(np.abs(b.x[p_idx] - xr[:, None]), axis=1)
    wet = b.water[p_idx, nearest]
    ground_key = resolve_surface(ground)
    eta_ground = complex_permittivity(ground_key, f[p_idx])
    eta_water = complex_permittivity(water_type_for(ground_key), f[p_idx])
    ground_is_water = ground_key in ("sea", "sea-water", "fresh-water")
    eta = np.where(wet & ~np.bool_(ground_is_water), eta_water, eta_ground)
    R = fresnel_coefficient(psi, eta, polarisation)
    D = divergence_factor(xr, dd - xr, psi, k)
    rho = roughness_factor(sigma, psi, f[p_idx])
    G = R * D * rho
    ha_c, hb_c = b.ha[p_idx, 0], b.hb[p_idx, 0]
    delta = (np.hypot(xr, ha_c - yr) + np.hypot(dd - xr, hb_c - yr)) - np.hypot(dd, hb_c - ha_c)
    level = two_ray_level_db(G, delta, f[p_idx])
    return {"found": True, "point_m": xr, "grazing_rad": psi, "roughness_m": sigma,
            "over_water": wet | ground_is_water, "fresnel": R, "divergence": D, "roughness": rho,
            "coefficient": G, "path_difference_m": delta, "level_db": level}


def _strongest(empty: FacetReflections, k: float, stage: np.ndarray, p_idx: np.ndarray,
               values: dict[str, Any]) -> FacetReflections:
    """The strongest candidate of each path (by |coefficient|), and every candidate for the record."""
    strength = np.abs(values["coefficient"])
    order = np.lexsort((-strength, p_idx))
    first = np.ones(order.size, dtype=bool)
    first[1:] = p_idx[order][1:] != p_idx[order][:-1]
    best = order[first]
    out = {name: np.array(getattr(empty, name), copy=True) for name in (
        "found", "point_m", "plane_m", "slope", "intercept_m", "start_m", "end_m", "grazing_rad", "roughness_m",
        "over_water", "fresnel", "divergence", "roughness", "coefficient", "path_difference_m", "level_db")}
    pb = p_idx[best]
    for name, v in values.items():
        out[name][pb] = v if np.ndim(v) == 0 else np.asarray(v)[best]
    candidates = tuple(zip(p_idx.tolist(), values["point_m"].tolist(), strength.tolist(),
                           values["over_water"].tolist(), values["start_m"].tolist(), values["end_m"].tolist()))
    return FacetReflections(k=k, candidates=candidates, stage=stage, **out)


def _empty_facets(P: int, k: float, stage: np.ndarray | None = None) -> FacetReflections:
    nan = np.full(P, np.nan)
    return FacetReflections(
        k=k, found=np.zeros(P, dtype=bool), point_m=nan.copy(), plane_m=nan.copy(), slope=nan.copy(),
        intercept_m=nan.copy(), start_m=nan.copy(), end_m=nan.copy(), grazing_rad=nan.copy(),
        roughness_m=nan.copy(), over_water=np.zeros(P, dtype=bool), fresnel=np.full(P, np.nan + 0j),
        divergence=nan.copy(), roughness=nan.copy(), coefficient=np.full(P, np.nan + 0j),
        path_difference_m=nan.copy(), level_db=nan.copy(), candidates=(),
        stage=np.zeros(P, dtype=np.int8) if stage is None else stage,
    )


# --- water on the path ------------------------------------------------------------------


def reflecting_surface(ground_m: np.ndarray, clutter_m: np.ndarray, n_samples: np.ndarray,
                       water: np.ndarray | None = None, sea_level_water: bool = False
                       ) -> tuple[np.ndarray, np.ndarray]:
    """The surface a ray reflects from and the water mask, both (paths, samples).

    Terrain plus clutter (NaN as 0); samples marked water (``water``, and with
    ``sea_level_water`` those within 0.5 m of the datum's zero) lose their
    clutter and take the median terrain height of their run of water (a water
    body is flat; calm water, the worst case: common practice).
    """
    ground = np.nan_to_num(np.asarray(ground_m, dtype=float))
    surface = ground + np.nan_to_num(np.asarray(clutter_m, dtype=float))
    col = np.arange(ground.shape[1])[None, :]
    inside = col < np.asarray(n_samples)[:, None]
    mask = np.zeros(ground.shape, dtype=bool) if water is None else np.asarray(water, dtype=bool) & inside
    if sea_level_water:
        mask |= inside & (np.abs(ground) <= SEA_LEVEL_TOLERANCE_M)
    for p in np.flatnonzero(mask.any(axis=1)):
        row = mask[p].astype(np.int8)
        edges = np.flatnonzero(np.diff(np.concatenate([[0], row, [0]])))
        for a, b in zip(edges[::2], edges[1::2]):
            surface[p, a:b] = np.median(ground[p, a:b])
    return surface, mask
