"""The geometry of a batch of terrain paths, as every diffraction method reads it.

A :class:`PathGeometry` holds P profiles of N samples and what each path
shares (antenna heights, length, frequency, k-factor), checked once when it is
made.  Pure values, no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError
from ..units import wavelength_m

__all__ = ["PathGeometry"]


def _as_path_values(value: ArrayLike, n_paths: int, name: str) -> np.ndarray:
    """``value`` as one float per path, shape (P,): a scalar is repeated."""
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        return np.full(n_paths, float(arr))
    arr = arr.reshape(-1)
    if arr.shape[0] != n_paths:
        raise InputError(f"{name} has {arr.shape[0]} values for {n_paths} paths")
    return arr


def _check_positive(arr: np.ndarray, name: str) -> None:
    bad = ~(arr > 0.0)  # catches NaN too; inf allowed
    if bad.any():
        row = int(np.argmax(bad))
        raise InputError(f"{name} must be positive: got {arr[row]!r} on path {row}")


@dataclass(frozen=True)
class PathGeometry:
    """P terrain paths of N samples each, checked; the input of every diffraction method.

    ``distance_m`` (P, N)
        distance from site a, m; rows shorter than N are padded by repeating
        the last sample (padded columns have distance equal to the path length);
    ``surface_m`` (P, N)
        ground plus clutter above sea level, m, *without* earth bulge (the
        methods add curvature through the effective radius k * 6371 km);
    ``interior`` (P, N) bool
        True for samples strictly between the two ends (not ends, not padding);
    ``antenna_a_amsl_m``, ``antenna_b_amsl_m``, ``length_m`` (P,)
        antenna centre heights above sea level and path lengths, m;
    ``freq_ghz``, ``k`` (P,)
        frequency, GHz, and k-factor (``inf`` for a flat earth).

    Scalars are accepted for the per-path values and repeated; the arrays are
    stored as float (bool for ``interior``).  Raises
    :class:`~profiler.errors.InputError` naming the path (and sample) at fault.
    """

    distance_m: np.ndarray
    surface_m: np.ndarray
    interior: np.ndarray
    antenna_a_amsl_m: np.ndarray
    antenna_b_amsl_m: np.ndarray
    length_m: np.ndarray
    freq_ghz: np.ndarray
    k: np.ndarray

    def __post_init__(self) -> None:
        d1 = np.atleast_2d(np.asarray(self.distance_m, dtype=float))
        surface = np.atleast_2d(np.asarray(self.surface_m, dtype=float))
        inner = np.atleast_2d(np.asarray(self.interior, dtype=bool))
        if d1.ndim != 2 or surface.shape != d1.shape or inner.shape != d1.shape:
            raise InputError(
                "distance_m, surface_m and interior must share one (paths, samples) shape: got "
                f"{d1.shape}, {surface.shape} and {inner.shape}"
            )
        n_paths = d1.shape[0]
        values = {
            "antenna_a_amsl_m": _as_path_values(self.antenna_a_amsl_m, n_paths, "antenna_a_amsl_m"),
            "antenna_b_amsl_m": _as_path_values(self.antenna_b_amsl_m, n_paths, "antenna_b_amsl_m"),
            "length_m": _as_path_values(self.length_m, n_paths, "path_length_m"),
            "freq_ghz": _as_path_values(self.freq_ghz, n_paths, "freq_ghz"),
            "k": _as_path_values(self.k, n_paths, "k"),
        }
        _check_positive(values["length_m"], "path length (m)")
        _check_positive(values["freq_ghz"], "frequency (GHz)")
        _check_positive(values["k"], "k-factor")
        for key, name in (("antenna_a_amsl_m", "antenna a height (m above sea level)"),
                          ("antenna_b_amsl_m", "antenna b height (m above sea level)")):
            bad = ~np.isfinite(values[key])
            if bad.any():
                raise InputError(f"{name} is not a finite number on path {int(np.argmax(bad))}")
        bad_rows = ~np.isfinite(surface).all(axis=1) | ~np.isfinite(d1).all(axis=1)
        if bad_rows.any():
            row = int(np.argmax(bad_rows))
            col = int(np.argmax(~np.isfinite(surface[row]) | ~np.isfinite(d1[row])))
            raise InputError(
                f"profile of path {row} has a missing (NaN) height or distance at sample {col} "
                f"({d1[row, col] / 1000.0:.3f} km from site a)"
            )
        for key, value in {"distance_m": d1, "surface_m": surface, "interior": inner, **values}.items():
            object.__setattr__(self, key, value)

    @classmethod
    def of(cls, path: tuple, named: dict | None = None) -> "PathGeometry":
        """``path[0]`` if it is a PathGeometry, else one made from the 8 arrays in field order.

        ``named`` may give the arrays (or the last of them) by name, as the
        entry points of :mod:`profiler.losses.terrain_diffraction` once took them
        (``path_length_m`` for ``length_m``).
        """
        named = dict(named or {})
        if len(path) == 1 and isinstance(path[0], PathGeometry) and not named:
            return path[0]
        if "path_length_m" in named:
            named["length_m"] = named.pop("path_length_m")
        order = ("distance_m", "surface_m", "interior", "antenna_a_amsl_m", "antenna_b_amsl_m", "length_m",
                 "freq_ghz", "k")
        unknown = sorted(set(named) - set(order))
        if unknown:
            raise InputError(f"unknown path argument {unknown[0]!r}: the path is given by {', '.join(order)}")
        values = dict(zip(order, path))
        twice = sorted(set(values) & set(named))
        if len(path) > len(order) or twice or len(values) + len(named) != len(order):
            raise InputError(
                f"a path geometry, or its 8 arrays (distance_m, surface_m, interior, antenna_a_amsl_m, "
                f"antenna_b_amsl_m, path_length_m, freq_ghz, k), expected: got {len(path)} arguments"
                + (f" and {', '.join(sorted(named))} by name" if named else "")
            )
        return cls(**values, **named)

    @property
    def n_paths(self) -> int:
        return self.distance_m.shape[0]

    @property
    def n_samples(self) -> int:
        return self.distance_m.shape[1]

    @cached_property
    def wavelength_m(self) -> np.ndarray:
        """Wavelength of each path, m, (P,)."""
        return wavelength_m(self.freq_ghz)

    def rows(self, sl: slice) -> "PathGeometry":
        """The paths ``sl`` of this batch (already checked: no checks run again)."""
        new = object.__new__(PathGeometry)
        for key in ("distance_m", "surface_m", "interior", "antenna_a_amsl_m", "antenna_b_amsl_m",
                    "length_m", "freq_ghz", "k"):
            object.__setattr__(new, key, getattr(self, key)[sl])
        return new
