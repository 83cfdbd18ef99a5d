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
    [analysis]     # k, k_worst, sample_spacing_m, min_f1_fraction, min_f1_fraction_worst,
                   # diffraction_method, polarisation, ground
    [climate]      # rain_rate_mm_h, target_availability_pct, dn1_n_per_km, terrain_roughness_m,
                   # pressure_hpa, temperature_c, water_vapour_g_m3 (polarisation: [analysis])

Unknown keys are refused with their name, so a typing error never passes silently.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import DataFileError, InputError

__all__ = ["LinkSpec", "read_link_file", "SECTION_KEYS"]

SECTION_KEYS: dict[str, set[str]] = {
    "terrain": {"rasters", "vertical_unit", "nodata_fill_m"},
    "site_a": {"name", "lat", "lon", "antenna_agl_m"},
    "site_b": {"name", "lat", "lon", "antenna_agl_m"},
    "radio": {
        "freq_ghz", "tx_power_dbm", "gain_a_dbi", "gain_b_dbi", "loss_a_db", "loss_b_db",
        "bandwidth_mhz", "noise_figure_db", "required_snr_db",
    },
    "analysis": {
        "k", "k_worst", "sample_spacing_m", "min_f1_fraction", "min_f1_fraction_worst",
        "diffraction_method", "polarisation", "ground",
    },
    "climate": {
        "rain_rate_mm_h", "target_availability_pct", "dn1_n_per_km",
        "terrain_roughness_m", "pressure_hpa", "temperature_c", "water_vapour_g_m3",
    },
}
TOP_KEYS = {"title", "notes"}


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
    climate: dict[str, Any] = field(default_factory=dict)


def read_link_file(path: str | os.PathLike) -> LinkSpec:
    """Read and check a TOML link file; raise InputError or DataFileError naming the problem."""
    p = Path(path)
    if not p.is_file():
        raise DataFileError(f"link file not found: {p}")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{p}: not a valid TOML link file: {exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{p}: not a text file (expected a TOML link file)") from None
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
        elif key not in TOP_KEYS:
            raise InputError(
                f"{p}: unknown key or section {key!r}; allowed: "
                f"{', '.join(sorted(TOP_KEYS | set(SECTION_KEYS)))}"
            )
    terrain = dict(data.get("terrain", {}))
    rasters = terrain.get("rasters", [])
    if isinstance(rasters, str):
        rasters = [rasters]
    if not isinstance(rasters, list) or not all(isinstance(r, str) for r in rasters):
        raise InputError(f"{p}: [terrain] rasters must be a list of file paths")
    terrain["rasters"] = [_resolve(p.parent, r) for r in rasters]
    return LinkSpec(
        path=str(p),
        title=data.get("title"),
        terrain=terrain,
        site_a=dict(data.get("site_a", {})),
        site_b=dict(data.get("site_b", {})),
        radio=dict(data.get("radio", {})),
        analysis=dict(data.get("analysis", {})),
        climate=dict(data.get("climate", {})),
    )


def _resolve(base: Path, raster: str) -> str:
    if raster.startswith(("/vsi", "http://", "https://", "s3://")) or os.path.isabs(raster):
        return raster
    return str((base / raster).resolve())
