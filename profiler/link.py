"""Analyse one or many links: the orchestrator of the pure core.

Sampling, clearance at two k-factors, losses and budget for a batch of
paths.  A single link is a batch of one.  No printing, no file writing.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import functools
import math
from dataclasses import asdict, dataclass, field, replace as _replace
from typing import Any, Sequence

import numpy as np

from . import __version__
from .availability import ClimateSettings, LinkAvailability, availability_for_links
from .budget import Budget, Radio, link_budget
from .errors import DataError, InputError
from .geometry import Clearance, clearance
from .losses.atmosphere import P676_MAX_FREQ_GHZ, P676_MIN_FREQ_GHZ, gaseous_specific_attenuation_db_km
from .losses.free_space import free_space_loss_db
from .losses.terrain_diffraction import (
    DEFAULT_DIFFRACTION_METHOD,
    diffraction_by_method,
    diffraction_loss_db,
    diffraction_validity_warnings,
    diffraction_with_warnings,
    resolve_method,
)
from .losses.smooth_earth import resolve_ground, resolve_polarisation
from .profile import Profiles, build_profiles
from .terrain import ElevationModel
from .validation import check_k_pair, check_number, normalise_positions, position_problem, too_close

__all__ = [
    "Site",
    "SiteColumns",
    "Criterion",
    "Settings",
    "AtK",
    "LinkBatch",
    "analyse_links",
    "analyse_link",
    "evaluate_profiles",
]


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


def _site_arrays(sites: Sequence[Site]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
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
            from .profile import check_spacing_m

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


def dominant_edge_loss_db(
    profiles: Profiles,
    antenna_a_amsl_m: np.ndarray,
    antenna_b_amsl_m: np.ndarray,
    freq_ghz: Any,
    clear: Clearance,
) -> np.ndarray:
    """Single knife edge at the point of largest v (ITU-R P.526-15 section 4.1), at ``clear.k``.

    The edge height is the surface plus earth bulge above the line between
    the antennas; J(v) is 0 dB for v <= -0.78.  Same as the ``knife-edge``
    method of :mod:`profiler.losses.terrain_diffraction`.
    """
    return diffraction_loss_db(
        "knife-edge", profiles.distance_m, _finite_surface(profiles), profiles.interior,
        antenna_a_amsl_m, antenna_b_amsl_m, profiles.length_m, _per_path(freq_ghz), clear.k,
    )


def terrain_diffraction_db(
    profiles: Profiles,
    antenna_a_amsl_m: np.ndarray,
    antenna_b_amsl_m: np.ndarray,
    freq_ghz: Any,
    k: float,
    settings: Settings,
    surface_m: np.ndarray | None = None,
) -> tuple[np.ndarray, dict[str, np.ndarray], tuple[tuple[str, ...], ...]]:
    """Diffraction loss by the chosen method, by every method, and validity warnings per path.

    Methods and sources: :mod:`profiler.losses.terrain_diffraction`
    (ITU-R P.526-15 sections 4.1 and 4.5, Deygout, Epstein-Peterson).
    ``surface_m`` may pass ``profiles.surface_m`` with NaN set to 0 when already made.
    """
    method = resolve_method(settings.diffraction_method)
    surface = _finite_surface(profiles) if surface_m is None else surface_m
    args = (
        profiles.distance_m, surface, profiles.interior, antenna_a_amsl_m,
        antenna_b_amsl_m, profiles.length_m, _per_path(freq_ghz), k,
    )
    opts = {"polarisation": settings.polarisation, "ground": settings.ground}
    if settings.compare_methods:
        by_method = diffraction_by_method(*args, **opts)
        warnings = tuple(diffraction_validity_warnings(method, *args))
    else:  # one pass over the profiles gives the loss and the warnings
        result = diffraction_with_warnings(method, *args, **opts)
        by_method, warnings = {method: result.loss_db}, result.warnings
    return by_method[method], by_method, warnings


def gaseous_loss_db(profiles: Profiles, freq_ghz: Any, climate: ClimateSettings = ClimateSettings()) -> np.ndarray:
    """Gaseous absorption along the path, dB (ITU-R P.676-12 Annex 1, terrestrial path A = gamma d).

    Computed at the climate's pressure, temperature and water-vapour density;
    0 outside 1-1000 GHz, where Annex 1 does not apply (below 1 GHz gases
    take less than 0.006 dB/km) and for paths without a length.
    """
    length = np.asarray(profiles.length_m, dtype=float)
    f = np.broadcast_to(np.asarray(freq_ghz, dtype=float), length.shape)
    use = (f >= P676_MIN_FREQ_GHZ) & (f <= P676_MAX_FREQ_GHZ) & np.isfinite(length) & (length >= 0)
    out = np.zeros(length.shape)
    if np.any(use):
        # gamma depends on the frequency only (one atmosphere): once per distinct frequency.
        freqs, where = np.unique(f[use], return_inverse=True)
        if freqs.size <= _GAMMA_CACHE_SIZE:
            gamma = np.array([_gases_db_km(float(x), climate.pressure_hpa, climate.temperature_c,
                                           climate.water_vapour_g_m3) for x in freqs])
        else:
            gamma = gaseous_specific_attenuation_db_km(
                freqs, climate.pressure_hpa, climate.temperature_c, climate.water_vapour_g_m3)
        out[use] = gamma[where] * length[use] / 1000.0  # A = gamma d, as gaseous_path_attenuation_db
    return out


_GAMMA_CACHE_SIZE = 64


@functools.lru_cache(maxsize=_GAMMA_CACHE_SIZE)
def _gases_db_km(freq_ghz: float, pressure_hpa: float, temperature_c: float, water_vapour_g_m3: float) -> float:
    """Specific gaseous attenuation, dB/km (ITU-R P.676-12 Annex 1), kept for repeated frequencies."""
    return float(gaseous_specific_attenuation_db_km(freq_ghz, pressure_hpa, temperature_c, water_vapour_g_m3))


def evaluate_profiles(
    profiles: Profiles,
    antenna_a_amsl_m: np.ndarray,
    antenna_b_amsl_m: np.ndarray,
    radio: Radio,
    k: float,
    settings: Settings,
    surface_m: np.ndarray | None = None,
    shortfall_f1_fraction: float | None = None,
) -> AtK:
    """Clearance, losses and budget of prepared profiles at one k-factor.

    ``surface_m``: ``profiles.surface_m`` with NaN set to 0, when the caller made it already;
    ``shortfall_f1_fraction``: see :func:`profiler.geometry.clearance`.
    """
    surface = _finite_surface(profiles) if surface_m is None else surface_m
    clear = clearance(
        profiles.distance_m,
        surface,
        profiles.interior,
        profiles.length_m,
        antenna_a_amsl_m,
        antenna_b_amsl_m,
        _per_path(radio.freq_ghz),
        k,
        shortfall_f1_fraction,
    )
    diffraction, by_method, warnings = terrain_diffraction_db(
        profiles, antenna_a_amsl_m, antenna_b_amsl_m, radio.freq_ghz, k, settings, surface
    )
    gases = gaseous_loss_db(profiles, radio.freq_ghz, settings.climate)
    total = free_space_loss_db(profiles.length_m, radio.freq_ghz) + diffraction + gases
    return AtK(k, clear, diffraction, gases, total, link_budget(radio, total), by_method, warnings)


def _per_path(value: Any) -> Any:
    arr = np.asarray(value, dtype=float)
    return arr if arr.ndim else float(arr)


def _finite_surface(profiles: Profiles) -> np.ndarray:
    surface = profiles.surface_m
    return np.where(np.isnan(surface), 0.0, surface) if np.isnan(surface).any() else surface


@dataclass(frozen=True)
class LinkBatch:
    """Results of many links; ``record(i)`` gives the JSON object of link i."""

    names: tuple[str, ...]
    sites_a: Sequence[Site]  # a tuple, or SiteColumns from batch callers
    sites_b: Sequence[Site]
    radio: Radio
    settings: Settings
    profiles: Profiles
    ground_a_m: np.ndarray
    ground_b_m: np.ndarray
    antenna_a_amsl_m: np.ndarray
    antenna_b_amsl_m: np.ndarray
    free_space_db: np.ndarray
    design: AtK
    worst: AtK
    meets_criterion: np.ndarray
    provenance: dict
    # Rooftop and urban links (obstruction layers, surface models, mounts); None when unused.
    surroundings: Any = None
    crossings: Any = None
    placements_a: tuple | None = None
    placements_b: tuple | None = None
    clutter_warnings: tuple[tuple[str, ...], ...] = ()
    availability: LinkAvailability | None = None

    def __len__(self) -> int:
        return len(self.names)

    @property
    def problems(self) -> tuple[str | None, ...]:
        return self.profiles.problems

    def record(self, i: int) -> dict:
        """JSON-ready result of link i (keys as in the design notes)."""
        if self.problems[i] is not None:
            return {"name": self.names[i], "error": self.problems[i]}
        lines = self.profiles.lines
        record = {
            "name": self.names[i],
            "distance_km": float(lines.length_m[i]) / 1000.0,
            "azimuth_a_to_b_deg": float(lines.azimuth_a_to_b_deg[i]),
            "azimuth_b_to_a_deg": float(lines.azimuth_b_to_a_deg[i]),
            "sites": {
                "a": _site_record(self.sites_a[i], self.ground_a_m[i], self.antenna_a_amsl_m[i]),
                "b": _site_record(self.sites_b[i], self.ground_b_m[i], self.antenna_b_amsl_m[i]),
            },
            **_at_k_record(self.design, i, self.free_space_db[i]),
            "worst_case": _at_k_record(self.worst, i, self.free_space_db[i]),
            "meets_criterion": bool(self.meets_criterion[i]),
            "warnings": self.warnings(i),
            "criterion": self.settings.criterion.describe(self.settings.k, self.settings.k_worst),
            **({"availability": self.availability.record(i)} if self.availability is not None else {}),
            "inputs": {
                "radio": {k: _scalar(v, i) for k, v in asdict(self.radio).items()},
                "k": self.settings.k,
                "k_worst": self.settings.k_worst,
                "sample_spacing_m": float(self.profiles.spacing_m[i]),
                "samples": int(self.profiles.n_samples[i]),
                **self._sampling_inputs(i),
                "min_f1_fraction": self.settings.criterion.min_f1_fraction,
                "min_f1_fraction_worst": self.settings.criterion.min_f1_fraction_worst,
                "diffraction_method": resolve_method(self.settings.diffraction_method),
                "polarisation": resolve_polarisation(self.settings.polarisation),
                "ground": str(self.settings.ground).strip().lower(),
                "ground_relative_permittivity": resolve_ground(self.settings.ground).relative_permittivity,
                "ground_conductivity_s_per_m": resolve_ground(self.settings.ground).conductivity_s_per_m,
                "earth_radius_km": 6371.0,
                "noise_temperature_k": 290.0,
                "vertical_datum": self.provenance.get("vertical_datum", ""),
                "climate": self.settings.climate.as_dict(),
            },
            "provenance": self.provenance,
        }
        self._add_surroundings(record, i)
        return record

    def _sampling_inputs(self, i: int) -> dict:
        """Where the spacing came from, the finest raster cell on the path and the spacing advised."""
        from .profile import FALLBACK_SPACING_M

        p = self.profiles
        cell = float(p.finest_cell_m[i]) if p.finest_cell_m is not None else float("nan")
        advised = cell / 2.0 if math.isfinite(cell) else FALLBACK_SPACING_M
        return {
            "sample_spacing_source": "given" if self.settings.spacing_m is not None else "default",
            "finest_cell_m": cell if math.isfinite(cell) else None,
            "recommended_spacing_m": advised,
            "spacing_coarser_than_raster": bool(p.sampling_warnings and p.sampling_warnings[i]),
        }

    def _add_surroundings(self, record: dict, i: int) -> None:
        """Site mounts, clutter and warnings of link i (rooftop and urban links)."""
        warnings = list(record.get("warnings", []))
        warnings += list(self.clutter_warnings[i]) if self.clutter_warnings else []
        for tag, placements in (("a", self.placements_a), ("b", self.placements_b)):
            if placements is not None:
                record["sites"][tag].update(placements[i].record())
                if placements[i].warning:
                    warnings.append(placements[i].warning)
                geoid = placements[i].geoid
                if geoid is not None and geoid.vertical_crs not in record["inputs"]["vertical_datum"]:
                    record["inputs"]["vertical_datum"] = (
                        f"{geoid.vertical_crs} (stated by the planner; the rasters do not say)"
                    )
        if self.surroundings is not None:
            from .profile import CLUTTER_KINDS

            p = self.profiles
            j = int(self.design.clearance.worst_index[i])
            kind = 0 if p.clutter_kind is None else int(p.clutter_kind[i, j])
            record["clutter"] = {
                "crossed": self.surroundings.crossing_records(self.crossings, i),
                "max_m": float(np.max(p.clutter_m[i, : p.n_samples[i]])),
                "at_worst_point_m": float(p.clutter_m[i, j]),
                "at_worst_point_kind": CLUTTER_KINDS[kind],
            }
            record["inputs"]["surroundings"] = self.surroundings.describe()
        if warnings or "warnings" in record:
            record["warnings"] = warnings

    def warnings(self, i: int) -> list[str]:
        """Validity warnings of link i: design k first, then any new at the worst-case k."""
        out = list(self.design.warnings[i]) if self.design.warnings else []
        note = self.profiles.sampling_warnings[i] if self.profiles.sampling_warnings else None
        if note:
            out.insert(0, note)
        for w in self.worst.warnings[i] if self.worst.warnings else ():
            if w not in out:
                out.append(f"worst case (k={self.worst.k:.4g}): {w}")
        return out

    def records(self) -> list[dict]:
        return [self.record(i) for i in range(len(self))]


def _scalar(value: Any, i: int) -> float:
    arr = np.asarray(value, dtype=float)
    return float(arr if arr.ndim == 0 else arr[i])


def _site_record(site: Site, ground_m: float, amsl_m: float) -> dict:
    return {
        "name": site.name,
        "lat": site.lat_deg,
        "lon": site.lon_deg,
        "ground_m": float(ground_m),
        "antenna_agl_m": site.antenna_agl_m,
        "antenna_amsl_m": float(amsl_m),
    }


def _at_k_record(r: AtK, i: int, free_space_db: float) -> dict:
    c = r.clearance
    return {
        "k": r.k,
        "clearance": {
            "worst_f1_fraction": float(c.worst_f1_fraction[i]),
            "worst_clearance_m": float(c.worst_clearance_m[i]),
            "worst_distance_km": float(c.worst_distance_m[i]) / 1000.0,
            "line_of_sight": bool(c.line_of_sight[i]),
        },
        "loss_db": {
            "free_space": float(free_space_db),
            "diffraction": float(r.diffraction_db[i]),
            "diffraction_by_method": {m: float(v[i]) for m, v in r.diffraction_by_method_db.items()},
            "gases": float(r.gases_db[i]),
            "total": float(r.total_db[i]),
        },
        "budget": {
            "eirp_dbm": float(r.budget.eirp_dbm[i]),
            "rx_level_dbm": float(r.budget.rx_level_dbm[i]),
            "noise_floor_dbm": float(r.budget.noise_floor_dbm[i]),
            "snr_db": float(r.budget.snr_db[i]),
            "fade_margin_db": float(r.budget.fade_margin_db[i]),
        },
    }


def analyse_links(
    model: ElevationModel,
    sites_a: Sequence[Site],
    sites_b: Sequence[Site],
    radio: Radio,
    settings: Settings = Settings(),
    *,
    names: Sequence[str] | None = None,
    surroundings: Any = None,
    mounts_a: Sequence[Any] | None = None,
    mounts_b: Sequence[Any] | None = None,
    check_sites: bool = True,
    estimate_availability: bool = True,
) -> LinkBatch:
    """Analyse many links at once (site a transmits to site b).

    Paths that cannot be profiled (outside the rasters, nodata) are kept with
    a sentence in ``problems``; their numbers are meaningless.
    ``surroundings`` (profiler.obstructions.Surroundings) adds buildings,
    trees and surface-model clutter; ``mounts_a``/``mounts_b``
    (profiler.mounts.Mount per site, or None) give antenna heights above a
    roof, as elevations or above the ellipsoid.
    ``check_sites=False`` skips the per-site checks for callers that made
    them already (screening validates each site once, not once per pair);
    ``estimate_availability=False`` leaves ``availability`` None for callers
    that estimate it themselves over larger batches (screening, per chunk).
    """
    if len(sites_a) != len(sites_b):
        raise InputError(f"{len(sites_a)} a-sites but {len(sites_b)} b-sites")
    if not sites_a:
        raise InputError("no links to analyse")
    radio.validate()
    settings.validate()
    names = list(names) if names is not None else [f"{a.name} - {b.name}" for a, b in zip(sites_a, sites_b)]
    placements_a = placements_b = None
    if surroundings is not None:
        surroundings.check_datum(model)
    if mounts_a is not None or mounts_b is not None:
        from .mounts import place_sites

        sites_a, placements_a = place_sites(model, sites_a, mounts_a, surroundings, "site a")
        sites_b, placements_b = place_sites(model, sites_b, mounts_b, surroundings, "site b")
    if check_sites:
        # Checked sites carry folded longitudes, so the records show what was analysed.
        checked = [(a.validate(f"{name}: site a"), b.validate(f"{name}: site b"))
                   for a, b, name in zip(sites_a, sites_b, names)]
        if not isinstance(sites_a, SiteColumns):
            sites_a = [a for a, _ in checked]
        if not isinstance(sites_b, SiteColumns):
            sites_b = [b for _, b in checked]
    lat_a, lon_a, agl_a = _site_arrays(sites_a)
    lat_b, lon_b, agl_b = _site_arrays(sites_b)
    # One position rule (profiler.validation): longitudes folded, poles at longitude 0.
    lat_a, lon_a = normalise_positions(lat_a, lon_a)
    lat_b, lon_b = normalise_positions(lat_b, lon_b)
    if check_sites:
        short, dist = too_close(lat_a, lon_a, lat_b, lon_b)
        if short.any():
            i = int(np.flatnonzero(short)[0])
            a, b = sites_a[i], sites_b[i]
            raise InputError(
                f"{names[i]}: site a {a.name!r} ({a.lat_deg}, {a.lon_deg}) and site b {b.name!r} "
                f"({b.lat_deg}, {b.lon_deg}) are at the same position ({dist[i]:.3g} m apart; a link needs "
                "two places at least 1 m apart)"
            )
    spacing = settings.spacing_m
    if surroundings is not None and spacing is None:
        spacing = surroundings.default_spacing_m(model, lon_a, lat_a, lat_b, lon_b)
    profiles = build_profiles(model, lat_a, lon_a, lat_b, lon_b, spacing_m=spacing, labels=names)
    if surroundings is not None and getattr(surroundings, "surface", None) is not None:
        profiles = _with_surface_cells(profiles, surroundings.surface, settings.spacing_m, names)
    crossings, clutter_warnings = None, ()
    if surroundings is not None:
        surrounded = surroundings.apply(profiles, model)
        profiles, crossings, clutter_warnings = surrounded.profiles, surrounded.crossings, surrounded.warnings
    rows = np.arange(len(names))
    last = profiles.n_samples - 1
    ground_a = profiles.ground_m[:, 0]
    ground_b = profiles.ground_m[rows, last]
    antenna_a = np.nan_to_num(ground_a) + agl_a
    antenna_b = np.nan_to_num(ground_b) + agl_b
    fsl = free_space_loss_db(profiles.length_m, radio.freq_ghz)
    with np.errstate(invalid="ignore"):
        surface = _finite_surface(profiles)  # shared by both k-factors
        crit = settings.criterion
        design = evaluate_profiles(profiles, antenna_a, antenna_b, radio, settings.k, settings, surface,
                                   crit.min_f1_fraction)
        worst = evaluate_profiles(profiles, antenna_a, antenna_b, radio, settings.k_worst, settings, surface,
                                  crit.min_f1_fraction_worst)
    meets = (design.clearance.worst_f1_fraction >= crit.min_f1_fraction) & (
        worst.clearance.worst_f1_fraction >= crit.min_f1_fraction_worst
    )
    availability = availability_for_links(
        design.budget.fade_margin_db,
        profiles.length_m,
        radio.freq_ghz,
        antenna_a,
        antenna_b,
        (lat_a + lat_b) / 2.0,
        profiles.valid,
        settings.climate,
        meets_criterion=meets,  # P.530 fading methods assume a clear path: not estimated otherwise
    ) if estimate_availability else None
    datums = sorted({s.vertical_datum for s in model.sources})
    provenance = {
        "elevation_sources": model.describe(),
        "vertical_datum": "; ".join(datums),
        "software_version": f"terrahop {__version__}",
        "computed_at": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
    }
    return LinkBatch(
        names=tuple(names),
        sites_a=sites_a if isinstance(sites_a, SiteColumns) else tuple(sites_a),
        sites_b=sites_b if isinstance(sites_b, SiteColumns) else tuple(sites_b),
        radio=radio,
        settings=settings,
        profiles=profiles,
        ground_a_m=ground_a,
        ground_b_m=ground_b,
        antenna_a_amsl_m=antenna_a,
        antenna_b_amsl_m=antenna_b,
        free_space_db=fsl,
        design=design,
        worst=worst,
        meets_criterion=meets & profiles.valid,
        provenance=provenance,
        surroundings=surroundings,
        crossings=crossings,
        placements_a=placements_a,
        placements_b=placements_b,
        clutter_warnings=clutter_warnings,
        availability=availability,
    )


def _with_surface_cells(profiles: Profiles, surface: Any, spacing_m: float | None, names: list[str]) -> Profiles:
    """Count a surface model's cells in the finest cell and the coarse-spacing warning of each path."""
    from .obstructions import _finest_cell_m
    from .profile import spacing_warning

    finest = np.fmin(profiles.finest_cell_m, _finest_cell_m(surface))
    notes = tuple(
        spacing_warning(names[i], float(profiles.spacing_m[i]), float(finest[i])) if spacing_m is not None else None
        for i in range(len(names))
    )
    return _replace(profiles, finest_cell_m=finest, sampling_warnings=notes)


def analyse_link(
    model: ElevationModel, site_a: Site, site_b: Site, radio: Radio, settings: Settings = Settings(),
    *, name: str | None = None, surroundings: Any = None, mount_a: Any = None, mount_b: Any = None,
) -> LinkBatch:
    """Analyse one link; raise DataError if its path cannot be profiled."""
    batch = analyse_links(
        model, [site_a], [site_b], radio, settings, names=[name] if name else None,
        surroundings=surroundings,
        mounts_a=None if mount_a is None else [mount_a],
        mounts_b=None if mount_b is None else [mount_b],
    )
    if batch.problems[0] is not None:
        raise DataError(batch.problems[0])
    return batch
