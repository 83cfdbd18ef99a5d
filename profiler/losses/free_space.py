"""Free-space basic transmission loss (ITU-R P.525-4, section 2.2)."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from ..units import wavelength_m

__all__ = ["free_space_loss_db"]


def free_space_loss_db(distance_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Free-space loss between isotropic antennas, dB.

    L = 20 log10(4 pi d / lambda)  (ITU-R P.525-4, eq. 4 in ratio form),
    i.e. 32.45 + 20 log10 f[MHz] + 20 log10 d[km].
    """
    d = np.asarray(distance_m, dtype=float)
    return 20.0 * np.log10(4.0 * np.pi * d / wavelength_m(freq_ghz))
