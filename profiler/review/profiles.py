"""Profiles of the reviewed links, recomputed with the link engine and packed small for the page.

The screening result holds no profiles, so they are made again when the
page is made, by the same code that screened: geodesic samples at the
link's own spacing (:func:`profiler.profile.build_profiles`), a surface
model's clutter (:mod:`profiler.obstructions`) and the clearance at the
design k (:func:`profiler.geometry.clearance`).  The clearance found is
compared with the one in the result, so a page drawn over other terrain
than the one screened says so.

Each profile is reduced to ``points`` heights evenly spaced along the path,
each the highest sample within its stretch (so a narrow ridge is never
lost between two points), rounded to 0.1 m and stored as uint16 steps above
the path's lowest point.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..units import wavelength_m
from .result import VERDICT_ORDER, ScreeningResult

__all__ = ["PackedProfiles", "recompute_profiles", "freq_ghz_of", "DEFAULT_POINTS", "STEP_M",
           "SUBBATCH_SAMPLES"]

#: Heights kept per profile on the page.
DEFAULT_POINTS = 128
#: Height step of the stored profiles, m (common practice: a decimetre is below any raster's accuracy).
STEP_M = 0.1
#: Samples (paths x widest) handed to the engine at once.
SUBBATCH_SAMPLES = 400_000
#: A recomputed worst clearance further than this from the result's, m, counts as a mismatch (our own
#: threshold: the same engine on the same raster agrees to far less; another raster differs by far more).
MISMATCH_M = 0.05
_BLANK = 65535  # uint16 code of a height with no data


@dataclass
class PackedProfiles:
    """Profiles of some links: ``link`` (indices into the result's rows), ``base_m`` (float32, the
    lowest ground of each), ``ground`` and ``clutter`` (uint16 steps of :data:`STEP_M` above
    ``base_m`` and above the ground; 65535 = no data), ``points`` per profile.

    ``mismatch`` counts links whose recomputed worst clearance differs from the
    result's by more than :data:`MISMATCH_M`; ``largest_mismatch_m`` is the
    largest difference; ``problems`` maps a link to why it has no profile.
    """

    link: np.ndarray
    base_m: np.ndarray
    ground: np.ndarray
    clutter: np.ndarray | None
    points: int
    mismatch: int = 0
    largest_mismatch_m: float = 0.0
    problems: dict[int, str] | None = None


def freq_ghz_of(result: ScreeningResult) -> float | None:
    """Frequency of the screened radio, GHz: the run description's, else from the free-space loss.

    Free-space loss L = 20 log10(4 pi d / lambda) (ITU-R P.525-4 eq. 4) gives
    lambda = 4 pi d / 10^(L/20) for every profiled row; their median is used.
    """
    run = result.run or {}
    radio = run.get("radio")
    if isinstance(radio, dict):
        f = radio.get("freq_ghz")
        if isinstance(f, (int, float)) and np.isfinite(f) and f > 0:
            return float(f)
    fsl = result.numbers.get("free_space_db")
    dist = result.numbers.get("distance_km")
    if fsl is None or dist is None:
        return None
    ok = np.isfinite(fsl) & np.isfinite(dist) & (dist > 0)
    if not ok.any():
        return None
    lam = 4.0 * np.pi * dist[ok] * 1000.0 / 10.0 ** (fsl[ok] / 20.0)
    f_ghz = float(wavelength_m(1.0) / np.median(lam))  # lambda(f) = lambda(1 GHz) / f
    return f_ghz


def chosen_links(result: ScreeningResult, limit: int) -> np.ndarray:
    """Indices of the links that get a profile: the best ranked that were profiled, at most ``limit``."""
    profiled = np.flatnonzero(result.verdict_code != VERDICT_ORDER.index("error"))
    order = profiled[np.argsort(result.rank[profiled], kind="stable")]
    return order[:max(int(limit), 0)]


def recompute_profiles(result: ScreeningResult, dem: Sequence[str], surface: Sequence[str] = (), *,
                       limit: int, points: int = DEFAULT_POINTS, freq_ghz: float | None = None,
                       vertical_unit: str | None = None) -> PackedProfiles:
    """Profiles of the ``limit`` best-ranked profiled links over the rasters ``dem`` (and ``surface``)."""
    from ..obstructions import Surroundings
    from ..profile import build_profiles
    from ..terrain import ElevationModel

    links = chosen_links(result, limit)
    model = ElevationModel(list(dem), vertical_unit=vertical_unit)
    surroundings = Surroundings(surface=ElevationModel(list(surface))) if surface else None
    if surroundings is not None:
        surroundings.check_datum(model)
    n = links.size
    base = np.zeros(n, np.float32)
    ground = np.full((n, points), _BLANK, np.uint16)
    clutter = np.zeros((n, points), np.uint16) if surroundings is not None else None
    problems: dict[int, str] = {}
    lat, lon = result.site_lat, result.site_lon
    a, b = result.a[links], result.b[links]
    num = result.numbers
    spacing_all = num.get("spacing_m")
    spacing = spacing_all[links] if spacing_all is not None else np.full(n, np.nan)
    length_m = num["distance_km"][links] * 1000.0
    with np.errstate(invalid="ignore", divide="ignore"):
        widths = np.where(np.isfinite(spacing) & (spacing > 0), np.ceil(length_m / spacing) + 1, 1000.0)
    order = np.argsort(widths, kind="stable")
    mismatch, largest = 0, 0.0
    start = 0
    while start < n:
        stop = start + 1
        while stop < n and (stop - start + 1) * widths[order[stop]] <= SUBBATCH_SAMPLES:
            stop += 1
        rows = order[start:stop]
        start = stop
        sp = spacing[rows]
        given = np.isfinite(sp) & (sp > 0)
        # The result's own spacing gives the screened samples again; a result without one uses the default.
        spacing_arg = sp if given.all() else None
        idx = links[rows]
        prof = build_profiles(model, lat[a[rows]], lon[a[rows]], lat[b[rows]], lon[b[rows]],
                              spacing_m=spacing_arg,
                              labels=[f"{result.site_names[result.a[i]]} - {result.site_names[result.b[i]]}"
                                      for i in idx])
        if surroundings is not None:
            prof = surroundings.apply(prof, model).profiles
        bad = np.array([p is not None for p in prof.problems])
        for j in np.flatnonzero(bad):
            problems[int(idx[j])] = str(prof.problems[j])
        d, res = _check_clearance(prof, result, idx, freq_ghz)
        if d.size:
            over = np.abs(d) > MISMATCH_M
            mismatch += int(np.count_nonzero(over & ~bad))
            finite = np.abs(d[~bad & np.isfinite(d)])
            if finite.size:
                largest = max(largest, float(finite.max()))
        del res
        g, c = _binned(prof, points)
        gmin = np.nanmin(np.where(np.isfinite(g), g, np.inf), axis=1)
        gmin = np.where(np.isfinite(gmin), np.floor(gmin / STEP_M) * STEP_M, 0.0)
        base[rows] = gmin.astype(np.float32)
        steps = np.round((g - base[rows].astype(float)[:, None]) / STEP_M)
        ground[rows] = np.where(np.isfinite(steps), np.clip(steps, 0, _BLANK - 1), _BLANK).astype(np.uint16)
        if clutter is not None:
            cs = np.round(np.nan_to_num(c, nan=0.0) / STEP_M)
            clutter[rows] = np.clip(cs, 0, _BLANK - 1).astype(np.uint16)
    return PackedProfiles(link=links.astype(np.int32), base_m=base, ground=ground, clutter=clutter, points=points,
                          mismatch=mismatch, largest_mismatch_m=largest, problems=problems)


def _check_clearance(prof, result: ScreeningResult, idx: np.ndarray,
                     freq_ghz: float | None) -> tuple[np.ndarray, object]:
    """Recomputed minus recorded worst clearance at the design k, m (empty when it cannot be checked)."""
    from ..geometry import clearance

    num = result.numbers
    need = ("antenna_a_amsl_m", "antenna_b_amsl_m", "worst_clearance_m", "k")
    if freq_ghz is None or any(c not in num for c in need):
        return np.zeros(0), None
    ks = num["k"][idx]
    out = np.full(idx.size, np.nan)
    for k in np.unique(ks[np.isfinite(ks)]):
        sel = np.flatnonzero(ks == k)
        surface = np.nan_to_num(prof.surface_m[sel], nan=-1e4)
        c = clearance(prof.distance_m[sel], surface, prof.interior[sel], prof.length_m[sel],
                      num["antenna_a_amsl_m"][idx[sel]], num["antenna_b_amsl_m"][idx[sel]], freq_ghz, float(k))
        out[sel] = c.worst_clearance_m - num["worst_clearance_m"][idx[sel]]
    return out, None


def _binned(prof, points: int) -> tuple[np.ndarray, np.ndarray]:
    """Ground and clutter (m) at ``points`` even stops along each path: the highest sample of each stretch.

    The first and last stops are the sites' own samples.  The clutter is the surface's highest point of the stretch minus the ground
    drawn there.  Stretches holding no sample are interpolated.
    """
    n_paths, width = prof.distance_m.shape
    length = np.where(prof.length_m > 0, prof.length_m, 1.0)
    pos = np.rint(prof.distance_m / length[:, None] * (points - 1)).astype(np.int64)
    # The end stops are the two sites exactly (the masts stand there); interior samples fill the rest.
    pos = np.where(prof.interior, np.clip(pos, 1, points - 2), np.where(prof.distance_m > 0, points - 1, 0))
    flat = (np.arange(n_paths)[:, None] * points + pos).ravel()
    g = np.full(n_paths * points, -np.inf)
    s = np.full(n_paths * points, -np.inf)
    ground = np.nan_to_num(prof.ground_m, nan=-np.inf).ravel()
    surface = np.nan_to_num(prof.surface_m, nan=-np.inf).ravel()
    np.maximum.at(g, flat, ground)
    np.maximum.at(s, flat, surface)
    g = g.reshape(n_paths, points)
    s = s.reshape(n_paths, points)
    stops = np.arange(points, dtype=float)
    for i in range(n_paths):
        have = np.isfinite(g[i])
        if have.all():
            continue
        if have.any():
            g[i] = np.interp(stops, stops[have], g[i][have])
            s[i] = np.where(np.isfinite(s[i]), s[i], g[i])
        else:
            g[i] = np.nan
            s[i] = np.nan
    return g, np.maximum(s - g, 0.0)
