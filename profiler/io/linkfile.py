"""Link files: one link described in TOML.

Format (all sections optional except the two sites; paths relative to the file)::

    title = "Orrin Water Tank to Brackwell Silo"

    [terrain]
    rasters = ["../data/demo/terrain.tif"]
    vertical_unit = "m"          # m, ft or us-ft
    nodata_fill_m = 0.0          # omit to refuse nodata on the path

    [site_a]
    name = "Orrin Water Tank"
    lat = -30.426077
    lon = -20.973967
    antenna_agl_m = 20

    [site_b]
    ...

    [radio]        # keys as the Radio fields: freq_ghz, tx_power_dbm, gain_a_dbi, ...
                   # or a radio profile: profile = "radio.toml", channel_mhz; max_eirp_dbm
    [analysis]     # k, k_worst, sample_spacing_m, min_f1_fraction, min_f1_fraction_worst,
                   # diffraction_method, polarisation, ground, min_margin_db (with a radio profile)
    [climate]      # rain_rate_mm_h, target_availability_pct, dn1_n_per_km, terrain_roughness_m,
                   # pressure_hpa, temperature_c, water_vapour_g_m3 (polarisation: [analysis]),
                   # source = "itu" (R0.01, dN1 from the ITU-R maps, sa from the terrain) or "default"
    [confidence]   # draws, seed, dem_error_m, dem_error_corr_m (a number or "inf"), antenna_error_m:
                   # the Monte Carlo confidence (profiler.confidence), as the flags of those names
    [reflection]   # water = "lake.geojson" (polygons, any CRS), sea_level_water = true, k_min, k_max

Rooftop and urban links add (all optional)::

    [terrain]
    surface = ["dsm.tif"]        # first-return rasters; clutter = surface - terrain
    vertical_crs = "EPSG:5773"   # the rasters' vertical datum, if they do not say

    [site_a]                     # give ONE of the antenna heights:
    antenna_above_roof_m = 3     # antenna_agl_m, antenna_above_roof_m,
    max_mast_m = 12              # antenna_amsl_m, antenna_ellipsoidal_m

    [obstructions]
    layers = [{ file = "town.gpkg", layer = "buildings", kind = "building" },
              { file = "town.gpkg", layer = "trees", kind = "trees" }]
    height_field = "height_m"    # height above ground; or top_field (absolute top)
    tree_allowance_m = 2

Antennas (optional; keys in :mod:`profiler.equipment.antennas`, checked there)::

    [antenna_a]                  # inline: gain_dbi or diameter_m, efficiency, beamwidth_deg, ...
    diameter_m = 0.6
    [antenna_b]
    file = "dish-0.6m.toml"      # or an antenna file, relative to the link file

Unknown keys are refused with their name, so a typing error never passes silently.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..toml_files import read_toml

__all__ = ["LinkSpec", "read_link_file", "SECTION_KEYS", "VERTICAL_UNIT_CHOICES"]

#: Vertical units accepted for [terrain] vertical_unit and --vertical-unit.
VERTICAL_UNIT_CHOICES = ("m", "ft", "us-ft")

SECTION_KEYS: dict[str, set[str]] = {
    "terrain": {"rasters", "vertical_unit", "nodata_fill_m", "surface", "vertical_crs", "source", "url", "offline"},
    "site_a": {"name", "lat", "lon", "antenna_agl_m", "antenna_above_roof_m", "antenna_amsl_m",
               "antenna_ellipsoidal_m", "max_mast_m"},
    "site_b": {"name", "lat", "lon", "antenna_agl_m", "antenna_above_roof_m", "antenna_amsl_m",
               "antenna_ellipsoidal_m", "max_mast_m"},
    "radio": {
        "freq_ghz", "tx_power_dbm", "gain_a_dbi", "gain_b_dbi", "loss_a_db", "loss_b_db",
        "bandwidth_mhz", "noise_figure_db", "required_snr_db",
        "profile", "channel_mhz", "max_eirp_dbm",  # a radio profile file (relative to the link file), EIRP limit
    },
    "analysis": {
        "k", "k_worst", "sample_spacing_m", "min_f1_fraction", "min_f1_fraction_worst",
        "diffraction_method", "polarisation", "ground", "min_margin_db",
    },
    "obstructions": {"layers", "height_field", "top_field", "tree_allowance_m"},
    "reflection": {"water", "sea_level_water", "k_min", "k_max"},  # profiler.reflection; water relative to the file
    "climate": {
        "rain_rate_mm_h", "target_availability_pct", "dn1_n_per_km",
        "terrain_roughness_m", "pressure_hpa", "temperature_c", "water_vapour_g_m3", "source",
    },
    # Checked by profiler.confidence (the io layer stays free of it).
    "confidence": {"draws", "seed", "dem_error_m", "dem_error_corr_m", "antenna_error_m"},
}
#: Keys of one entry of [obstructions] layers.
LAYER_KEYS = {"file", "layer", "kind", "height_field", "top_field"}
TOP_KEYS = {"title", "notes"}
#: Antenna tables: their keys are checked by profiler.equipment.antennas (the io layer stays free of it).
ANTENNA_SECTIONS = ("antenna_a", "antenna_b")

#: Keys that hold text; any other type is refused with the file, table and key.
TEXT_KEYS = {"name", "vertical_unit", "vertical_crs", "diffraction_method", "polarisation", "ground",
             "height_field", "top_field", "source", "profile"}
#: Keys that hold a number (k and k_worst may also be a fraction written as text, e.g. "4/3").
NUMBER_KEYS = {key for table in ("radio", "climate") for key in SECTION_KEYS[table] if key not in ("source", "profile")} | {
    "nodata_fill_m", "lat", "lon", "antenna_agl_m", "antenna_above_roof_m", "antenna_amsl_m",
    "antenna_ellipsoidal_m", "max_mast_m", "k", "k_worst", "sample_spacing_m", "min_f1_fraction",
    "min_f1_fraction_worst", "tree_allowance_m", "min_margin_db",
}


@dataclass(frozen=True)
class LinkSpec:
    """The content of a link file, with raster paths made absolute."""

    path: str
    title: str | None
    terrain: dict[str, Any] = field(default_factory=dict)
    site_a: dict[str, Any] = field(default_factory=dict)
    site_b: dict[str, Any] = field(default_factory=dict)
    radio: dict[str, Any] = field(default_factory=dict)
    analysis: dict[str, Any] = field(default_factory=dict)
    obstructions: dict[str, Any] = field(default_factory=dict)
    climate: dict[str, Any] = field(default_factory=dict)
    antenna_a: dict[str, Any] = field(default_factory=dict)
    antenna_b: dict[str, Any] = field(default_factory=dict)
    confidence: dict[str, Any] = field(default_factory=dict)
    reflection: dict[str, Any] = field(default_factory=dict)


def read_link_file(path: str | os.PathLike) -> LinkSpec:
    """Read and check a TOML link file; raise InputError or DataFileError naming the problem."""
    p, data = read_toml(path, "link file")
    for key, value in data.items():
        if key in SECTION_KEYS:
            if not isinstance(value, dict):
                raise InputError(f"{p}: [{key}] must be a table")
            unknown = set(value) - SECTION_KEYS[key]
            if unknown:
                raise InputError(
                    f"{p}: unknown key(s) in [{key}]: {', '.join(sorted(unknown))}; "
                    f"allowed: {', '.join(sorted(SECTION_KEYS[key]))}"
                )
        elif key in ANTENNA_SECTIONS:
            if not isinstance(value, dict):
                raise InputError(f"{p}: [{key}] must be a table (antenna keys, or file = \"PATH\")")
        elif key not in TOP_KEYS:
            raise InputError(
                f"{p}: unknown key or section {key!r}; allowed: "
                f"{', '.join(sorted(TOP_KEYS | set(SECTION_KEYS) | set(ANTENNA_SECTIONS)))}"
            )
    _check_types(p, data)
    terrain = dict(data.get("terrain", {}))
    rasters = terrain.get("rasters", [])
    if isinstance(rasters, str):
        rasters = [rasters]
    if not isinstance(rasters, list) or not all(isinstance(r, str) for r in rasters):
        raise InputError(f"{p}: [terrain] rasters must be a list of file paths")
    terrain["rasters"] = [_resolve(p.parent, r) for r in rasters]
    surface = terrain.get("surface", [])
    if isinstance(surface, str):
        surface = [surface]
    if not isinstance(surface, list) or not all(isinstance(r, str) for r in surface):
        raise InputError(f"{p}: [terrain] surface must be a list of raster paths")
    if surface:
        terrain["surface"] = [_resolve(p.parent, r) for r in surface]
    obstructions = _obstructions(p, dict(data.get("obstructions", {})))
    radio = dict(data.get("radio", {}))
    if "profile" in radio:
        radio["profile"] = _resolve(p.parent, radio["profile"])  # relative to the link file
    return LinkSpec(
        path=str(p),
        title=data.get("title"),
        terrain=terrain,
        site_a=dict(data.get("site_a", {})),
        site_b=dict(data.get("site_b", {})),
        radio=radio,
        analysis=dict(data.get("analysis", {})),
        obstructions=obstructions,
        climate=dict(data.get("climate", {})),
        antenna_a=dict(data.get("antenna_a", {})),
        antenna_b=dict(data.get("antenna_b", {})),
        confidence=dict(data.get("confidence", {})),
        reflection=_reflection_section(p, dict(data.get("reflection", {}))),
    )


def _reflection_section(p: Path, section: dict[str, Any]) -> dict[str, Any]:
    """[reflection]: the water file made absolute; types checked (ranges later, profiler.reflection)."""
    if "water" in section:
        if not isinstance(section["water"], str):
            raise InputError(f"{p}: [reflection] water must be a file path in quotes, got {section['water']!r}")
        section["water"] = _resolve(p.parent, section["water"])
    if "sea_level_water" in section and not isinstance(section["sea_level_water"], bool):
        raise InputError(f"{p}: [reflection] sea_level_water must be true or false, got {section['sea_level_water']!r}")
    for key in ("k_min", "k_max"):
        value = section.get(key)
        if key in section and (isinstance(value, bool) or not isinstance(value, (int, float))):
            raise InputError(f"{p}: [reflection] {key} must be a number, got {value!r}")
    return section


def _check_types(p: Path, data: dict[str, Any]) -> None:
    """InputError for a value of the wrong type: a boolean or text where a number is due, a number for text.

    (``freq_ghz = true`` was read as 1 GHz.)  Ranges are checked later by
    :mod:`profiler.validation`, where flags and file values meet.
    """
    if "title" in data and not isinstance(data["title"], str):
        raise InputError(f"{p}: title must be text in quotes, got {data['title']!r}")
    for table, section in data.items():
        if table not in SECTION_KEYS:
            continue
        for key, value in section.items():
            if key in NUMBER_KEYS:
                text_ok = key in ("k", "k_worst")
                if isinstance(value, bool) or not isinstance(value, (int, float, str) if text_ok else (int, float)):
                    shown = str(value).lower() if isinstance(value, bool) else repr(value)
                    raise InputError(
                        f"{p}: [{table}] {key} must be a number, got {shown}"
                        + (" (true/false are not numbers)" if isinstance(value, bool) else "")
                    )
            elif key in TEXT_KEYS and not isinstance(value, str):
                raise InputError(f"{p}: [{table}] {key} must be text in quotes, got {value!r}")


def _obstructions(p: Path, section: dict[str, Any]) -> dict[str, Any]:
    layers = section.get("layers", [])
    if isinstance(layers, dict):
        layers = [layers]
    if not isinstance(layers, list):
        raise InputError(f"{p}: [obstructions] layers must be a list of tables {{ file = ..., kind = ... }}")
    out = []
    for i, entry in enumerate(layers, 1):
        if isinstance(entry, str):
            entry = {"file": entry}
        if not isinstance(entry, dict) or not isinstance(entry.get("file"), str):
            raise InputError(f"{p}: [obstructions] layer {i} needs file = \"PATH\"")
        unknown = set(entry) - LAYER_KEYS
        if unknown:
            raise InputError(
                f"{p}: unknown key(s) in [obstructions] layer {i}: {', '.join(sorted(unknown))}; "
                f"allowed: {', '.join(sorted(LAYER_KEYS))}"
            )
        out.append({**entry, "file": _resolve(p.parent, entry["file"])})
    if out:
        section["layers"] = out
    return section


def _resolve(base: Path, raster: str) -> str:
    if raster.startswith(("/vsi", "http://", "https://", "s3://")) or os.path.isabs(raster):
        return raster
    return str((base / raster).resolve())
