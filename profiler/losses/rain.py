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
    ITU-R P.838-3.  Frequency 1-100 GHz.
    """
    d, f = _check_path(distance_m, freq_ghz)
    rate = _check_rain_rate(rain_rate_mm_h)
    k, alpha = rain_coefficients(f, elevation_deg, tilt_deg)
    gamma = k * np.power(rate, alpha)
    r = rain_distance_factor(d, rate, f, alpha)
    return gamma * r * d / 1000.0


def rain_percentage_coefficients(
    freq_ghz: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Coefficients (C0, C1, C2, C3) of the P.530 time-percentage power law.

    C0 = 0.12 below 10 GHz, 0.12 + 0.4 log10((f/10)^0.8) from 10 GHz
    (ITU-R P.530-17 section 2.4.1 step 5, eq. 35a, as coded in the ITU-R SG3
    reference implementation); C1 = 0.07^C0 0.12^(1 - C0),
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
    beyond_range: Literal["extend", "clip"] = "extend",
) -> tuple[np.ndarray, np.ndarray]:
    """Percentage of an average year that rain attenuation exceeds a fade margin, and a flag.

    Inverts A_p = A0.01 C1 p^-(C2 + C3 log10 p) (ITU-R P.530-17 eq. 34) in
    closed form: with x = log10 p and L = log10(M / (A0.01 C1)),
    C3 x^2 + C2 x + L = 0, taking the root on the falling branch of A_p.
    Returns ``(percent, outside)``: ``outside`` marks results beyond the
    0.001-1 % range of the method.  There ``beyond_range="extend"`` carries
    the same power law on (down to its turning point, where A_p peaks, and
    holding that percentage for larger margins; capped at 100 %), while
    ``"clip"`` returns the range limit.  A zero A0.01 (no rain) gives 0 %.
    """
    m = np.asarray(fade_margin_db, dtype=float)
    a001 = np.asarray(a001_db, dtype=float)
    _, c1, c2, c3 = rain_percentage_coefficients(freq_ghz)
    m, a001, c1, c2, c3 = np.broadcast_arrays(m, a001, c1, c2, c3)
    no_rain = a001 <= 0.0
    margin_pos = m > 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        level = np.log10(m / (a001 * c1))
        disc = c2**2 - 4.0 * c3 * level
        x_turn = -c2 / (2.0 * c3)
        x = np.where(disc > 0.0, (-c2 + np.sqrt(np.maximum(disc, 0.0))) / (2.0 * c3), x_turn)
        x = np.minimum(x, 2.0)  # at most 100 %
        pct = np.power(10.0, x)
    pct = np.where(margin_pos, pct, 100.0)
    pct = np.where(no_rain, 0.0, pct)
    tol = 1e-9  # relative: a margin equal to A_0.001 or A_1 stays inside the range
    outside = ~no_rain & ((pct < P530_RAIN_MIN_PCT * (1.0 - tol)) | (pct > P530_RAIN_MAX_PCT * (1.0 + tol)))
    if beyond_range == "clip":
        pct = np.where(no_rain, 0.0, np.clip(pct, P530_RAIN_MIN_PCT, P530_RAIN_MAX_PCT))
    elif beyond_range != "extend":
        raise InputError(f"beyond_range must be 'extend' or 'clip', got {beyond_range!r}")
    return pct, outside
