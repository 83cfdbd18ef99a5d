"""The JSON record of one analysed link (keys as in the design notes).

Reads a :class:`profiler.link_batch.LinkBatch` (typed ``Any`` here so that
the batch may import this writer without a circle); writes nothing to disk.
"""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

import numpy as np

from .link_types import AtK, Site
from .losses.smooth_earth import resolve_ground, resolve_polarisation
from .losses.terrain_diffraction import resolve_method
from .clutter import ClutterKind
from .profile import FALLBACK_SPACING_M
from .vertical import planner_datum_text, stated_datums

__all__ = ["link_record", "link_warnings"]


def link_record(batch: Any, i: int) -> dict:
    """JSON-ready result of link i of ``batch``; ``{"name", "error"}`` when its path could not be profiled."""
    if batch.problems[i] is not None:
        return {"name": batch.names[i], "error": batch.problems[i]}
    lines = batch.profiles.lines
    record = {
        "name": batch.names[i],
        "distance_km": float(lines.length_m[i]) / 1000.0,
        "azimuth_a_to_b_deg": float(lines.azimuth_a_to_b_deg[i]),
        "azimuth_b_to_a_deg": float(lines.azimuth_b_to_a_deg[i]),
        "sites": {
            "a": _site_record(batch.sites_a[i], batch.ground_a_m[i], batch.antenna_a_amsl_m[i]),
            "b": _site_record(batch.sites_b[i], batch.ground_b_m[i], batch.antenna_b_amsl_m[i]),
        },
        **_at_k_record(batch.design, i, batch.free_space_db[i]),
        "worst_case": _at_k_record(batch.worst, i, batch.free_space_db[i]),
        "meets_criterion": bool(batch.meets_criterion[i]),
        "warnings": link_warnings(batch, i),
        "criterion": batch.settings.criterion.describe(batch.settings.k, batch.settings.k_worst),
        **({"availability": batch.availability.record(i)} if batch.availability is not None else {}),
        **({"installation": batch.installation.record(i)} if batch.installation is not None else {}),
        "inputs": _inputs_record(batch, i),
        "provenance": batch.provenance,
    }
    _add_surroundings(batch, record, i)
    _add_equipment(batch, record, i)
    if getattr(batch, "confidence", None) is not None:
        record["confidence"] = batch.confidence.record(i)
    _add_reflection(batch, record, i)
    return record


def _add_reflection(batch: Any, record: dict, i: int) -> None:
    """The ``reflection`` block of link i and its swing warning (profiler.reflection), when searched."""
    reflection = getattr(batch, "reflection", None)
    if reflection is None:
        return
    record["reflection"] = reflection.record(i)
    warning = reflection.warning(i)
    if warning:
        record.setdefault("warnings", []).append(warning)


def _add_equipment(batch: Any, record: dict, i: int) -> None:
    """The ``modulation`` and ``eirp_limit`` blocks of link i and the EIRP warning (radio profiles, EIRP limit)."""
    modulation = getattr(batch, "modulation", None)
    if modulation is not None:
        record["modulation"] = modulation.record(i)
    eirp = getattr(batch, "eirp", None)
    if eirp is not None:
        record["eirp_limit"] = eirp.record(i)
        warning = eirp.warning(i)
        if warning:
            record.setdefault("warnings", []).append(warning)


def _inputs_record(batch: Any, i: int) -> dict:
    """The ``inputs`` object of link i: radio, k-factors, sampling, criterion, method, ground, climate."""
    settings = batch.settings
    ground = resolve_ground(settings.ground)
    return {
        "radio": {k: _scalar(v, i) for k, v in asdict(batch.radio).items()},
        "k": settings.k,
        "k_worst": settings.k_worst,
        "sample_spacing_m": float(batch.profiles.spacing_m[i]),
        "samples": int(batch.profiles.n_samples[i]),
        **_sampling_inputs(batch, i),
        "min_f1_fraction": settings.criterion.min_f1_fraction,
        "min_f1_fraction_worst": settings.criterion.min_f1_fraction_worst,
        "diffraction_method": resolve_method(settings.diffraction_method),
        "polarisation": resolve_polarisation(settings.polarisation),
        "ground": str(settings.ground).strip().lower(),
        "ground_relative_permittivity": ground.relative_permittivity,
        "ground_conductivity_s_per_m": ground.conductivity_s_per_m,
        "earth_radius_km": 6371.0,
        "noise_temperature_k": 290.0,
        "vertical_datum": batch.provenance.get("vertical_datum", ""),
        "climate": (batch.availability.climate_inputs(i) if batch.availability is not None
                    else settings.climate.as_dict()),
        **_antenna_inputs(batch),
    }


def _antenna_inputs(batch: Any) -> dict:
    """``antennas``: the antenna of each end that has one (file, gain used and how), at the link frequency."""
    if not batch.antennas:
        return {}
    freq = float(np.ravel(batch.radio.freq_ghz)[0])
    return {"antennas": {tag: ant.record(freq) for tag, ant in sorted(batch.antennas.items())}}


def _sampling_inputs(batch: Any, i: int) -> dict:
    """Where the spacing came from, the finest raster cell on the path and the spacing advised."""
    p = batch.profiles
    cell = float(p.finest_cell_m[i]) if p.finest_cell_m is not None else float("nan")
    advised = cell / 2.0 if math.isfinite(cell) else FALLBACK_SPACING_M
    return {
        "sample_spacing_source": "given" if batch.settings.spacing_m is not None else "default",
        "finest_cell_m": cell if math.isfinite(cell) else None,
        "recommended_spacing_m": advised,
        "spacing_coarser_than_raster": bool(p.sampling_warnings and p.sampling_warnings[i]),
    }


def _add_surroundings(batch: Any, record: dict, i: int) -> None:
    """Site mounts, clutter and warnings of link i (rooftop and urban links)."""
    warnings = list(record.get("warnings", []))
    warnings += list(batch.clutter_warnings[i]) if batch.clutter_warnings else []
    for tag, placements in (("a", batch.placements_a), ("b", batch.placements_b)):
        if placements is not None:
            record["sites"][tag].update(placements[i].record())
            if placements[i].warning:
                warnings.append(placements[i].warning)
            geoid = placements[i].geoid
            if geoid is not None and geoid.vertical_crs not in stated_datums(record["inputs"]["vertical_datum"]):
                record["inputs"]["vertical_datum"] = planner_datum_text(geoid.vertical_crs)
    if batch.surroundings is not None:
        p = batch.profiles
        j = int(batch.design.clearance.worst_index[i])
        kind = 0 if p.clutter_kind is None else int(p.clutter_kind[i, j])
        record["clutter"] = {
            "crossed": batch.surroundings.crossing_records(batch.crossings, i),
            "max_m": float(np.max(p.clutter_m[i, : p.n_samples[i]])),
            "at_worst_point_m": float(p.clutter_m[i, j]),
            "at_worst_point_kind": ClutterKind(kind).label,
        }
        record["inputs"]["surroundings"] = batch.surroundings.describe()
    if warnings or "warnings" in record:
        record["warnings"] = warnings


def link_warnings(batch: Any, i: int) -> list[str]:
    """Validity warnings of link i: design k first, then any new at the worst-case k."""
    out = list(batch.design.warnings[i]) if batch.design.warnings else []
    note = batch.profiles.sampling_warnings[i] if batch.profiles.sampling_warnings else None
    if note:
        out.insert(0, note)
    for w in batch.worst.warnings[i] if batch.worst.warnings else ():
        if w not in out:
            out.append(f"worst case (k={batch.worst.k:.4g}): {w}")
    return out


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


