"""Obstruction layers: polygons of buildings or tree stands with heights, read from vector files.

A layer is any OGR format in any CRS; each feature has a height above
ground or an absolute top elevation (in the vertical datum of the elevation
rasters).  What cannot be used is refused, naming the feature.
How paths cross these polygons: :mod:`profiler.obstructions`.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, replace
from typing import Any, Sequence

import numpy as np

from .errors import PARAMETER, DataError, DataFileError, InputError
from .clutter import ClutterKind

__all__ = [
    "KIND_CODES",
    "DEFAULT_HEIGHT_FIELDS",
    "DEFAULT_TOP_FIELDS",
    "MAX_HEIGHT_ABOVE_GROUND_M",
    "LayerSpec",
    "parse_layer_spec",
    "normalise_kind",
    "ObstructionLayer",
    "read_obstruction_layer",
]

#: Clutter kind codes, as in ``Profiles.clutter_kind`` (0 means none).
KIND_CODES = {k.label: int(k) for k in ClutterKind if k is not ClutterKind.NONE}
_BUILDING, _TREES = ClutterKind.BUILDING.label, ClutterKind.TREES.label
#: Words accepted for the kind of an obstruction layer -> its clutter kind's label.
_KIND_ALIASES = {"building": _BUILDING, "buildings": _BUILDING, "tree": _TREES, "trees": _TREES}

#: Attribute names tried, in order, when the planner names none (case-insensitive).
DEFAULT_HEIGHT_FIELDS = ("height_m", "height")
DEFAULT_TOP_FIELDS = ("top_m",)

#: A height above ground beyond this is taken for a mistake (an absolute top in the height field).
MAX_HEIGHT_ABOVE_GROUND_M = 1000.0

def normalise_kind(kind: str, where: str = "obstruction layer") -> str:
    """'building'/'buildings' -> 'building', 'tree'/'trees' -> 'trees'; InputError otherwise."""
    key = str(kind).strip().lower()
    if key not in _KIND_ALIASES:
        raise InputError(f"{where}: unknown obstruction kind {kind!r}; known kinds: "
                         f"{', '.join(_KIND_ALIASES)}")
    return _KIND_ALIASES[key]


@dataclass(frozen=True)
class LayerSpec:
    """Which vector layer to read, what it holds and where its heights are."""

    path: str
    kind: str = "building"
    layer: str | None = None
    height_field: str | None = None
    top_field: str | None = None

    @property
    def label(self) -> str:
        return self.path + (f"#{self.layer}" if self.layer else "")


def parse_layer_spec(
    text: str, *, height_field: str | None = None, top_field: str | None = None
) -> LayerSpec:
    """Parse ``[KIND=]FILE[#LAYER]`` (KIND building or trees, default building)."""
    text = str(text).strip()
    if not text:
        raise InputError("empty obstruction layer; give [KIND=]FILE[#LAYER]")
    kind = "building"
    head, sep, rest = text.partition("=")
    if sep and head.strip().lower() in _KIND_ALIASES:
        kind, text = normalise_kind(head), rest
    elif sep and re.fullmatch(r"\s*[A-Za-z_-]+\s*", head) and not os.path.exists(text):
        # KIND=FILE with a kind we do not know (e.g. lava=...): name the kinds, not a missing file.
        normalise_kind(head, f"--obstructions {text}")
    layer = None
    if "#" in text and not os.path.exists(text):
        text, _, layer = text.rpartition("#")
        layer = layer or None
    return LayerSpec(path=text, kind=kind, layer=layer, height_field=height_field, top_field=top_field)


@dataclass(frozen=True, eq=False)
class ObstructionLayer:
    """Polygons of one kind with heights, geometry in WGS84 longitude/latitude.

    ``height_m`` (above ground) and ``top_m`` (absolute, raster datum) are
    per feature, NaN where not given; a feature with a height uses it, else its top.
    """

    spec: LayerSpec
    crs_name: str
    geometry: np.ndarray
    height_m: np.ndarray
    top_m: np.ndarray
    feature_labels: tuple[str, ...]
    height_field: str | None
    top_field: str | None

    @property
    def kind(self) -> str:
        return self.spec.kind

    def __len__(self) -> int:
        return len(self.geometry)

    def describe(self) -> dict:
        """Provenance of the layer for the JSON record."""
        return {
            "path": self.spec.path,
            "layer": self.spec.layer,
            "kind": self.kind,
            "crs": self.crs_name,
            "features": len(self),
            "height_field": self.height_field,
            "top_field": self.top_field,
        }


def _find_field(columns: Sequence[str], given: str | None, defaults: Sequence[str], what: str, label: str) -> str | None:
    by_lower = {c.lower(): c for c in columns}
    if given:
        if given.lower() not in by_lower:
            raise InputError(
                f"{label}: no attribute {given!r} ({what}); its attributes are: "
                f"{', '.join(columns) or 'none'}"
            )
        return by_lower[given.lower()]
    for name in defaults:
        if name in by_lower:
            return by_lower[name]
    return None


def _numeric(values: Any, field_name: str, labels: Sequence[str], where: str) -> np.ndarray:
    import pandas as pd

    raw = pd.Series(values)
    num = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(raw.notna().to_numpy() & ~np.isfinite(num))
    if bad.size:
        j = bad[0]
        raise DataError(
            f"{where}: feature {labels[j]}: {field_name} {raw.iloc[j]!r} is not a number of metres"
            f" ({bad.size} feature(s) affected)"
        )
    return num


def read_obstruction_layer(spec: LayerSpec) -> ObstructionLayer:
    """Read one polygon layer and its heights; refuse what cannot be used, naming the feature.

    Refused: a missing or unreadable file, a layer without CRS, no height
    attribute, empty or non-numeric heights, negative heights, null, empty,
    non-polygon or invalid geometries.
    """
    layer, label, several = _choose_layer(spec)
    gdf = _read_frame(spec.path, layer, label)
    columns = [c for c in gdf.columns if c != gdf.geometry.name]
    labels = _feature_labels(gdf, columns, label)
    geoms = np.asarray(gdf.geometry.array, dtype=object)
    _check_geometries(geoms, labels, label)
    hf, tf, height, top = _heights(gdf, columns, spec, labels, label)
    wgs84 = gdf.to_crs("EPSG:4326") if not gdf.crs.equals("EPSG:4326") else gdf
    return ObstructionLayer(
        spec=replace(spec, layer=layer if several else spec.layer),
        crs_name=gdf.crs.name,
        geometry=np.asarray(wgs84.geometry.array, dtype=object),
        height_m=height,
        top_m=top,
        feature_labels=labels,
        height_field=hf,
        top_field=tf,
    )


def _choose_layer(spec: LayerSpec) -> tuple[str, str, bool]:
    """(layer name, label for messages, file holds several layers) of the layer ``spec`` asks for."""
    import pyogrio

    path = spec.path
    if not path.startswith("/vsi") and not os.path.exists(path):
        raise DataFileError(f"obstruction layer not found: {path}")
    try:
        layers = [str(name) for name, _ in pyogrio.list_layers(path)]
    except Exception as exc:  # pyogrio raises its own DataSourceError and others
        raise DataFileError(f"cannot read {path} as a vector layer: {exc}") from None
    if not layers:
        raise DataError(f"{path} holds no vector layer")
    if spec.layer is None:
        if len(layers) > 1:
            raise InputError(
                f"{path} holds several layers ({', '.join(layers)}); choose one as "
                f"{path}#LAYER (or layer = \"...\" in the link file)"
            )
        layer = layers[0]
    elif spec.layer in layers:
        layer = spec.layer
    else:
        raise InputError(f"{path} has no layer {spec.layer!r}; its layers are: {', '.join(layers)}")
    label = f"{path}#{layer}" if len(layers) > 1 or spec.layer else path
    return layer, label, len(layers) > 1


def _read_frame(path: str, layer: str, label: str) -> Any:
    """The layer as a GeoDataFrame with its feature ids as index; DataError without a CRS."""
    import geopandas as gpd

    try:
        gdf = gpd.read_file(path, layer=layer, engine="pyogrio", fid_as_index=True)
    except Exception as exc:
        raise DataFileError(f"cannot read layer {layer!r} of {path}: {exc}") from None
    if gdf.crs is None:
        raise DataError(
            f"obstruction layer {label} has no coordinate reference system; assign one "
            "(e.g. ogr2ogr -a_srs EPSG:32633 out.gpkg in.shp) and try again"
        )
    return gdf


def _feature_labels(gdf: Any, columns: list[str], label: str) -> tuple[str, ...]:
    """'name (fid 3)' per feature, or 'fid 3' where it has no name, for messages."""
    name_col = _find_field(columns, None, ("name",), "name", label)
    fids = [str(i) for i in gdf.index]
    if name_col is None:
        return tuple(f"fid {f}" for f in fids)
    names = gdf[name_col].tolist()
    return tuple(
        f"{n!s} (fid {f})" if n is not None and str(n) not in ("", "nan", "None") else f"fid {f}"
        for n, f in zip(names, fids)
    )


def _heights(gdf: Any, columns: list[str], spec: LayerSpec, labels: Sequence[str],
             label: str) -> tuple[str | None, str | None, np.ndarray, np.ndarray]:
    """(height field, top field, heights above ground m, top elevations m); NaN where a field is absent."""
    hf = _find_field(columns, spec.height_field, DEFAULT_HEIGHT_FIELDS, "height above ground", label)
    tf = _find_field(columns, spec.top_field, DEFAULT_TOP_FIELDS, "top elevation", label)
    if hf is None and tf is None:
        raise DataError(
            f"obstruction layer {label} has no height attribute: expected a numeric column "
            f"{' or '.join(DEFAULT_HEIGHT_FIELDS)} (height above ground, m) or "
            f"{' or '.join(DEFAULT_TOP_FIELDS)} (elevation of the top, m, in the elevation "
            "raster's vertical datum); name yours with --height-field or --top-field. "
            f"Attributes found: {', '.join(columns) or 'none'}"
        )
    n = len(gdf)
    height = _numeric(gdf[hf], hf, labels, label) if hf else np.full(n, np.nan)
    top = _numeric(gdf[tf], tf, labels, label) if tf else np.full(n, np.nan)
    missing = np.flatnonzero(~np.isfinite(height) & ~np.isfinite(top))
    if missing.size:
        fields_ = " and ".join(f for f in (hf, tf) if f)
        raise DataError(
            f"{label}: feature {labels[missing[0]]} has no height ({fields_} empty); "
            f"{missing.size} feature(s) affected: fill them or remove them"
        )
    negative = np.flatnonzero(height < 0)
    if negative.size:
        raise DataError(
            f"{label}: feature {labels[negative[0]]} has a negative height above ground "
            f"({height[negative[0]]:g} m in {hf})"
        )
    tall = np.flatnonzero(height > MAX_HEIGHT_ABOVE_GROUND_M)
    if tall.size:
        raise DataError(
            f"{label}: feature {labels[tall[0]]} is {height[tall[0]]:g} m above ground in {hf}; "
            f"if that is the elevation of its top, name the attribute with {PARAMETER} instead",
            parameter="top_field",
        )
    return hf, tf, height, top


def _check_geometries(geoms: np.ndarray, labels: Sequence[str], where: str) -> None:
    import shapely

    missing = np.flatnonzero(shapely.is_missing(geoms) | shapely.is_empty(geoms))
    if missing.size:
        raise DataError(
            f"{where}: feature {labels[missing[0]]} has no geometry ({missing.size} feature(s)); "
            "remove them or draw their footprints"
        )
    types = shapely.get_type_id(geoms)
    wrong = np.flatnonzero(~np.isin(types, (3, 6)))  # Polygon, MultiPolygon
    if wrong.size:
        kind = shapely.get_type_id(geoms[wrong[0]])
        names = {0: "point", 1: "line", 2: "ring", 4: "multipoint", 5: "multiline", 7: "collection"}
        raise DataError(
            f"{where}: feature {labels[wrong[0]]} is a {names.get(int(kind), 'non-polygon')}; "
            "obstruction layers must hold polygons (footprints)"
        )
    invalid = np.flatnonzero(~shapely.is_valid(geoms))
    if invalid.size:
        reason = shapely.is_valid_reason(geoms[invalid[0]])
        raise DataError(
            f"{where}: feature {labels[invalid[0]]} has an invalid polygon ({reason}); "
            f"{invalid.size} feature(s) affected: repair them (e.g. ogr2ogr -makevalid) and try again"
        )
