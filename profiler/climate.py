"""Climate of a hop: the settings an availability estimate depends on, with stated defaults.

Rain rate (ITU-R P.837), polarisation (ITU-R P.838-3), target availability,
refractivity gradient dN1 (ITU-R P.453), terrain roughness (ITU-R P.530-17)
and the atmosphere for gases (ITU-R P.676).  Checked when made.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field, fields
from typing import Any

import numpy as np

from .errors import InputError, ModelValidityError
from .losses.atmosphere import DEFAULT_PRESSURE_HPA, DEFAULT_TEMPERATURE_C, DEFAULT_WATER_VAPOUR_G_M3
from .losses.rain import P530_RAIN_MAX_PCT, P530_RAIN_MIN_PCT, polarisation_tilt_deg

__all__ = [
    "DEFAULT_RAIN_RATE_MM_H",
    "DEFAULT_DN1_N_PER_KM",
    "DEFAULT_TERRAIN_ROUGHNESS_M",
    "DEFAULT_TARGET_AVAILABILITY_PCT",
    "ClimateSettings",
    "ClimateValues",
    "CLIMATE_SOURCES",
    "ORIGIN_GIVEN",
    "ORIGIN_DEFAULT",
    "ORIGIN_P837",
    "ORIGIN_P453",
    "ORIGIN_TERRAIN",
    "ORIGIN_DEFAULT_UNCOVERED",
]

#: Default R0.01, mm/h: rain climatic zone K of ITU-R P.837-1 (superseded), typical of
#: temperate continental climates (from memory).  Give the site's value from ITU-R P.837.
DEFAULT_RAIN_RATE_MM_H = 42.0
#: Default dN1, N-units/km: a temperate inland value (common practice); take the
#: site's value from the ITU-R P.453 maps.
DEFAULT_DN1_N_PER_KM = -200.0
#: Default sa, m: moderately hilly terrain (common practice); compute it from the
#: terrain within 110 km x 110 km around the path (ITU-R P.530-17 section 2.3.1).
DEFAULT_TERRAIN_ROUGHNESS_M = 40.0
#: Default target availability, % of an average year (common practice).
DEFAULT_TARGET_AVAILABILITY_PCT = 99.99

_POLARISATIONS = ("horizontal", "vertical", "circular")

#: Where the climate values come from: "default" (the defaults above unless given) or
#: "itu" (R0.01 and dN1 from the ITU-R maps at the path centre, sa from the elevation data).
CLIMATE_SOURCES = ("default", "itu")
#: Origin of a climate value (``inputs.climate.sources`` and the summary's assumptions).
ORIGIN_GIVEN = "given"
ORIGIN_DEFAULT = "default"
ORIGIN_P837 = "ITU-R P.837-7 map at the path centre"
ORIGIN_P453 = "ITU-R P.453-13 map of the lowest 65 m, 1 % of an average year, at the path centre"
ORIGIN_TERRAIN = "computed from the elevation data (ITU-R P.530-17 section 2.3.1)"
ORIGIN_DEFAULT_UNCOVERED = "default: the elevation data do not cover the 110 km x 110 km area around the path"


@dataclass(frozen=True)
class ClimateSettings:
    """Climate and availability inputs of a hop, with stated defaults.

    rain_rate_mm_h: R0.01, rain rate exceeded 0.01 % of an average year (1-min).
    polarisation: 'horizontal', 'vertical', 'circular' or a tilt angle in degrees (kept as text).
    target_availability_pct: availability aimed at, 99-99.999 % (P.530 rain range).
    dn1_n_per_km: refractivity gradient dN1 (ITU-R P.453).
    terrain_roughness_m: sa, terrain height standard deviation (ITU-R P.530).
    pressure_hpa, temperature_c, water_vapour_g_m3: atmosphere for ITU-R P.676.
    """

    rain_rate_mm_h: float = DEFAULT_RAIN_RATE_MM_H
    polarisation: str = "horizontal"
    target_availability_pct: float = DEFAULT_TARGET_AVAILABILITY_PCT
    dn1_n_per_km: float = DEFAULT_DN1_N_PER_KM
    terrain_roughness_m: float = DEFAULT_TERRAIN_ROUGHNESS_M
    pressure_hpa: float = DEFAULT_PRESSURE_HPA
    temperature_c: float = DEFAULT_TEMPERATURE_C
    water_vapour_g_m3: float = DEFAULT_WATER_VAPOUR_G_M3
    #: Names of the settings the planner gave; None: any value equal to its default counts as a default.
    given: frozenset[str] | None = field(default=None, compare=False)
    #: "default" or "itu" (see :data:`CLIMATE_SOURCES`).
    source: str = "default"

    def __post_init__(self) -> None:
        if not isinstance(self.source, str) or self.source.strip().lower() not in CLIMATE_SOURCES:
            raise InputError(f"climate source must be one of {', '.join(CLIMATE_SOURCES)}, got {self.source!r}")
        object.__setattr__(self, "source", self.source.strip().lower())
        numeric = {f.name: getattr(self, f.name) for f in fields(self)
                   if f.name not in ("polarisation", "given", "source")}
        for name, value in numeric.items():
            try:
                number = float(value)
            except (TypeError, ValueError):
                raise InputError(f"{name} must be a number, got {value!r}") from None
            if not np.isfinite(number):
                raise InputError(f"{name} must be a finite number, got {value!r}")
            object.__setattr__(self, name, number)
        tau = polarisation_tilt_deg(self.polarisation)  # raises InputError if unknown
        if isinstance(self.polarisation, str) and self.polarisation.strip().lower() in _POLARISATIONS:
            object.__setattr__(self, "polarisation", self.polarisation.strip().lower())
        else:
            object.__setattr__(self, "polarisation", f"{tau:g}")
        if self.rain_rate_mm_h < 0.0:
            raise InputError(f"rain_rate_mm_h must be zero or positive, got {self.rain_rate_mm_h:g}")
        if self.rain_rate_mm_h > 300.0:
            raise InputError(
                f"rain_rate_mm_h {self.rain_rate_mm_h:g} is above 300 mm/h; R0.01 on earth lies below about 250 mm/h"
            )
        if not 0.0 < self.target_availability_pct < 100.0:
            raise InputError(
                f"target_availability_pct must lie between 0 and 100 %, got {self.target_availability_pct:g}"
            )
        outage = 100.0 - self.target_availability_pct
        if not (P530_RAIN_MIN_PCT * (1 - 1e-9) <= outage <= P530_RAIN_MAX_PCT * (1 + 1e-9)):
            raise ModelValidityError(
                f"target availability {self.target_availability_pct:g} % means an outage of {outage:.6g} %, "
                "outside 0.001-1 %, the range of the ITU-R P.530-17 rain method (targets 99-99.999 %)"
            )
        if self.terrain_roughness_m < 0.0:
            raise InputError(f"terrain_roughness_m must be zero or positive, got {self.terrain_roughness_m:g}")
        if not -2000.0 <= self.dn1_n_per_km <= 200.0:
            raise InputError(
                f"dn1_n_per_km {self.dn1_n_per_km:g} is implausible; ITU-R P.453 maps give about -850 to 0 N-units/km"
            )
        if self.pressure_hpa <= 0.0:
            raise InputError(f"pressure_hpa must be positive, got {self.pressure_hpa:g}")
        if self.temperature_c <= -273.15:
            raise InputError(f"temperature_c must be above -273.15 degC, got {self.temperature_c:g}")
        if self.water_vapour_g_m3 < 0.0:
            raise InputError(f"water_vapour_g_m3 must be zero or positive, got {self.water_vapour_g_m3:g}")

    @property
    def tilt_deg(self) -> float:
        """Polarisation tilt tau, degrees (ITU-R P.838-3)."""
        return polarisation_tilt_deg(self.polarisation)

    def as_dict(self) -> dict[str, Any]:
        """Plain mapping of every setting (for JSON ``inputs``)."""
        out = asdict(self)
        out.pop("given")
        if out.pop("source") != "default":
            out["source"] = self.source
            out["sources"] = {name: self.origin(name) for name in out if name != "source"}
        return out

    def origin(self, name: str) -> str:
        """Where setting ``name`` came from when no map or terrain value replaced it: given or default."""
        return ORIGIN_DEFAULT if name in self.defaults_used() else ORIGIN_GIVEN

    def defaults_used(self) -> tuple[str, ...]:
        """Names of the settings left at their defaults (not given by the planner)."""
        names = [f.name for f in fields(self) if f.name not in ("given", "source")]
        if self.given is not None:
            return tuple(n for n in names if n not in self.given)
        return tuple(n for n in names if getattr(self, n) == getattr(ClimateSettings, n))


@dataclass(frozen=True, eq=False)
class ClimateValues:
    """Per-path R0.01 (mm/h), dN1 (N-units/km) and sa (m), and where each came from.

    Made by :func:`profiler.climate_maps.climate_for_paths` for ``source="itu"``;
    ``*_origin`` are ``ORIGIN_*`` texts; ``sa_computed[i]`` says whether path i's
    sa came from the elevation data (else it is the given or the default value).
    """

    rain_rate_mm_h: np.ndarray
    dn1_n_per_km: np.ndarray
    terrain_roughness_m: np.ndarray
    rain_origin: str
    dn1_origin: str
    sa_computed: np.ndarray
    sa_fallback_origin: str = ORIGIN_DEFAULT

    def take(self, rows: np.ndarray) -> "ClimateValues":
        """The values of the paths at ``rows``."""
        return ClimateValues(self.rain_rate_mm_h[rows], self.dn1_n_per_km[rows], self.terrain_roughness_m[rows],
                             self.rain_origin, self.dn1_origin, self.sa_computed[rows], self.sa_fallback_origin)

    def sa_origin(self, i: int) -> str:
        """Where path i's sa came from."""
        return ORIGIN_TERRAIN if bool(self.sa_computed[i]) else self.sa_fallback_origin

    def inputs(self, settings: ClimateSettings, i: int) -> dict:
        """``inputs.climate`` of path i: the settings with its own values and their origins."""
        out: dict[str, Any] = settings.as_dict()
        out["rain_rate_mm_h"] = float(self.rain_rate_mm_h[i])
        out["dn1_n_per_km"] = float(self.dn1_n_per_km[i])
        out["terrain_roughness_m"] = float(self.terrain_roughness_m[i])
        sources: dict[str, str] = dict(out.get("sources", {}))
        sources.update(rain_rate_mm_h=self.rain_origin, dn1_n_per_km=self.dn1_origin,
                       terrain_roughness_m=self.sa_origin(i))
        out["source"] = settings.source
        out["sources"] = sources
        return out
