"""What one profile sheet shows, gathered from a link result (pure, no drawing).

A :class:`SheetContent` holds the JSON record of one link, the arrays the
profile drawing needs (metres, one row of the batch, padding removed), the
path for the map, the raster provenance and the title block.  Building it
reads no file and imports no plotting library.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .._version import __version__
from ..clutter import ClutterKind

__all__ = [
    "CLUTTER_KINDS",
    "TitleBlock",
    "ProfileDrawing",
    "SheetContent",
    "profile_drawing",
    "source_provenance",
    "surroundings_provenance",
]

#: Kinds of obstruction a profile may carry per sample (``Profiles.clutter_kind``):
#: code -> plain name used in the legend.  0 means none.
CLUTTER_KINDS: dict[int, str] = {int(k): k.legend for k in ClutterKind if k is not ClutterKind.NONE}


@dataclass(frozen=True)
class TitleBlock:
    """Fields of the sheet's title block (free text; empty fields print blank for hand entry)."""

    project: str = ""
    prepared_by: str = ""
    checked_by: str = ""
    date: str = ""
    revision: str = ""
    software: str = f"terrahop {__version__}"


@dataclass(frozen=True)
class ProfileDrawing:
    """Arrays of one link for the profile drawing; heights in metres above the vertical datum.

    ``bulge_m`` and ``bulge_worst_m`` are the earth bulge at the design and the
    worst-case k; ``line_m`` the straight line between the antenna centres;
    ``f1_m`` the first Fresnel radius.  ``clutter_kind`` is None when the
    profile carries no obstruction kinds (clutter then draws as one kind).
    """

    distance_m: np.ndarray
    ground_m: np.ndarray
    clutter_m: np.ndarray
    clutter_kind: np.ndarray | None
    bulge_m: np.ndarray
    bulge_worst_m: np.ndarray
    line_m: np.ndarray
    f1_m: np.ndarray
    k: float
    k_worst: float
    worst_index: int
    worst_index_worst: int
    criterion_f1_fraction: float
    antenna_a_amsl_m: float
    antenna_b_amsl_m: float
    ground_a_m: float
    ground_b_m: float
    freq_ghz: float = float("nan")
    #: Combined elevation and clutter sigma per sample, m (profiler.confidence), or None without it.
    uncertainty_m: np.ndarray | None = None

    @property
    def surface_m(self) -> np.ndarray:
        """Ground plus clutter, metres."""
        return self.ground_m + self.clutter_m

    @property
    def length_m(self) -> float:
        return float(self.distance_m[-1])


@dataclass(frozen=True)
class SheetContent:
    """Everything one page shows.  ``record`` is the link's JSON record (profiler.link).

    ``sources`` describe the elevation rasters; ``other_sources`` the
    obstruction layers and surface models, one dict per file (keys file,
    what, sha256).
    """

    record: dict
    drawing: ProfileDrawing
    path_lat_deg: np.ndarray
    path_lon_deg: np.ndarray
    sources: tuple[dict, ...]
    title: TitleBlock = field(default_factory=TitleBlock)
    sheet_number: int = 1
    sheet_count: int = 1
    map_grid: Any = None
    raster_paths: tuple[str, ...] = ()
    other_sources: tuple[dict, ...] = ()

    @property
    def name(self) -> str:
        return str(self.record.get("name", ""))


def profile_drawing(batch: Any, i: int) -> ProfileDrawing:
    """The drawing arrays of link ``i`` of a :class:`profiler.link.LinkBatch`."""
    p = batch.profiles
    n = int(p.n_samples[i])
    d, w = batch.design.clearance, batch.worst.clearance
    kind = getattr(p, "clutter_kind", None)
    return ProfileDrawing(
        distance_m=np.asarray(p.distance_m[i, :n], dtype=float),
        ground_m=np.asarray(p.ground_m[i, :n], dtype=float),
        clutter_m=np.nan_to_num(np.asarray(p.clutter_m[i, :n], dtype=float)),
        clutter_kind=None if kind is None else np.asarray(kind[i, :n]).astype(int),
        bulge_m=np.asarray(d.bulge_m[i, :n], dtype=float),
        bulge_worst_m=np.asarray(w.bulge_m[i, :n], dtype=float),
        line_m=np.asarray(d.line_m[i, :n], dtype=float),
        f1_m=np.asarray(d.f1_m[i, :n], dtype=float),
        k=float(batch.settings.k),
        k_worst=float(batch.settings.k_worst),
        worst_index=int(d.worst_index[i]),
        worst_index_worst=int(w.worst_index[i]),
        criterion_f1_fraction=float(batch.settings.criterion.min_f1_fraction),
        antenna_a_amsl_m=float(batch.antenna_a_amsl_m[i]),
        antenna_b_amsl_m=float(batch.antenna_b_amsl_m[i]),
        ground_a_m=float(batch.ground_a_m[i]),
        ground_b_m=float(batch.ground_b_m[i]),
        freq_ghz=float(np.broadcast_to(np.asarray(batch.radio.freq_ghz, dtype=float), (len(batch),))[i]),
        uncertainty_m=None if getattr(batch, "confidence", None) is None else batch.confidence.sigma_m[i],
    )


def source_provenance(source: Any, sha256: str) -> dict:
    """Provenance of one raster (a :class:`profiler.terrain.RasterSource`) for the sheet.

    Keys: file, crs, cell_size, vertical_unit, vertical_datum, sha256.
    """
    from pyproj import CRS

    crs = CRS.from_wkt(source.crs_wkt)
    epsg = crs.to_epsg()
    crs_text = f"{crs.name} (EPSG:{epsg})" if epsg else crs.name
    if crs.is_geographic:
        unit = "deg"
        cx, cy = (c * 3600.0 for c in source.cell_size)
        cell = f"{cx:.3g} x {cy:.3g} arc-seconds"
    else:
        try:
            unit = crs.axis_info[0].unit_name or "units"
        except (IndexError, AttributeError):  # pragma: no cover - unusual CRS
            unit = "units"
        unit = {"metre": "m", "meter": "m"}.get(unit, unit)
        cell = f"{source.cell_size[0]:.4g} x {source.cell_size[1]:.4g} {unit}"
    return {
        "file": os.path.basename(source.path) or source.path,
        "path": source.path,
        "crs": crs_text,
        "cell_size": cell,
        "vertical_unit": source.vertical_unit,
        "vertical_datum": source.vertical_datum,
        "sha256": sha256,
    }


def surroundings_provenance(record: dict, sha256_of: Any) -> tuple[dict, ...]:
    """Obstruction layers and surface rasters named in ``record["inputs"]["surroundings"]``, one dict per file.

    ``sha256_of(path)`` returns a file's checksum.  Keys: file, what, sha256.
    """
    sur = (record.get("inputs") or {}).get("surroundings") or {}
    by_file: dict[str, list[str]] = {}
    for layer in sur.get("obstruction_layers") or []:
        path = layer.get("path")
        if not path:
            continue
        parts = [str(layer.get("layer") or "layer"), str(layer.get("kind") or "")]
        if layer.get("features") is not None:
            parts.append(f"{layer['features']} features")
        if layer.get("crs"):
            parts.append(str(layer["crs"]))
        by_file.setdefault(path, []).append(", ".join(p for p in parts if p))
    for src in sur.get("surface_sources") or []:
        path = src.get("path")
        if path:
            by_file.setdefault(path, []).append(f"surface model, {src.get('crs', '')}".rstrip(", "))
    return tuple(
        {"file": os.path.basename(path) or path, "what": "; ".join(what), "sha256": sha256_of(path)}
        for path, what in by_file.items()
    )
