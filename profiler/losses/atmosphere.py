"""Attenuation by atmospheric gases (ITU-R P.676-12, Annex 1, line-by-line).

Specific attenuation of dry air (oxygen plus the dry continuum) and of water
vapour from the spectroscopic line sums of ITU-R P.676-12 (08/2019), Annex 1,
section 1, and the attenuation of a terrestrial (near-horizontal) path,
Annex 1, section 2.1: A = gamma * d.  The line tables are ITU data held in
:mod:`profiler.losses._p676_lines`.

Atmosphere inputs: ``pressure_hpa`` is the dry-air pressure p of Annex 1
(total pressure is p + e), ``temperature_c`` the air temperature and
``water_vapour_g_m3`` the water-vapour density rho.  The defaults below are
the reference atmosphere of the ITU-R validation examples (1013.25 hPa,
15 degC, 7.5 g/m^3; ITU-R P.835 mean annual reference values).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError, ModelValidityError
from ._p676_lines import OXYGEN_LINES, WATER_VAPOUR_LINES

__all__ = [
    "DEFAULT_PRESSURE_HPA",
    "DEFAULT_TEMPERATURE_C",
    "DEFAULT_WATER_VAPOUR_G_M3",
    "P676_MIN_FREQ_GHZ",
    "P676_MAX_FREQ_GHZ",
    "gaseous_specific_attenuation_db_km",
    "oxygen_specific_attenuation_db_km",
    "water_vapour_specific_attenuation_db_km",
    "gaseous_path_attenuation_db",
]

#: Reference dry-air pressure, hPa (ITU-R P.676-12 validation atmosphere).
DEFAULT_PRESSURE_HPA = 1013.25
#: Reference temperature, degC (288.15 K).
DEFAULT_TEMPERATURE_C = 15.0
#: Reference water-vapour density, g/m^3 (ITU-R P.835 mean annual reference).
DEFAULT_WATER_VAPOUR_G_M3 = 7.5
#: Frequency range of P.676-12 Annex 1, GHz.
P676_MIN_FREQ_GHZ = 1.0
P676_MAX_FREQ_GHZ = 1000.0

_KELVIN_OFFSET = 273.15


def _check_atmosphere(
    freq_ghz: ArrayLike,
    pressure_hpa: ArrayLike,
    temperature_c: ArrayLike,
    water_vapour_g_m3: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    f = np.asarray(freq_ghz, dtype=float)
    p = np.asarray(pressure_hpa, dtype=float)
    t = np.asarray(temperature_c, dtype=float)
    rho = np.asarray(water_vapour_g_m3, dtype=float)
    bad_f = ~((f >= P676_MIN_FREQ_GHZ) & (f <= P676_MAX_FREQ_GHZ))
    if np.any(bad_f):
        raise ModelValidityError(
            f"frequency {f[bad_f].flat[0]:g} GHz is outside 1-1000 GHz, the range of "
            "ITU-R P.676-12 Annex 1 gaseous attenuation"
        )
    if np.any(~(p > 0.0)):
        raise InputError(f"pressure must be positive hPa, got {p[~(p > 0.0)].flat[0]!r}")
    if np.any(~(t > -_KELVIN_OFFSET)):
        raise InputError(
            f"temperature must be above absolute zero (-273.15 degC), got {t[~(t > -_KELVIN_OFFSET)].flat[0]!r}"
        )
    if np.any(~(rho >= 0.0)):
        raise InputError(
            f"water-vapour density must be zero or positive g/m^3, got {rho[~(rho >= 0.0)].flat[0]!r}"
        )
    return f, p, t + _KELVIN_OFFSET, rho


def _line_shape(f: np.ndarray, f0: np.ndarray, width: np.ndarray, delta: np.ndarray | float) -> np.ndarray:
    """Line shape factor F_i (ITU-R P.676-12 Annex 1, section 1), f and widths in GHz."""
    return (f / f0) * (
        (width - delta * (f0 - f)) / ((f0 - f) ** 2 + width**2)
        + (width - delta * (f0 + f)) / ((f0 + f) ** 2 + width**2)
    )


def oxygen_specific_attenuation_db_km(
    freq_ghz: ArrayLike,
    pressure_hpa: ArrayLike = DEFAULT_PRESSURE_HPA,
    temperature_c: ArrayLike = DEFAULT_TEMPERATURE_C,
    water_vapour_g_m3: ArrayLike = DEFAULT_WATER_VAPOUR_G_M3,
) -> np.ndarray:
    """Specific attenuation of dry air gamma_o, dB/km.

    Oxygen line sum (Table 1 lines) plus the dry continuum N''_D of ITU-R
    P.676-12 Annex 1, section 1: gamma_o = 0.1820 f N''_Oxygen(f).  Inputs
    broadcast against each other; frequency 1-1000 GHz.
    """
    f, p, temp_k, rho = _check_atmosphere(freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3)
    theta = 300.0 / temp_k
    e = rho * temp_k / 216.7  # water-vapour partial pressure, hPa
    f_, p_, th_, e_ = (x[..., None] for x in np.broadcast_arrays(f, p, theta, e))
    f0, a1, a2, a3, a4, a5, a6 = OXYGEN_LINES.T
    strength = a1 * 1e-7 * p_ * th_**3 * np.exp(a2 * (1.0 - th_))
    width = a3 * 1e-4 * (p_ * th_ ** (0.8 - a4) + 1.1 * e_ * th_)
    width = np.sqrt(width**2 + 2.25e-6)  # Zeeman splitting of oxygen lines
    delta = (a5 + a6 * th_) * 1e-4 * (p_ + e_) * th_**0.8
    lines = np.sum(strength * _line_shape(f_, f0, width, delta), axis=-1)
    fb, pb, thb, eb = np.broadcast_arrays(f, p, theta, e)
    d = 5.6e-4 * (pb + eb) * thb**0.8  # width parameter of the Debye spectrum, GHz
    continuum = (
        fb
        * pb
        * thb**2
        * (6.14e-5 / (d * (1.0 + (fb / d) ** 2)) + 1.4e-12 * pb * thb**1.5 / (1.0 + 1.9e-5 * fb**1.5))
    )
    return 0.1820 * fb * (lines + continuum)


def water_vapour_specific_attenuation_db_km(
    freq_ghz: ArrayLike,
    pressure_hpa: ArrayLike = DEFAULT_PRESSURE_HPA,
    temperature_c: ArrayLike = DEFAULT_TEMPERATURE_C,
    water_vapour_g_m3: ArrayLike = DEFAULT_WATER_VAPOUR_G_M3,
) -> np.ndarray:
    """Specific attenuation of water vapour gamma_w, dB/km.

    Water-vapour line sum (Table 2 lines, continuum as the 1780 GHz
    pseudo-line) of ITU-R P.676-12 Annex 1, section 1:
    gamma_w = 0.1820 f N''_WaterVapour(f).  Frequency 1-1000 GHz.
    """
    f, p, temp_k, rho = _check_atmosphere(freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3)
    theta = 300.0 / temp_k
    e = rho * temp_k / 216.7
    f_, p_, th_, e_ = (x[..., None] for x in np.broadcast_arrays(f, p, theta, e))
    f0, b1, b2, b3, b4, b5, b6 = WATER_VAPOUR_LINES.T
    strength = b1 * 1e-1 * e_ * th_**3.5 * np.exp(b2 * (1.0 - th_))
    width = b3 * 1e-4 * (p_ * th_**b4 + b5 * e_ * th_**b6)
    width = 0.535 * width + np.sqrt(0.217 * width**2 + 2.1316e-12 * f0**2 / th_)  # Doppler broadening
    lines = np.sum(strength * _line_shape(f_, f0, width, 0.0), axis=-1)
    return 0.1820 * f_[..., 0] * lines


def gaseous_specific_attenuation_db_km(
    freq_ghz: ArrayLike,
    pressure_hpa: ArrayLike = DEFAULT_PRESSURE_HPA,
    temperature_c: ArrayLike = DEFAULT_TEMPERATURE_C,
    water_vapour_g_m3: ArrayLike = DEFAULT_WATER_VAPOUR_G_M3,
) -> np.ndarray:
    """Total specific gaseous attenuation gamma = gamma_o + gamma_w, dB/km.

    ITU-R P.676-12 Annex 1, section 1 (line-by-line).  Validation values at
    the default atmosphere: 10 GHz 0.014199, 23 GHz 0.194289, 60 GHz 14.7783.
    """
    return oxygen_specific_attenuation_db_km(
        freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3
    ) + water_vapour_specific_attenuation_db_km(freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3)


def gaseous_path_attenuation_db(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    pressure_hpa: ArrayLike = DEFAULT_PRESSURE_HPA,
    temperature_c: ArrayLike = DEFAULT_TEMPERATURE_C,
    water_vapour_g_m3: ArrayLike = DEFAULT_WATER_VAPOUR_G_M3,
) -> np.ndarray:
    """Gaseous attenuation of a terrestrial path, dB.

    A = gamma * d (ITU-R P.676-12 Annex 1, section 2.1, horizontal or slightly
    inclined paths close to the ground), gamma from
    :func:`gaseous_specific_attenuation_db_km` at the path's atmosphere.
    """
    d = np.asarray(distance_m, dtype=float)
    if np.any(~(d >= 0.0)):
        raise InputError(f"path length must be zero or positive metres, got {d[~(d >= 0.0)].flat[0]!r}")
    gamma = gaseous_specific_attenuation_db_km(freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3)
    return gamma * d / 1000.0
