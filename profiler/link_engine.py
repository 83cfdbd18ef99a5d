"""Analyse one or many links: the orchestrator of the pure core.

Sampling, clearance at two k-factors, losses and budget for a batch of
paths.  A single link is a batch of one.  No printing, no file writing.
"""

from __future__ import annotations

import datetime as _dt
import functools
from dataclasses import replace as _replace
from typing import Any, Sequence

import numpy as np

from ._version import __version__
from .availability import ClimateSettings, availability_for_links
from .budget import Radio, link_budget
from .errors import DataError, InputError, Problem
from .geometry import clearance
from .link_batch import LinkBatch
from .link_types import AtK, Settings, Site, SiteColumns, site_arrays
from .losses.atmosphere import P676_MAX_FREQ_GHZ, P676_MIN_FREQ_GHZ, gaseous_specific_attenuation_db_km
from .losses.free_space import free_space_loss_db
from .losses.terrain_diffraction import (
    diffraction_by_method,
    diffraction_validity_warnings,
    diffraction_with_warnings,
    resolve_method,
)
from .mounts import place_sites
from .obstructions import surface_finest_cell_m
from .profile import Profiles, build_profiles, spacing_warning
from .terrain import ElevationModel
from .validation import normalise_positions, too_close

__all__ = ["analyse_links", "analyse_link", "evaluate_profiles", "terrain_diffraction_db", "gaseous_loss_db"]


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

#: Said on every link below 1 GHz, where gases are left out (see gaseous_loss_db).
GASES_BELOW_RANGE_NOTE = (
    f"gases not included: ITU-R P.676-12 Annex 1 covers {P676_MIN_FREQ_GHZ:g}-{P676_MAX_FREQ_GHZ:g} GHz; "
    "below it gases take less than 0.006 dB/km (its value at 1 GHz, 15 degC, 7.5 g/m^3: 0.0054 dB/km)"
)


def _with_gas_notes(warnings: Any, freq_ghz: Any, length_m: Any) -> Any:
    """Per-path warnings with the gases note added to the paths below 1 GHz."""
    f = np.broadcast_to(np.asarray(freq_ghz, dtype=float), np.shape(length_m))
    low = f < P676_MIN_FREQ_GHZ
    if not low.any() or not warnings:
        return warnings
    return [tuple(w) + ((GASES_BELOW_RANGE_NOTE,) if low[i] else ()) for i, w in enumerate(warnings)]


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
    warnings = _with_gas_notes(warnings, radio.freq_ghz, profiles.length_m)
    total = free_space_loss_db(profiles.length_m, radio.freq_ghz) + diffraction + gases
    return AtK(k, clear, diffraction, gases, total, link_budget(radio, total), by_method, warnings)


def _per_path(value: Any) -> Any:
    arr = np.asarray(value, dtype=float)
    return arr if arr.ndim else float(arr)


def _finite_surface(profiles: Profiles) -> np.ndarray:
    surface = profiles.surface_m
    return np.where(np.isnan(surface), 0.0, surface) if np.isnan(surface).any() else surface


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
    radio_plan: Any = None,
    eirp_limit: Any = None,
    reflection: Any = None,
    water_layer: Any = None,
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
    ``radio_plan`` (:class:`profiler.equipment.modulation.RadioPlan`) adds the
    ``modulation`` figures; ``radio`` must then be its ``engine_radio`` (the
    lowest step).  ``eirp_limit`` (:class:`profiler.equipment.radios.EirpLimit`)
    adds the EIRP check.  ``reflection`` (:class:`profiler.reflection.ReflectionSettings`)
    adds the ground-reflection search (``LinkBatch.reflection``), with the water
    polygons of ``water_layer`` (:class:`profiler.reflection_water.WaterLayer`).
    """
    if len(sites_a) != len(sites_b):
        raise InputError(f"{len(sites_a)} a-sites but {len(sites_b)} b-sites")
    if not sites_a:
        raise InputError("no links to analyse")
    radio.validate()
    settings.validate()
    names = list(names) if names is not None else [f"{a.name} - {b.name}" for a, b in zip(sites_a, sites_b)]
    if surroundings is not None:
        surroundings.check_datum(model)
    placements_a = placements_b = None
    if mounts_a is not None or mounts_b is not None:
        sites_a, placements_a = place_sites(model, sites_a, mounts_a, surroundings, "site a")
        sites_b, placements_b = place_sites(model, sites_b, mounts_b, surroundings, "site b")
    if check_sites:
        sites_a, sites_b = _checked_sites(sites_a, sites_b, names)
    lat_a, lon_a, agl_a = site_arrays(sites_a)
    lat_b, lon_b, agl_b = site_arrays(sites_b)
    # One position rule (profiler.validation): longitudes folded, poles at longitude 0.
    lat_a, lon_a = normalise_positions(lat_a, lon_a)
    lat_b, lon_b = normalise_positions(lat_b, lon_b)
    if check_sites:
        _refuse_same_place(sites_a, sites_b, names, lat_a, lon_a, lat_b, lon_b)
    profiles, crossings, clutter_warnings = _profiles_with_surroundings(
        model, surroundings, settings, names, lat_a, lon_a, lat_b, lon_b)
    rows = np.arange(len(names))
    ground_a = profiles.ground_m[:, 0]
    ground_b = profiles.ground_m[rows, profiles.n_samples - 1]
    antenna_a = np.nan_to_num(ground_a) + agl_a
    antenna_b = np.nan_to_num(ground_b) + agl_b
    fsl = free_space_loss_db(profiles.length_m, radio.freq_ghz)
    design, worst = _at_both_k(profiles, antenna_a, antenna_b, radio, settings)
    meets = settings.criterion.met(design.clearance.worst_f1_fraction, worst.clearance.worst_f1_fraction)
    availability = availability_for_links(
        design.budget.fade_margin_db, profiles.length_m, radio.freq_ghz, antenna_a, antenna_b,
        (lat_a + lat_b) / 2.0, profiles.valid, settings.climate,
        meets_criterion=meets,  # P.530 fading methods assume a clear path: not estimated otherwise
        values=_climate_values(settings, model, lat_a, lon_a, lat_b, lon_b),
    ) if estimate_availability else None
    equipment = _equipment(radio_plan, eirp_limit, radio, settings, model, profiles, design, worst, antenna_a,
                           antenna_b, meets, (lat_a, lon_a, lat_b, lon_b), availability)
    if reflection is not None:
        equipment["reflection"] = _reflections(reflection, water_layer, profiles, antenna_a, antenna_b, radio,
                                               settings, design)
    return LinkBatch(
        names=tuple(names),
        sites_a=sites_a if isinstance(sites_a, SiteColumns) else tuple(sites_a),
        sites_b=sites_b if isinstance(sites_b, SiteColumns) else tuple(sites_b),
        radio=radio, settings=settings, profiles=profiles,
        ground_a_m=ground_a, ground_b_m=ground_b, antenna_a_amsl_m=antenna_a, antenna_b_amsl_m=antenna_b,
        free_space_db=fsl, design=design, worst=worst, meets_criterion=meets & profiles.valid,
        provenance=_provenance(model),
        surroundings=surroundings, crossings=crossings, placements_a=placements_a, placements_b=placements_b,
        clutter_warnings=clutter_warnings, availability=availability, **equipment,
    )


def _equipment(plan: Any, eirp_limit: Any, radio: Radio, settings: Settings, model: ElevationModel,
               profiles: Profiles, design: AtK, worst: AtK, antenna_a: np.ndarray, antenna_b: np.ndarray,
               meets: np.ndarray, ends: tuple, availability: Any) -> dict:
    """The ``modulation`` and ``eirp`` fields of a batch (profiler.equipment.modulation); empty without them."""
    out: dict[str, Any] = {}
    if plan is not None:
        from .equipment.modulation import modulation_for_links

        lat_a, lon_a, lat_b, lon_b = ends
        out["modulation"] = modulation_for_links(
            plan, design.budget, worst.budget, profiles.length_m, radio.freq_ghz, antenna_a, antenna_b,
            (lat_a + lat_b) / 2.0, profiles.valid, settings.climate, meets_criterion=meets,
            values=(availability.values if availability is not None  # the same climate values, made once
                    else _climate_values(settings, model, lat_a, lon_a, lat_b, lon_b)))
    if eirp_limit is not None:
        from .equipment.modulation import eirp_check

        out["eirp"] = eirp_check(radio, eirp_limit, len(profiles.length_m))
    return out


def _reflections(reflection: Any, water_layer: Any, profiles: Profiles, antenna_a: np.ndarray,
                 antenna_b: np.ndarray, radio: Radio, settings: Settings, design: AtK) -> Any:
    """Ground reflections over the k sweep (profiler.reflection), water marked from ``water_layer``."""
    from .reflection import reflections_for_links

    water = (water_layer.mask(profiles.lat_deg, profiles.lon_deg, profiles.n_samples)
             if water_layer is not None else None)
    return reflections_for_links(
        profiles, antenna_a, antenna_b, radio.freq_ghz, k=settings.k, k_worst=settings.k_worst,
        fade_margin_db=design.budget.fade_margin_db, polarisation=settings.polarisation, ground=settings.ground,
        settings=reflection, water=water, climate=settings.climate)


def _climate_values(settings: Settings, model: ElevationModel, lat_a: np.ndarray, lon_a: np.ndarray,
                    lat_b: np.ndarray, lon_b: np.ndarray) -> Any:
    """Per-path R0.01, dN1, sa from the ITU-R maps and the terrain (``--climate itu``); None otherwise."""
    if settings.climate.source != "itu":
        return None
    from .climate_maps import climate_for_paths

    return climate_for_paths(settings.climate, model, lat_a, lon_a, lat_b, lon_b)


def _at_both_k(profiles: Profiles, antenna_a: np.ndarray, antenna_b: np.ndarray, radio: Radio,
               settings: Settings) -> tuple[AtK, AtK]:
    """Clearance, losses and budget at the design and at the worst-case k-factor."""
    crit = settings.criterion
    with np.errstate(invalid="ignore"):
        surface = _finite_surface(profiles)  # shared by both k-factors
        design = evaluate_profiles(profiles, antenna_a, antenna_b, radio, settings.k, settings, surface,
                                   crit.min_f1_fraction)
        worst = evaluate_profiles(profiles, antenna_a, antenna_b, radio, settings.k_worst, settings, surface,
                                  crit.min_f1_fraction_worst)
    return design, worst


def _checked_sites(sites_a: Sequence[Site], sites_b: Sequence[Site], names: list[str]) -> tuple[Any, Any]:
    """Sites checked one by one; checked sites carry folded longitudes, so the records show what was analysed."""
    checked = [(a.validate(f"{name}: site a"), b.validate(f"{name}: site b"))
               for a, b, name in zip(sites_a, sites_b, names)]
    if not isinstance(sites_a, SiteColumns):
        sites_a = [a for a, _ in checked]
    if not isinstance(sites_b, SiteColumns):
        sites_b = [b for _, b in checked]
    return sites_a, sites_b


def _refuse_same_place(sites_a: Sequence[Site], sites_b: Sequence[Site], names: list[str],
                       lat_a: np.ndarray, lon_a: np.ndarray, lat_b: np.ndarray, lon_b: np.ndarray) -> None:
    """InputError naming the first link whose two ends lie under 1 m apart (profiler.validation.too_close)."""
    short, dist = too_close(lat_a, lon_a, lat_b, lon_b)
    if short.any():
        i = int(np.flatnonzero(short)[0])
        a, b = sites_a[i], sites_b[i]
        raise InputError(
            f"{names[i]}: site a {a.name!r} ({a.lat_deg}, {a.lon_deg}) and site b {b.name!r} "
            f"({b.lat_deg}, {b.lon_deg}) are at the same position ({dist[i]:.3g} m apart; a link needs "
            "two places at least 1 m apart)"
        )


def _profiles_with_surroundings(model: ElevationModel, surroundings: Any, settings: Settings, names: list[str],
                                lat_a: np.ndarray, lon_a: np.ndarray, lat_b: np.ndarray,
                                lon_b: np.ndarray) -> tuple[Profiles, Any, tuple]:
    """Profiles of the paths, with the clutter of ``surroundings`` when given: (profiles, crossings, warnings)."""
    spacing = settings.spacing_m
    if surroundings is not None and spacing is None:
        spacing = surroundings.default_spacing_m(model, lon_a, lat_a, lat_b, lon_b)
    profiles = build_profiles(model, lat_a, lon_a, lat_b, lon_b, spacing_m=spacing, labels=names)
    if surroundings is not None and getattr(surroundings, "surface", None) is not None:
        profiles = _with_surface_cells(profiles, surroundings.surface, settings.spacing_m, names)
    if surroundings is None:
        return profiles, None, ()
    surrounded = surroundings.apply(profiles, model)
    return surrounded.profiles, surrounded.crossings, surrounded.warnings


def _provenance(model: ElevationModel) -> dict:
    """Where the heights came from, their vertical datum, the software and the time of the run."""
    datums = sorted({s.vertical_datum for s in model.sources})
    out = {
        "elevation_sources": model.describe(),
        "vertical_datum": "; ".join(datums),
        "software_version": f"terrahop {__version__}",
        "computed_at": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
    }
    terrain_source = getattr(model, "terrain_source", None)  # set by profiler.jobs for a fetched dataset
    if terrain_source is not None:
        out["terrain_source"] = terrain_source
    return out


def _with_surface_cells(profiles: Profiles, surface: Any, spacing_m: float | None, names: list[str]) -> Profiles:
    """Count a surface model's cells in the finest cell and the coarse-spacing warning of each path."""
    assert profiles.finest_cell_m is not None  # build_profiles always fills it (NaN where unknown)
    finest = np.fmin(profiles.finest_cell_m, surface_finest_cell_m(surface))
    notes = tuple(
        spacing_warning(names[i], float(profiles.spacing_m[i]), float(finest[i])) if spacing_m is not None else None
        for i in range(len(names))
    )
    return _replace(profiles, finest_cell_m=finest, sampling_warnings=notes)


def analyse_link(
    model: ElevationModel, site_a: Site, site_b: Site, radio: Radio, settings: Settings = Settings(),
    *, name: str | None = None, surroundings: Any = None, mount_a: Any = None, mount_b: Any = None,
    radio_plan: Any = None, eirp_limit: Any = None, reflection: Any = None, water_layer: Any = None,
) -> LinkBatch:
    """Analyse one link; raise DataError if its path cannot be profiled."""
    batch = analyse_links(
        model, [site_a], [site_b], radio, settings, names=[name] if name else None,
        surroundings=surroundings, radio_plan=radio_plan, eirp_limit=eirp_limit,
        reflection=reflection, water_layer=water_layer,
        mounts_a=None if mount_a is None else [mount_a],
        mounts_b=None if mount_b is None else [mount_b],
    )
    problem = batch.problems[0]
    if isinstance(problem, Problem):
        raise problem.error(DataError)
    if problem is not None:
        raise DataError(problem)
    return batch
