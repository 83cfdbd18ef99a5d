"""What the reflection search is asked for: the k sweep and :class:`ReflectionSettings`.

Part of :mod:`profiler.reflection`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from ..errors import InputError

__all__ = ["DEFAULT_K_MIN", "DEFAULT_K_MAX", "K_STEPS", "sweep_k_values", "ReflectionSettings"]

#: Sweep range of k, and the steps between (documented set: 0.5, 0.6, 2/3, 0.8, 1, 1.2, 4/3, 1.5, 2, 3, 5, 10, inf).
DEFAULT_K_MIN = 0.5
DEFAULT_K_MAX = 10.0
K_STEPS = (0.5, 0.6, 2.0 / 3.0, 0.8, 1.0, 1.2, 4.0 / 3.0, 1.5, 2.0, 3.0, 5.0, 10.0)


def sweep_k_values(k_min: float = DEFAULT_K_MIN, k_max: float = DEFAULT_K_MAX,
                   extra: Sequence[float] = ()) -> tuple[float, ...]:
    """The documented k values inside [k_min, k_max], the range ends, ``extra`` (design, worst) and infinity."""
    if not (k_min > 0 and k_max >= k_min) or math.isinf(k_max) or math.isnan(k_min) or math.isnan(k_max):
        raise InputError(f"the reflection k sweep {k_min:g}..{k_max:g} is empty: give 0 < "
                         "reflection_k_min <= reflection_k_max (finite; infinity is always added)",
                         parameter="reflection_k_min", value_word="K")
    values = {k_min, k_max, *(k for k in K_STEPS if k_min <= k <= k_max), *(float(e) for e in extra)}
    return tuple(sorted(values)) + (math.inf,)


@dataclass(frozen=True)
class ReflectionSettings:
    """What the reflection search needs besides the profiles.

    ``k_min``..``k_max``: the sweep range (infinity always added);
    ``water_file``: the water layer's path (for the record); ``sea_level_water``:
    samples within 0.5 m of the datum's zero taken as water.
    """

    k_min: float = DEFAULT_K_MIN
    k_max: float = DEFAULT_K_MAX
    water_file: str | None = None
    sea_level_water: bool = False

    def validate(self) -> "ReflectionSettings":
        from ..validation import check_number

        for name in ("k_min", "k_max"):  # ranges: profiler.validation.LIMITS (as k)
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(f"{{parameter}} must be a number, got {value!r}",
                                 parameter=f"reflection_{name}", value_word="K")
            check_number(value, f"reflection_{name}")
        sweep_k_values(float(self.k_min), float(self.k_max))
        return self
