"""Decimals kept per kind of column in CSV, GeoJSON and KML (the GeoPackage keeps full precision).

One table, by the unit in the column's name (README, "Rounding of written
numbers").  The digits are those that mean something for a link plan
(common practice): terrain and antenna heights are not known to better than
centimetres, a dB below 0.01 changes no decision, 6 decimals of a degree
are 0.11 m on the ground.  Availability keeps 4 decimals because targets
go to 99.999 % and the estimate is given only down to an outage of 0.001 %.
Columns matching no rule (site columns carried from the input, counts) are
written as they are.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np

__all__ = ["DECIMALS", "decimals_of", "round_frame", "round_value"]

#: (kind, pattern of the column name, decimals), first match wins.
DECIMALS: tuple[tuple[str, str, int], ...] = (
    ("coordinates, degrees", r"^(lat|lon)(_[ab])?$|^(lat|lon)_deg$", 6),
    ("azimuths and other angles, degrees", r"_deg$", 2),
    ("availability, %", r"_pct$", 4),
    ("distances, km", r"_km$", 3),
    ("heights, clearances and spacings, m", r"_m$", 2),
    ("levels, gains and losses, dB, dBm, dBi", r"_(db|dbm|dbi)$", 2),
    ("fractions of the first Fresnel radius", r"_fraction$", 3),
    ("outage times, minutes", r"_min(_per_year)?$", 2),
    ("k-factors", r"^k(_worst)?$", 4),
)
_COMPILED = tuple((re.compile(p), d) for _, p, d in DECIMALS)


def decimals_of(name: str) -> int | None:
    """Decimals written for column ``name`` (None: written as it is)."""
    for pattern, digits in _COMPILED:
        if pattern.search(name):
            return digits
    return None


def round_value(name: str, value: Any) -> Any:
    """``value`` rounded for column ``name`` (non-numbers, NaN and None returned as they are)."""
    digits = decimals_of(name)
    if digits is None or isinstance(value, (bool, np.bool_)) or not isinstance(value, (float, np.floating)):
        return value
    return round(float(value), digits) if math.isfinite(value) else value


def round_frame(frame) -> Any:
    """A copy of a DataFrame with each float column rounded per :data:`DECIMALS` (NaN kept)."""
    out = frame.copy()
    for name in out.columns:
        digits = decimals_of(str(name))
        if digits is None:
            continue
        column = out[name]
        if column.dtype.kind == "f":
            out[name] = column.round(digits)
    return out
