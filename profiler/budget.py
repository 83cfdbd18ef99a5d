"""Link budget: EIRP, received level, thermal noise floor, SNR, fade margin.

Powers in dBm, gains in dBi, losses in dB.  Every function takes arrays.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError
from .units import BOLTZMANN_J_PER_K, REFERENCE_TEMPERATURE_K, ratio_to_db
from .validation import check_numbers

__all__ = ["Radio", "Budget", "thermal_noise_dbm", "noise_floor_dbm", "link_budget", "shannon_capacity_mbps"]


@dataclass(frozen=True)
class Radio:
    """Radio settings of a link; site a transmits, site b receives.

    Fields may be floats, or arrays of shape (paths,) in batch work.
    """

    freq_ghz: float
    tx_power_dbm: float = 20.0
    gain_a_dbi: float | np.ndarray = 0.0  # an array in screening: per-site gains from the sites file
    gain_b_dbi: float | np.ndarray = 0.0
    loss_a_db: float = 0.0
    loss_b_db: float = 0.0
    bandwidth_mhz: float = 20.0
    noise_figure_db: float = 6.0
    required_snr_db: float = 15.0

    def validate(self) -> "Radio":
        """Raise InputError naming the first setting out of range."""
        def bad(name: str, rule: str) -> None:
            raise InputError(f"{name} must be {rule}, got {getattr(self, name)!r}")

        for name in asdict(self):
            v = np.asarray(getattr(self, name), dtype=float)
            if not np.all(np.isfinite(v)):
                bad(name, "a finite number")
        # Ranges shared with every entry point: profiler.validation.LIMITS.
        for name in asdict(self):
            reasons = [r for r in check_numbers(np.ravel(getattr(self, name)), name) if r is not None]
            if reasons:
                raise InputError(f"radio: {reasons[0]}")
        return self


@dataclass(frozen=True)
class Budget:
    """Budget of many links, arrays of shape (paths,)."""

    eirp_dbm: np.ndarray
    rx_level_dbm: np.ndarray
    noise_floor_dbm: np.ndarray
    snr_db: np.ndarray
    fade_margin_db: np.ndarray


def thermal_noise_dbm(bandwidth_hz: ArrayLike, temperature_k: float = REFERENCE_TEMPERATURE_K) -> np.ndarray:
    """Thermal noise power k T B in dBm (kT0 = -173.98 dBm/Hz at 290 K, ITU-R P.372)."""
    watts = BOLTZMANN_J_PER_K * temperature_k * np.asarray(bandwidth_hz, dtype=float)
    return ratio_to_db(watts * 1e3)


def noise_floor_dbm(bandwidth_mhz: ArrayLike, noise_figure_db: ArrayLike) -> np.ndarray:
    """Receiver noise floor: 10 log10(k T0 B) + NF, dBm (common practice)."""
    return thermal_noise_dbm(np.asarray(bandwidth_mhz, dtype=float) * 1e6) + np.asarray(
        noise_figure_db, dtype=float
    )


def link_budget(radio: Radio, path_loss_db: ArrayLike) -> Budget:
    """Budget from a (total) path loss between isotropic antennas.

    EIRP = P_tx + G_a - L_a; P_rx = EIRP - L_path + G_b - L_b;
    SNR = P_rx - N; fade margin = SNR - required SNR (common practice).
    """
    loss = np.asarray(path_loss_db, dtype=float)
    eirp = np.asarray(radio.tx_power_dbm, dtype=float) + radio.gain_a_dbi - radio.loss_a_db
    rx = eirp - loss + radio.gain_b_dbi - radio.loss_b_db
    noise = noise_floor_dbm(radio.bandwidth_mhz, radio.noise_figure_db)
    snr = rx - noise
    shape = loss.shape
    return Budget(
        eirp_dbm=np.broadcast_to(eirp, shape).astype(float),
        rx_level_dbm=np.broadcast_to(rx, shape).astype(float),
        noise_floor_dbm=np.broadcast_to(noise, shape).astype(float),
        snr_db=np.broadcast_to(snr, shape).astype(float),
        fade_margin_db=np.broadcast_to(snr - radio.required_snr_db, shape).astype(float),
    )


def shannon_capacity_mbps(bandwidth_mhz: ArrayLike, snr_db: ArrayLike) -> np.ndarray:
    """Shannon bound B log2(1 + SNR) in Mbit/s (an upper bound, not a throughput)."""
    snr = np.power(10.0, np.asarray(snr_db, dtype=float) / 10.0)
    return np.asarray(bandwidth_mhz, dtype=float) * np.log2(1.0 + snr)


