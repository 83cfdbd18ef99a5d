"""Rain attenuation: ITU-R P.838-3 specific attenuation and ITU-R P.530-17 section 2.4.1 path statistics.

Specific attenuation gamma_R = k R^alpha with k and alpha from the curve fits
of ITU-R P.838-3 (03/2005), equations 2-5 and Tables 1-4, for any linear or
circular polarisation and path elevation (equations 4-5).  The attenuation
exceeded for p % of an average year on a terrestrial path follows ITU-R
P.530-17 (12/2017), section 2.4.1, steps 1-5: distance factor r, A0.01 =
gamma_R r d, and the power law in p with coefficients C0 ... C3.

All functions take arrays that broadcast against each other (many paths at
once).  The 0.01 % rain rate R0.01 (mm/h, 1-minute integration) is a planner
input; no rain-rate map is built in.
"""

from __future__ import annotations

import warnings
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError, ModelValidityError, ModelValidityWarning

__all__ = [
    "POLARISATION_TILT_DEG",
    "P838_MIN_FREQ_GHZ",
    "P838_MAX_FREQ_GHZ",
    "P530_RAIN_MAX_FREQ_GHZ",
    "P530_RAIN_TESTED_MAX_DISTANCE_KM",
    "P530_RAIN_MIN_PCT",
    "P530_RAIN_MAX_PCT",
    "polarisation_tilt_deg",
    "rain_coefficients_hv",
    "rain_coefficients",
    "rain_specific_attenuation_db_km",
    "rain_distance_factor",
    "rain_attenuation_001_db",
    "rain_effective_length_m",
    "rain_percentage_coefficients",
    "rain_attenuation_exceeded_db",
    "rain_exceedance_pct",
]

#: Polarisation tilt angle tau relative to the horizontal, degrees (ITU-R P.838-3, eq. 4-5):
#: 0 horizontal, 90 vertical, 45 circular.
POLARISATION_TILT_DEG: dict[str, float] = {"horizontal": 0.0, "vertical": 90.0, "circular": 45.0}

#: Frequency range of the P.838-3 curve fits, GHz.
P838_MIN_FREQ_GHZ = 1.0
P838_MAX_FREQ_GHZ = 1000.0
#: Upper frequency to which the P.530 rain path method is applied, GHz
#: (ITU-R P.530-17 section 2.4.1 states validity up to at least 100 GHz; from memory).
P530_RAIN_MAX_FREQ_GHZ = 100.0
#: Path length up to which the P.530 rain path method was tested, km (from memory);
#: longer paths give a ModelValidityWarning.
P530_RAIN_TESTED_MAX_DISTANCE_KM = 60.0
#: Percentage range of the P.530-17 power law (eq. 34), % of an average year.
P530_RAIN_MIN_PCT = 0.001
P530_RAIN_MAX_PCT = 1.0

# ITU-R P.838-3 Tables 1-4: (a_j, b_j, c_j) rows, then (m, c).
_KH = (
    ((-5.33980, -0.10008, 1.13098), (-0.35351, 1.26970, 0.45400), (-0.23789, 0.86036, 0.15354), (-0.94158, 0.64552, 0.16817)),
    (-0.18961, 0.71147),
)
_KV = (
    ((-3.80595, 0.56934, 0.81061), (-3.44965, -0.22911, 0.51059), (-0.39902, 0.73042, 0.11899), (0.50167, 1.07319, 0.27195)),
    (-0.16398, 0.63297),
)
_ALPHA_H = (
    (
        (-0.14318, 1.82442, -0.55187),
        (0.29591, 0.77564, 0.19822),
        (0.32177, 0.63773, 0.13164),
        (-5.37610, -0.96230, 1.47828),
        (16.1721, -3.29980, 3.43990),
    ),
    (0.67849, -1.95537),
)
_ALPHA_V = (
    (
        (-0.07771, 2.33840, -0.76284),
        (0.56727, 0.95545, 0.54039),
        (-0.20238, 1.14520, 0.26809),
        (-48.2991, 0.791669, 0.116226),
        (48.5833, 0.791459, 0.116479),
    ),
    (-0.053739, 0.83433),
)


def _fit(log_f: np.ndarray, table: tuple) -> np.ndarray:
    """Sum of Gaussians plus a line in log10 f (ITU-R P.838-3, eqs. 2-3)."""
    rows, (m, c) = table
    total = m * log_f + c
    for a, b, cc in rows:
        total = total + a * np.exp(-(((log_f - b) / cc) ** 2))
    return total


def _check_freq(f: np.ndarray, low: float, high: float, what: str) -> None:
    bad = ~((f >= low) & (f <= high))
    if np.any(bad):
        raise ModelValidityError(
            f"frequency {np.asarray(f)[bad].flat[0]:g} GHz is outside {low:g}-{high:g} GHz, the range of {what}"
        )


def polarisation_tilt_deg(polarisation: str | float) -> float:
    """Tilt angle tau in degrees for a polarisation name or a tilt given in degrees.

    'horizontal' 0, 'vertical' 90, 'circular' 45 (ITU-R P.838-3, eq. 4-5).
    """
    if isinstance(polarisation, str):
        key = polarisation.strip().lower()
        if key in POLARISATION_TILT_DEG:
            return POLARISATION_TILT_DEG[key]
        try:
            polarisation = float(key)
        except ValueError:
            raise InputError(
                f"unknown polarisation {polarisation!r}: use one of "
                f"{', '.join(POLARISATION_TILT_DEG)} or a tilt angle in degrees"
            ) from None
    tau = float(polarisation)
    if not -90.0 <= tau <= 180.0:
        raise InputError(f"polarisation tilt {tau:g} deg is outside -90..180 deg")
    return tau


def rain_coefficients_hv(freq_ghz: ArrayLike) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Coefficients (k_H, alpha_H, k_V, alpha_V) for horizontal and vertical polarisation.

    ITU-R P.838-3, equations 2-3 with Tables 1-4 (k in dB/km per (mm/h)^alpha);
    frequency 1-1000 GHz.
    """
    f = np.asarray(freq_ghz, dtype=float)
    _check_freq(f, P838_MIN_FREQ_GHZ, P838_MAX_FREQ_GHZ, "ITU-R P.838-3 rain coefficients")
    log_f = np.log10(f)
    k_h = np.power(10.0, _fit(log_f, _KH))
    k_v = np.power(10.0, _fit(log_f, _KV))
    return k_h, _fit(log_f, _ALPHA_H), k_v, _fit(log_f, _ALPHA_V)


def rain_coefficients(
    freq_ghz: ArrayLike, elevation_deg: ArrayLike = 0.0, tilt_deg: ArrayLike = 0.0
) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients (k, alpha) for a path elevation theta and polarisation tilt tau, degrees.

    k = [kH + kV + (kH - kV) cos^2(theta) cos(2 tau)] / 2,
    alpha = [kH aH + kV aV + (kH aH - kV aV) cos^2(theta) cos(2 tau)] / (2 k)
    (ITU-R P.838-3, equations 4-5).
    """
    k_h, a_h, k_v, a_v = rain_coefficients_hv(freq_ghz)
    factor = np.cos(np.radians(np.asarray(elevation_deg, dtype=float))) ** 2 * np.cos(
        np.radians(2.0 * np.asarray(tilt_deg, dtype=float))
    )
    k = (k_h + k_v + (k_h - k_v) * factor) / 2.0
    alpha = (k_h * a_h + k_v * a_v + (k_h * a_h - k_v * a_v) * factor) / (2.0 * k)
    return k, alpha


def _check_rain_rate(rain_rate_mm_h: ArrayLike) -> np.ndarray:
    r = np.asarray(rain_rate_mm_h, dtype=float)
    if np.any(~(r >= 0.0)):
        raise InputError(f"rain rate must be zero or positive mm/h, got {r[~(r >= 0.0)].flat[0]!r}")
    return r


def rain_specific_attenuation_db_km(
    rain_rate_mm_h: ArrayLike,
    freq_ghz: ArrayLike,
    elevation_deg: ArrayLike = 0.0,
    tilt_deg: ArrayLike = 0.0,
) -> np.ndarray:
    """Specific rain attenuation gamma_R = k R^alpha, dB/km (ITU-R P.838-3, eq. 1)."""
    rate = _check_rain_rate(rain_rate_mm_h)
    k, alpha = rain_coefficients(freq_ghz, elevation_deg, tilt_deg)
    return k * np.power(rate, alpha)


def rain_distance_factor(
    distance_m: ArrayLike, rain_rate_mm_h: ArrayLike, freq_ghz: ArrayLike, alpha: ArrayLike
) -> np.ndarray:
    """Distance factor r of the effective path length d_eff = r d (dimensionless).

    r = 1 / (0.477 d^0.633 R^(0.073 alpha) f^0.123 - 10.579 (1 - exp(-0.024 d))),
    d in km, limited to at most 2.5 (ITU-R P.530-17, section 2.4.1, step 3, eq. 32).
    A denominator at or below 0.4 (where the formula would exceed the limit or
    change sign) gives the limit 2.5.
    """
    d_km = np.asarray(distance_m, dtype=float) / 1000.0
    rate = _check_rain_rate(rain_rate_mm_h)
    f = np.asarray(freq_ghz, dtype=float)
    a = np.asarray(alpha, dtype=float)
    denominator = 0.477 * d_km**0.633 * rate ** (0.073 * a) * f**0.123 - 10.579 * (1.0 - np.exp(-0.024 * d_km))
    with np.errstate(divide="ignore"):
        return np.where(denominator > 0.4, 1.0 / np.maximum(denominator, 0.4), 2.5)


def _check_path(distance_m: ArrayLike, freq_ghz: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    d = np.asarray(distance_m, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    if np.any(~(d > 0.0)):
        raise InputError(f"path length must be positive metres, got {d[~(d > 0.0)].flat[0]!r}")
    _check_freq(f, P838_MIN_FREQ_GHZ, P530_RAIN_MAX_FREQ_GHZ, "the ITU-R P.530-17 rain attenuation method")
    long = d > P530_RAIN_TESTED_MAX_DISTANCE_KM * 1000.0
    if np.any(long):
        warnings.warn(
            f"path of {d[long].flat[0] / 1000.0:.1f} km is longer than the "
            f"{P530_RAIN_TESTED_MAX_DISTANCE_KM:g} km to which the ITU-R P.530 rain method was tested",
            ModelValidityWarning,
            stacklevel=3,
        )
    return d, f


def rain_attenuation_001_db(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    rain_rate_mm_h: ArrayLike,
    elevation_deg: ArrayLike = 0.0,
    tilt_deg: ArrayLike = 0.0,
) -> np.ndarray:
    """Path attenuation exceeded for 0.01 % of an average year, A0.01 = gamma_R r d, dB.

    ITU-R P.530-17, section 2.4.1, steps 1-4 (eq. 33), gamma_R at R0.01 from
    ITU-R P.838-3, with r d from :func:`rain_effective_length_m` (never
    falling with distance).  Frequency 1-100 GHz.
    """
    d, f = _check_path(distance_m, freq_ghz)
    rate = _check_rain_rate(rain_rate_mm_h)
    k, alpha = rain_coefficients(f, elevation_deg, tilt_deg)
    gamma = k * np.power(rate, alpha)
    return gamma * rain_effective_length_m(d, rate, f, alpha) / 1000.0


#: Paths shorter than this never reach the turn of d r(d), m (the turn lies beyond
#: 38 km for 1-100 GHz and 0.1-300 mm/h; checked in the tests).
_EFFECTIVE_LENGTH_TURN_MIN_M = 20_000.0


def rain_effective_length_m(
    distance_m: ArrayLike, rain_rate_mm_h: ArrayLike, freq_ghz: ArrayLike, alpha: ArrayLike
) -> np.ndarray:
    """Effective path length for rain, never falling as the path grows, m.

    d_eff = r d with r from ITU-R P.530-17 section 2.4.1 step 3 (eq. 32).
    Beyond some 40-180 km (depending on R0.01 and f) the product r d of the
    published formula reaches a maximum, dips and rises again, so A0.01 would
    fall as a path grows (11 GHz, 42 mm/h: 25.9 dB at 60 km, 24.9 dB at 85 km).
    The recommendation gives no rule for such paths (the method was tested to
    about 60 km, from memory); terrahop uses the largest r d' over d' <= d,
    i.e. the distance used in the reduction factor is limited to where r d
    peaks until the formula rises past that peak again.  Below 20 km this is
    eq. 32 exactly.
    """
    d, rate, f, a = np.broadcast_arrays(
        np.asarray(distance_m, dtype=float), np.asarray(rain_rate_mm_h, dtype=float),
        np.asarray(freq_ghz, dtype=float), np.asarray(alpha, dtype=float),
    )
    out = rain_distance_factor(d, rate, f, a) * d
    long = np.flatnonzero((d > _EFFECTIVE_LENGTH_TURN_MIN_M).ravel())
    if long.size == 0:
        return out
    dl, rl, fl, al = (x.ravel()[long] for x in (d, rate, f, a))

    def length(x: np.ndarray) -> np.ndarray:
        return rain_distance_factor(x, rl[:, None] if x.ndim == 2 else rl, fl[:, None] if x.ndim == 2 else fl,
                                    al[:, None] if x.ndim == 2 else al) * x

    # Largest r d' over 0 < d' <= d: a grid brackets it, golden-section search refines it
    # (common practice numerics; r d rises, may dip, then rises again).
    grid = np.linspace(0.0, 1.0, 257)[None, 1:] * dl[:, None]
    values = length(grid)
    j = np.argmax(values, axis=1)
    lo = grid[np.arange(long.size), np.maximum(j - 1, 0)]
    hi = grid[np.arange(long.size), np.minimum(j + 1, grid.shape[1] - 1)]
    ratio = (np.sqrt(5.0) - 1.0) / 2.0
    for _ in range(60):
        x1 = hi - ratio * (hi - lo)
        x2 = lo + ratio * (hi - lo)
        left = length(x1) >= length(x2)
        hi = np.where(left, x2, hi)
        lo = np.where(left, lo, x1)
    peak = np.maximum(length((lo + hi) / 2.0), values.max(axis=1))
    flat = out.reshape(-1).copy()
    flat[long] = np.maximum(flat[long], peak)
    return flat.reshape(out.shape)


def rain_percentage_coefficients(
    freq_ghz: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Coefficients (C0, C1, C2, C3) of the P.530 time-percentage power law.

    C0 = 0.12 below 10 GHz, 0.12 + 0.4 log10((f/10)^0.8) from 10 GHz
    (ITU-R P.530-17 section 2.4.1 step 5, as coded in the ITU-R SG3 reference
    implementation: the typeset "0.4 log10(f/10)^0.8" is read as the log of
    the power, not the power of the log; see the README); C1 = 0.07^C0 0.12^(1 - C0),
    C2 = 0.855 C0 + 0.546 (1 - C0), C3 = 0.139 C0 + 0.043 (1 - C0) (eqs. 35b-d).
    """
    f = np.asarray(freq_ghz, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        c0 = np.where(f >= 10.0, 0.12 + 0.4 * np.log10(np.power(f / 10.0, 0.8)), 0.12)
    c1 = np.power(0.07, c0) * np.power(0.12, 1.0 - c0)
    c2 = 0.855 * c0 + 0.546 * (1.0 - c0)
    c3 = 0.139 * c0 + 0.043 * (1.0 - c0)
    return c0, c1, c2, c3


def rain_attenuation_exceeded_db(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    rain_rate_mm_h: ArrayLike,
    percent_time: ArrayLike,
    elevation_deg: ArrayLike = 0.0,
    tilt_deg: ArrayLike = 0.0,
) -> np.ndarray:
    """Path attenuation exceeded for p % of an average year, dB.

    A_p = A0.01 C1 p^-(C2 + C3 log10 p) for 0.001 <= p <= 1 % (ITU-R P.530-17,
    section 2.4.1, step 5, eq. 34).  Percentages outside that range raise
    :class:`ModelValidityError`.
    """
    p = np.asarray(percent_time, dtype=float)
    bad = ~((p >= P530_RAIN_MIN_PCT) & (p <= P530_RAIN_MAX_PCT))
    if np.any(bad):
        raise ModelValidityError(
            f"time percentage {p[bad].flat[0]:g} % is outside 0.001-1 %, the range of the "
            "ITU-R P.530-17 rain attenuation method"
        )
    a001 = rain_attenuation_001_db(distance_m, freq_ghz, rain_rate_mm_h, elevation_deg, tilt_deg)
    _, c1, c2, c3 = rain_percentage_coefficients(freq_ghz)
    return a001 * c1 * np.power(p, -(c2 + c3 * np.log10(p)))


def rain_exceedance_pct(
    fade_margin_db: ArrayLike,
    a001_db: ArrayLike,
    freq_ghz: ArrayLike,
    beyond_range: Literal["bound", "clip"] = "bound",
) -> tuple[np.ndarray, np.ndarray]:
    """Percentage of an average year that rain attenuation exceeds a fade margin, and a flag.

    Inverts A_p = A0.01 C1 p^-(C2 + C3 log10 p) (ITU-R P.530-17 section 2.4.1,
    step 5, eq. 34) in closed form: with x = log10 p and
    L = log10(M / (A0.01 C1)), C3 x^2 + C2 x + L = 0, root on the falling branch.
    The law holds for 0.001 <= p <= 1 % only; beyond 0.001 % it reaches a
    maximum and turns (near p = 4.5e-6 % below 10 GHz), so it cannot be
    extended.  The result is tested against the range limits as margins:
    a margin above A_0.001 means p < 0.001 %, one below A_1 means p > 1 %.

    Returns ``(percent, side)``: ``side`` is -1 where p lies below 0.001 %,
    +1 where above 1 %, 0 inside the range.  Outside the range
    ``beyond_range="bound"`` gives NaN (the caller states the bound) and
    ``"clip"`` the range limit crossed (0.001 or 1 %), which is monotonic in
    the margin.  A zero A0.01 (no rain) gives 0 % (side 0); a margin of 0 dB
    or less gives 100 % (side 0: the link fails without rain).
    """
    if beyond_range not in ("bound", "clip"):
        raise InputError(f"beyond_range must be 'bound' or 'clip', got {beyond_range!r}")
    m = np.asarray(fade_margin_db, dtype=float)
    a001 = np.asarray(a001_db, dtype=float)
    _, c1, c2, c3 = rain_percentage_coefficients(freq_ghz)
    m, a001, c1, c2, c3 = np.broadcast_arrays(m, a001, c1, c2, c3)
    no_rain = a001 <= 0.0
    margin_pos = m > 0.0
    # Range limits as attenuations (eq. 34 at p = 0.001 and 1 %); a relative
    # tolerance keeps a margin equal to a limit inside the range.
    tol = 1e-9
    x_lo, x_hi = np.log10(P530_RAIN_MIN_PCT), np.log10(P530_RAIN_MAX_PCT)
    a_lo = a001 * c1 * np.power(10.0, -(c2 + c3 * x_lo) * x_lo)  # A_0.001, the largest attenuation covered
    a_hi = a001 * c1 * np.power(10.0, -(c2 + c3 * x_hi) * x_hi)  # A_1
    below = margin_pos & ~no_rain & (m > a_lo * (1.0 + tol))
    above = margin_pos & ~no_rain & (m < a_hi * (1.0 - tol))
    with np.errstate(divide="ignore", invalid="ignore"):
        level = np.log10(m / (a001 * c1))
        disc = np.maximum(c2**2 - 4.0 * c3 * level, 0.0)
        x = (-c2 + np.sqrt(disc)) / (2.0 * c3)
        pct = np.clip(np.power(10.0, x), P530_RAIN_MIN_PCT, P530_RAIN_MAX_PCT)
    if beyond_range == "bound":
        pct = np.where(below | above, np.nan, pct)
    else:
        pct = np.where(below, P530_RAIN_MIN_PCT, np.where(above, P530_RAIN_MAX_PCT, pct))
    pct = np.where(margin_pos, pct, 100.0)
    pct = np.where(no_rain, 0.0, pct)
    side = np.where(below, -1, np.where(above, 1, 0)).astype(np.int8)
    return pct, side
