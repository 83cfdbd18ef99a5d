"""Multipath (clear-air) fading on terrestrial paths: ITU-R P.530-17 section 2.3.

* Section 2.3.1, detailed method for small percentages of time: geoclimatic
  factor K from dN1 and sa (eq. 4), path inclination (eq. 5) and the
  percentage pw of the average worst month that a fade depth A is exceeded
  (eq. 7); p0 = pw at A = 0 is the multipath occurrence factor.
* Section 2.3.2, any fade depth: the interpolation between the deep-fade tail
  and the shallow-fade range through the transition depth At.
* Section 2.3.4, worst month to average year (geoclimatic conversion factor
  Delta G, written from memory of P.530-17 and marked so in the tests).

Inputs: dN1, the point refractivity gradient in the lowest 65 m not exceeded
for 1 % of an average year (N-units/km, ITU-R P.453 maps), and sa, the
standard deviation of terrain heights in a 110 km x 110 km area (m); both are
planner inputs.  Antenna altitudes are heights above sea level in metres.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError, ModelValidityError

__all__ = [
    "P530_MULTIPATH_MAX_FREQ_GHZ",
    "SHALLOW_PEAK_MIN_P0_PCT",
    "multipath_min_freq_ghz",
    "multipath_validity_problem",
    "check_multipath_validity",
    "geoclimatic_factor",
    "path_inclination_mrad",
    "multipath_occurrence_factor_pct",
    "deep_fade_exceedance_pct",
    "fade_exceedance_pct",
    "occurrence_factor_too_large",
    "shallow_fade_peak",
    "fade_exceedance_envelope_pct",
    "worst_month_to_year_db",
]

#: Upper frequency of the P.530-17 section 2.3 multipath method, GHz (from memory).
P530_MULTIPATH_MAX_FREQ_GHZ = 45.0
#: Occurrence factor p0 (%) below which the section 2.3.2 curve falls with depth
#: everywhere (it first rises again near 2500 %); smaller p0 skip the peak search.
SHALLOW_PEAK_MIN_P0_PCT = 1000.0


def multipath_min_freq_ghz(distance_m: ArrayLike) -> np.ndarray:
    """Lowest frequency of the P.530-17 section 2.3 method, f_min = 15 / d GHz, d in km (from memory)."""
    return 15.0 / (np.asarray(distance_m, dtype=float) / 1000.0)


def multipath_validity_problem(distance_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Boolean array: True where (d, f) lies outside f_min = 15/d to 45 GHz (P.530-17 section 2.3)."""
    d = np.asarray(distance_m, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    with np.errstate(divide="ignore"):
        return ~((f >= multipath_min_freq_ghz(d) * (1.0 - 1e-12)) & (f <= P530_MULTIPATH_MAX_FREQ_GHZ))


def check_multipath_validity(distance_m: ArrayLike, freq_ghz: ArrayLike) -> None:
    """Raise :class:`ModelValidityError` where a path lies outside the P.530 multipath method's range."""
    d, f = np.broadcast_arrays(np.asarray(distance_m, dtype=float), np.asarray(freq_ghz, dtype=float))
    if np.any(~(d > 0.0)):
        raise InputError(f"path length must be positive metres, got {d[~(d > 0.0)].flat[0]!r}")
    bad = multipath_validity_problem(d, f)
    if np.any(bad):
        i = int(np.flatnonzero(bad.ravel())[0])
        dk, fi = d.ravel()[i] / 1000.0, f.ravel()[i]
        raise ModelValidityError(
            f"multipath fading (ITU-R P.530-17 section 2.3) applies from 15/d GHz to "
            f"{P530_MULTIPATH_MAX_FREQ_GHZ:g} GHz: a {dk:.2f} km path needs "
            f"{15.0 / dk:.2f}-{P530_MULTIPATH_MAX_FREQ_GHZ:g} GHz, got {fi:g} GHz"
        )


def geoclimatic_factor(dn1_n_per_km: ArrayLike, terrain_roughness_m: ArrayLike) -> np.ndarray:
    """Geoclimatic factor K = 10^(-4.4 - 0.0027 dN1) (10 + sa)^-0.46 (ITU-R P.530-17 eq. 4)."""
    dn1 = np.asarray(dn1_n_per_km, dtype=float)
    sa = np.asarray(terrain_roughness_m, dtype=float)
    if np.any(~np.isfinite(dn1)):
        raise InputError("refractivity gradient dN1 must be a finite number of N-units/km")
    if np.any(~(sa >= 0.0)):
        raise InputError(f"terrain roughness sa must be zero or positive metres, got {sa[~(sa >= 0.0)].flat[0]!r}")
    return np.power(10.0, -4.4 - 0.0027 * dn1) * np.power(10.0 + sa, -0.46)


def path_inclination_mrad(altitude_a_m: ArrayLike, altitude_b_m: ArrayLike, distance_m: ArrayLike) -> np.ndarray:
    """Magnitude of the path inclination |hr - he| / d in mrad, heights in m, d in km (ITU-R P.530-17 eq. 5)."""
    ha = np.asarray(altitude_a_m, dtype=float)
    hb = np.asarray(altitude_b_m, dtype=float)
    d_km = np.asarray(distance_m, dtype=float) / 1000.0
    return np.abs(hb - ha) / d_km


def multipath_occurrence_factor_pct(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    dn1_n_per_km: ArrayLike,
    terrain_roughness_m: ArrayLike,
) -> np.ndarray:
    """Multipath occurrence factor p0 of the average worst month, %.

    p0 = K d^3.4 (1 + |ep|)^-1.03 f^0.8 10^(-0.00076 hL) with d in km, f in GHz,
    hL the lower antenna altitude in m (ITU-R P.530-17 eq. 7 at A = 0, i.e. eq. 10).
    Raises :class:`ModelValidityError` outside 15/d to 45 GHz.
    """
    check_multipath_validity(distance_m, freq_ghz)
    d_km = np.asarray(distance_m, dtype=float) / 1000.0
    f = np.asarray(freq_ghz, dtype=float)
    k = geoclimatic_factor(dn1_n_per_km, terrain_roughness_m)
    ep = path_inclination_mrad(altitude_a_m, altitude_b_m, distance_m)
    h_low = np.minimum(np.asarray(altitude_a_m, dtype=float), np.asarray(altitude_b_m, dtype=float))
    return k * d_km**3.4 * (1.0 + ep) ** -1.03 * f**0.8 * np.power(10.0, -0.00076 * h_low)


def deep_fade_exceedance_pct(fade_depth_db: ArrayLike, p0_pct: ArrayLike) -> np.ndarray:
    """Percentage of time pw = p0 10^(-A/10) that fade depth A is exceeded, deep-fade tail (ITU-R P.530-17 eq. 7)."""
    return np.asarray(p0_pct, dtype=float) * np.power(10.0, -np.asarray(fade_depth_db, dtype=float) / 10.0)


def fade_exceedance_pct(fade_depth_db: ArrayLike, p0_pct: ArrayLike) -> np.ndarray:
    """Percentage of time that fade depth A >= 0 dB is exceeded, any depth, %.

    ITU-R P.530-17 section 2.3.2: At = 25 + 1.2 log10 p0; for A >= At the
    deep-fade tail p0 10^(-A/10); below it the interpolation
    qa' = -20 log10(-ln((100 - pt)/100)) / At, pt = p0 10^(-At/10),
    qt = (qa' - 2) / [(1 + 0.3 10^(-At/20)) 10^(-0.016 At)] - 4.3 (10^(-At/20) + At/800),
    qa = 2 + (1 + 0.3 10^(-A/20)) 10^(-0.016 A) (qt + 4.3 (10^(-A/20) + A/800)),
    pw = 100 (1 - exp(-10^(-qa A/20))).
    """
    a = np.asarray(fade_depth_db, dtype=float)
    p0 = np.asarray(p0_pct, dtype=float)
    if np.any(~(a >= 0.0)):
        raise InputError(f"fade depth must be zero or positive dB, got {a[~(a >= 0.0)].flat[0]!r}")
    if np.any(~(p0 > 0.0)):
        raise InputError(f"multipath occurrence factor p0 must be positive %, got {p0[~(p0 > 0.0)].flat[0]!r}")
    a, p0 = np.broadcast_arrays(a, p0)
    a_t = 25.0 + 1.2 * np.log10(p0)
    p_t = p0 * np.power(10.0, -a_t / 10.0)
    if np.any(p_t >= 100.0):
        raise ModelValidityError(
            f"multipath occurrence factor p0 = {p0[p_t >= 100.0].flat[0]:.3g} % is too large for "
            "ITU-R P.530-17 section 2.3.2"
        )
    # -ln(1 - pt/100) by log1p: the plain form rounds to log10(0) for the tiny p0 of very short paths.
    qa_prime = -20.0 * np.log10(-np.log1p(-p_t / 100.0)) / a_t
    q_t = (qa_prime - 2.0) / ((1.0 + 0.3 * np.power(10.0, -a_t / 20.0)) * np.power(10.0, -0.016 * a_t)) - 4.3 * (
        np.power(10.0, -a_t / 20.0) + a_t / 800.0
    )
    q_a = 2.0 + (1.0 + 0.3 * np.power(10.0, -a / 20.0)) * np.power(10.0, -0.016 * a) * (
        q_t + 4.3 * (np.power(10.0, -a / 20.0) + a / 800.0)
    )
    shallow = -100.0 * np.expm1(-np.power(10.0, -q_a * a / 20.0))  # 1 - exp(-x) without rounding to 0
    deep = p0 * np.power(10.0, -a / 10.0)
    return np.where(a >= a_t, deep, shallow)


def occurrence_factor_too_large(p0_pct: ArrayLike) -> np.ndarray:
    """Boolean array: True where p0 (%) is too large for ITU-R P.530-17 section 2.3.2.

    The interpolation needs pt = p0 10^(-At/10) below 100 %, At = 25 + 1.2 log10 p0,
    i.e. p0 below about 1.3e5 % (very long paths, extreme dN1).
    """
    p0 = np.asarray(p0_pct, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        p_t = p0 * np.power(10.0, -(25.0 + 1.2 * np.log10(p0)) / 10.0)
    return ~(p_t < 100.0)


def shallow_fade_peak(p0_pct: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Depth (dB) and height (%) of the local peak of the P.530 section 2.3.2 curve, if any.

    For very large p0 (above roughly 2500 %) the shallow-fade interpolation of
    ITU-R P.530-17 section 2.3.2 dips and rises again while pw is some tens of
    per cent.  Returns (-inf, 0) for curves that fall everywhere.  The peak is
    bracketed on a 256-point grid over 0..At and refined by golden-section
    search (common practice numerics).
    """
    p0 = np.asarray(p0_pct, dtype=float)
    flat = p0.ravel()
    peak_a = np.full(flat.shape, -np.inf)
    peak_pw = np.zeros(flat.shape)
    # Below SHALLOW_PEAK_MIN_P0_PCT the curve falls everywhere (checked in the tests).
    big = np.flatnonzero(flat >= SHALLOW_PEAK_MIN_P0_PCT)
    if big.size == 0:
        return peak_a.reshape(p0.shape), peak_pw.reshape(p0.shape)
    a_t = 25.0 + 1.2 * np.log10(flat[big])
    grid = np.linspace(0.0, 1.0, 257)[None, :] * a_t[:, None]
    on_grid = fade_exceedance_pct(grid, flat[big][:, None])
    rises = np.diff(on_grid, axis=1) > 0.0
    local = np.flatnonzero(rises.any(axis=1))
    rows = big[local]
    if rows.size:
        rises, grid = rises[local], grid[local]
        # Last grid point before the curve turns down again brackets the peak.
        idx = np.where(rises, np.arange(rises.shape[1])[None, :], -1).max(axis=1) + 1
        sel = np.arange(rows.size)
        lo = grid[sel, np.maximum(idx - 1, 0)]
        hi = grid[sel, np.minimum(idx + 1, grid.shape[1] - 1)]
        pb = flat[rows]
        ratio = (np.sqrt(5.0) - 1.0) / 2.0
        for _ in range(80):
            x1 = hi - ratio * (hi - lo)
            x2 = lo + ratio * (hi - lo)
            left_higher = fade_exceedance_pct(x1, pb) >= fade_exceedance_pct(x2, pb)
            hi = np.where(left_higher, x2, hi)
            lo = np.where(left_higher, lo, x1)
        peak_a[rows] = (lo + hi) / 2.0
        peak_pw[rows] = fade_exceedance_pct(peak_a[rows], pb)
    return peak_a.reshape(p0.shape), peak_pw.reshape(p0.shape)


def fade_exceedance_envelope_pct(
    fade_depth_db: ArrayLike,
    p0_pct: ArrayLike,
    peak: tuple[ArrayLike, ArrayLike] | None = None,
) -> np.ndarray:
    """Falling envelope of :func:`fade_exceedance_pct`: the largest pw at any depth >= A, %.

    Equal to the ITU-R P.530-17 section 2.3.2 value wherever that curve falls
    with depth, i.e. everywhere except below the local peak that very large p0
    produce (see :func:`shallow_fade_peak`); there the envelope holds the
    peak's height, so an outage never shrinks as the fade margin shrinks.
    ``peak`` may pass a precomputed ``shallow_fade_peak(p0_pct)``.
    """
    a = np.asarray(fade_depth_db, dtype=float)
    p0 = np.asarray(p0_pct, dtype=float)
    pw = fade_exceedance_pct(a, p0)
    peak_a, peak_pw = shallow_fade_peak(p0) if peak is None else peak
    return np.where(a <= peak_a, np.maximum(pw, peak_pw), pw)


def worst_month_to_year_db(
    latitude_deg: ArrayLike, distance_m: ArrayLike, inclination_mrad: ArrayLike
) -> np.ndarray:
    """Geoclimatic conversion factor Delta G from average worst month to average year, dB.

    Delta G = 10.5 - 5.6 log10(1.1 +- |cos 2 xi|^0.7) - 2.7 log10 d + 1.7 log10(1 + |ep|),
    at most 10.8 dB; + for |xi| <= 45 deg, - above; d in km (ITU-R P.530-17
    section 2.3.4, eq. 23; from memory).  The annual percentage is
    p = pw 10^(-Delta G / 10).
    """
    xi = np.asarray(latitude_deg, dtype=float)
    if np.any(~(np.abs(xi) <= 90.0)):
        raise InputError(f"latitude must lie within -90..90 deg, got {xi[~(np.abs(xi) <= 90.0)].flat[0]!r}")
    d_km = np.asarray(distance_m, dtype=float) / 1000.0
    ep = np.asarray(inclination_mrad, dtype=float)
    c = np.abs(np.cos(np.radians(2.0 * xi))) ** 0.7
    sign = np.where(np.abs(xi) <= 45.0, 1.0, -1.0)
    delta_g = 10.5 - 5.6 * np.log10(1.1 + sign * c) - 2.7 * np.log10(d_km) + 1.7 * np.log10(1.0 + np.abs(ep))
    return np.minimum(delta_g, 10.8)
