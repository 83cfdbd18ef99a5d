"""Unit conversions: decibels, power, wavelength.

All conversions of the package live here so that no bare number of unknown
unit crosses a function boundary.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = [
    "SPEED_OF_LIGHT_M_S",
    "BOLTZMANN_J_PER_K",
    "REFERENCE_TEMPERATURE_K",
    "EARTH_RADIUS_M",
    "FEET_TO_M",
    "db_to_ratio",
    "ratio_to_db",
    "dbm_to_watts",
    "watts_to_dbm",
    "wavelength_m",
]

#: Speed of light in vacuum, m/s (SI, exact).
SPEED_OF_LIGHT_M_S = 299_792_458.0
#: Boltzmann constant, J/K (SI 2019, exact).
BOLTZMANN_J_PER_K = 1.380649e-23
#: Reference noise temperature T0, K (ITU-R P.372; common practice).
REFERENCE_TEMPERATURE_K = 290.0
#: Mean earth radius used with the k-factor, m (ITU-R P.453 / P.526 use 6371 km).
EARTH_RADIUS_M = 6_371_000.0
#: International foot, m (exact).
FEET_TO_M = 0.3048


def db_to_ratio(value_db: ArrayLike) -> np.ndarray:
    """Power ratio from decibels: 10**(dB/10)."""
    return np.power(10.0, np.asarray(value_db, dtype=float) / 10.0)


def ratio_to_db(ratio: ArrayLike) -> np.ndarray:
    """Decibels from a power ratio: 10 log10(ratio)."""
    return 10.0 * np.log10(np.asarray(ratio, dtype=float))


def dbm_to_watts(power_dbm: ArrayLike) -> np.ndarray:
    """Watts from dBm (0 dBm = 1 mW)."""
    return db_to_ratio(power_dbm) * 1e-3


def watts_to_dbm(power_w: ArrayLike) -> np.ndarray:
    """dBm from watts (1 mW = 0 dBm)."""
    return ratio_to_db(np.asarray(power_w, dtype=float) * 1e3)


def wavelength_m(freq_ghz: ArrayLike) -> np.ndarray:
    """Free-space wavelength in metres for a frequency in GHz."""
    return SPEED_OF_LIGHT_M_S / (np.asarray(freq_ghz, dtype=float) * 1e9)
