"""Inputs and per-k results of a link analysis: sites, the criterion, settings.

Pure values with their checks (one position rule: :mod:`profiler.validation`);
no I/O.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from .availability import ClimateSettings
from .budget import Budget
from .errors import InputError
from .geometry import Clearance
from .losses.smooth_earth import resolve_ground, resolve_polarisation
from .losses.terrain_diffraction import DEFAULT_DIFFRACTION_METHOD, resolve_method
from .profile import check_spacing_m
from .validation import check_k_pair, check_number, normalise_positions, position_problem

__all__ = ["Site", "SiteColumns", "Criterion", "Settings", "AtK", "site_arrays"]


@dataclass(frozen=True)
class Site:
    """One end of a link: name, WGS84 position in degrees, antenna height above ground in metres."""

    name: str
    lat_deg: float
    lon_deg: float
    antenna_agl_m: float

    def validate(self, role: str = "site") -> "Site":
        """This site with its longitude folded into -180..180 (and 0 at a pole); InputError if out of range.

        One rule for every entry point: :mod:`profiler.validation`.
        """
        where = f"{role} {self.name!r}" if self.name else role
        for attr in ("lat_deg", "lon_deg"):
            value = getattr(self, attr)
            if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
                raise InputError(f"{where}: {attr} must be a number, got {value!r}")
        problem = position_problem(self.lat_deg, self.lon_deg)
        if problem is not None:
            raise InputError(f"{where}: {problem}")
        check_number(self.antenna_agl_m, "antenna_agl_m", f"{where}: antenna height above ground")
        lat, lon = normalise_positions(self.lat_deg, self.lon_deg)
        if float(lon) != self.lon_deg:
            return dataclasses.replace(self, lon_deg=float(lon))
        return self


@dataclass(frozen=True, eq=False)
class SiteColumns(Sequence[Site]):
    """Many sites as columns (names, degrees, metres): a sequence of :class:`Site`
    whose items are made only when asked for.  Batch callers (screening) pass
    these to :func:`analyse_links` instead of one object per site."""

    names: np.ndarray
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    antenna_agl_m: np.ndarray

    def __len__(self) -> int:
        return len(self.lat_deg)

    def __getitem__(self, i):  # type: ignore[override]
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        return Site(str(self.names[i]), float(self.lat_deg[i]), float(self.lon_deg[i]),
                    float(self.antenna_agl_m[i]))


def site_arrays(sites: Sequence[Site]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Latitudes, longitudes and antenna heights of sites, as float arrays."""
    if isinstance(sites, SiteColumns):
        return (np.asarray(sites.lat_deg, dtype=float), np.asarray(sites.lon_deg, dtype=float),
                np.asarray(sites.antenna_agl_m, dtype=float))
    return (np.array([s.lat_deg for s in sites], dtype=float), np.array([s.lon_deg for s in sites], dtype=float),
            np.array([s.antenna_agl_m for s in sites], dtype=float))


@dataclass(frozen=True)
class Criterion:
    """Clearance the planner asks for, as fractions of the first Fresnel radius.

    Default (common practice): 0.6 F1 at the design k and the line of sight
    unobstructed (0.0 F1) at the worst-case k.
    """

    min_f1_fraction: float = 0.6
    min_f1_fraction_worst: float = 0.0

    def met(self, f1_fraction: np.ndarray, f1_fraction_worst: np.ndarray) -> np.ndarray:
        """True where the worst clearances (fractions of F1 at design and worst k) meet the criterion."""
        return (np.asarray(f1_fraction) >= self.min_f1_fraction) & (
            np.asarray(f1_fraction_worst) >= self.min_f1_fraction_worst
        )

    def describe(self, k: float, k_worst: float) -> str:
        return (
            f">= {self.min_f1_fraction:g} F1 at k={k:.4g} and "
            f">= {self.min_f1_fraction_worst:g} F1 at k={k_worst:.4g}"
        )


@dataclass(frozen=True)
class Settings:
    """Analysis settings: k-factors, sample spacing, criterion, diffraction method, climate.

    ``diffraction_method`` is one of ``DIFFRACTION_METHODS`` (default
    delta-bullington, ITU-R P.526-15 section 4.5.2); ``polarisation``
    (horizontal, vertical) and ``ground`` (land, sea) feed its smooth-earth
    term.  ``compare_methods`` also computes every other method for the
    ``diffraction_by_method`` record (switch off in bulk screening).
    ``climate`` holds the atmosphere for gases (ITU-R P.676) and the rain and
    multipath inputs of the availability estimate (ITU-R P.530); its
    polarisation should match ``polarisation`` (the CLI sets both from one option).
    """

    k: float = 4.0 / 3.0
    k_worst: float = 2.0 / 3.0
    spacing_m: float | None = None
    criterion: Criterion = field(default_factory=Criterion)
    diffraction_method: str = DEFAULT_DIFFRACTION_METHOD
    polarisation: str = "horizontal"
    ground: str = "land"
    compare_methods: bool = True
    climate: ClimateSettings = field(default_factory=ClimateSettings)

    def validate(self) -> "Settings":
        resolve_method(self.diffraction_method)
        resolve_polarisation(self.polarisation)
        resolve_ground(self.ground)
        check_k_pair(self.k, self.k_worst)  # ranges: profiler.validation.LIMITS
        if self.spacing_m is not None:
            if isinstance(self.spacing_m, bool):
                raise InputError(f"sample spacing must be a number of metres, got {self.spacing_m!r}")
            check_spacing_m(self.spacing_m)
        for name in ("min_f1_fraction", "min_f1_fraction_worst"):
            check_number(getattr(self.criterion, name), name, "criterion")
        return self


@dataclass(frozen=True)
class AtK:
    """Clearance, losses (dB) and budget of many paths at one k-factor."""

    k: float
    clearance: Clearance
    diffraction_db: np.ndarray
    gases_db: np.ndarray
    total_db: np.ndarray
    budget: Budget
    diffraction_by_method_db: dict[str, np.ndarray] = field(default_factory=dict)
    warnings: tuple[tuple[str, ...], ...] = ()
