"""Obstruction layers and surface models: the clutter standing on the ground along paths.

Two sources of clutter, usable together:

* **Obstruction layers**: polygons of buildings or tree stands from a vector
  file (GeoJSON, GeoPackage, Shapefile, any OGR format, any CRS), each with a
  height above ground or an absolute top elevation.  Where a path crosses a
  polygon the surface rises over exactly the crossed stretch.
* **Surface models**: first-return rasters (DSM) beside the bare-earth
  rasters (DTM); clutter is DSM minus DTM, clipped at zero.

Crossings are found exactly, not by sampling: each polygon near a path is
projected to an azimuthal equidistant projection centred on the path's
site a (PROJ ``aeqd`` on the WGS84 ellipsoid), where the geodesic from site a
is a straight line through the origin and the distance from the origin is
the true geodesic distance.  shapely intersects that line with the polygons
(vectorised), and the entry and exit distances of every crossed stretch are
inserted into the profile as extra samples carrying the obstruction's
height, so a building narrower than the sample spacing is never missed and
the raised stretch begins and ends where the footprint does.  Polygon edges
are straight between their vertices in the layer's own CRS; over building
sizes the difference from straight in the local projection is negligible.

Where several things stand at one sample, the highest wins (overlapping
polygons, polygons and a surface model).  Heights are metres; absolute tops
are in the vertical datum of the elevation rasters.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Any, Sequence

import numpy as np

from .errors import PARAMETER, DataError, DataFileError, InputError
from .geodesy import WGS84
from .profile import ClutterKind, Profiles, nodata_problem
from .terrain import ElevationModel

__all__ = [
    "KIND_CODES",
    "LayerSpec",
    "parse_layer_spec",
    "normalise_kind",
    "ObstructionLayer",
    "read_obstruction_layer",
    "Surroundings",
    "Crossings",
    "find_crossings",
    "SurroundedProfiles",
    "apply_surroundings",
    "RoofInfo",
    "surface_finest_cell_m",
]

#: Clutter kind codes, as in ``Profiles.clutter_kind`` (0 means none).
KIND_CODES = {k.label: int(k) for k in ClutterKind if k is not ClutterKind.NONE}
_KIND_ALIASES = {"building": "building", "buildings": "building", "tree": "trees", "trees": "trees"}

#: Attribute names tried, in order, when the planner names none (case-insensitive).
DEFAULT_HEIGHT_FIELDS = ("height_m", "height")
DEFAULT_TOP_FIELDS = ("top_m",)

#: A height above ground beyond this is taken for a mistake (an absolute top in the height field).
MAX_HEIGHT_ABOVE_GROUND_M = 1000.0

#: Distance tolerance when merging inserted samples with existing ones, metres.
_SAME_POINT_M = 1e-3

#: Search radius around a path's samples when picking candidate polygons, degrees (about 1 m).
_CANDIDATE_RADIUS_DEG = 1e-5


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
    import geopandas as gpd
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
    try:
        gdf = gpd.read_file(path, layer=layer, engine="pyogrio", fid_as_index=True)
    except Exception as exc:
        raise DataFileError(f"cannot read layer {layer!r} of {path}: {exc}") from None
    if gdf.crs is None:
        raise DataError(
            f"obstruction layer {label} has no coordinate reference system; assign one "
            "(e.g. ogr2ogr -a_srs EPSG:32633 out.gpkg in.shp) and try again"
        )
    columns = [c for c in gdf.columns if c != gdf.geometry.name]
    name_col = _find_field(columns, None, ("name",), "name", label)
    fids = [str(i) for i in gdf.index]
    if name_col is not None:
        names = gdf[name_col].tolist()
        labels = tuple(
            f"{n!s} (fid {f})" if n is not None and str(n) not in ("", "nan", "None") else f"fid {f}"
            for n, f in zip(names, fids)
        )
    else:
        labels = tuple(f"fid {f}" for f in fids)
    geoms = np.asarray(gdf.geometry.array, dtype=object)
    _check_geometries(geoms, labels, label)
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
    wgs84 = gdf.to_crs("EPSG:4326") if not gdf.crs.equals("EPSG:4326") else gdf
    return ObstructionLayer(
        spec=replace(spec, layer=layer if len(layers) > 1 else spec.layer),
        crs_name=gdf.crs.name,
        geometry=np.asarray(wgs84.geometry.array, dtype=object),
        height_m=height,
        top_m=top,
        feature_labels=labels,
        height_field=hf,
        top_field=tf,
    )


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


@dataclass(frozen=True)
class RoofInfo:
    """The building a site stands in: its roof elevation in the raster datum, metres."""

    layer: str
    feature: str
    height_m: float
    roof_m: float


@dataclass(frozen=True)
class Crossings:
    """Stretches of many paths inside polygons, flat arrays of shape (crossings,).

    ``from_m``/``to_m`` are geodesic distances from site a of the path.
    """

    path: np.ndarray
    feature: np.ndarray
    from_m: np.ndarray
    to_m: np.ndarray

    def __len__(self) -> int:
        return len(self.path)


def find_crossings(
    lat_a_deg: np.ndarray,
    lon_a_deg: np.ndarray,
    lat_b_deg: np.ndarray,
    lon_b_deg: np.ndarray,
    length_m: np.ndarray,
    sample_lat_deg: np.ndarray,
    sample_lon_deg: np.ndarray,
    n_samples: np.ndarray,
    geometry: np.ndarray,
    tree: Any = None,
) -> Crossings:
    """Where each geodesic a->b runs inside each polygon (WGS84 lon/lat polygons).

    Candidates come from an STRtree query around the sampled paths; the
    exact stretch is the shapely intersection of the straight line from the
    origin to site b in an azimuthal equidistant projection centred on site a
    (PROJ aeqd, WGS84), where distance from the origin is geodesic distance
    (Snyder, Map Projections: A Working Manual, USGS PP 1395, 1987, ch. 25).
    A path touching a polygon at one point gives a stretch of zero length.
    """
    import shapely
    from pyproj import Transformer

    empty = Crossings(np.zeros(0, int), np.zeros(0, int), np.zeros(0), np.zeros(0))
    if len(geometry) == 0 or len(length_m) == 0:
        return empty
    if tree is None:
        tree = shapely.STRtree(geometry)
    width = sample_lat_deg.shape[1]
    mask = np.arange(width)[None, :] < n_samples[:, None]
    rows = np.nonzero(mask)[0]
    coords = np.column_stack([sample_lon_deg[mask], sample_lat_deg[mask]])
    lines = shapely.linestrings(coords, indices=rows)
    pairs = tree.query(lines, predicate="dwithin", distance=_CANDIDATE_RADIUS_DEG)
    if pairs.shape[1] == 0:
        return empty
    order = np.lexsort((pairs[1], pairs[0]))
    path_of, feat_of = pairs[0][order], pairs[1][order]
    out_path, out_feat, out_from, out_to = [], [], [], []
    starts = np.flatnonzero(np.r_[True, path_of[1:] != path_of[:-1]])
    ends = np.r_[starts[1:], len(path_of)]
    for s, e in zip(starts, ends):
        p = int(path_of[s])
        feats = feat_of[s:e]
        # A bare PROJ pipeline: building it skips the CRS database search (~100x faster than from_crs).
        to_local = Transformer.from_pipeline(
            "+proj=pipeline +step +proj=unitconvert +xy_in=deg +xy_out=rad "
            f"+step +proj=aeqd +lat_0={float(lat_a_deg[p])!r} +lon_0={float(lon_a_deg[p])!r} +ellps=WGS84"
        )

        def project(xy: np.ndarray, _t=to_local) -> np.ndarray:
            x, y = _t.transform(xy[:, 0], xy[:, 1])
            return np.column_stack([x, y])

        xb, yb = to_local.transform(lon_b_deg[p], lat_b_deg[p])
        segment = shapely.linestrings([[0.0, 0.0], [xb, yb]])
        polys = shapely.transform(geometry[feats], project)
        inter = shapely.intersection(segment, polys)
        parts, which = shapely.get_parts(inter, return_index=True)
        keep = ~shapely.is_empty(parts)
        parts, which = parts[keep], which[keep]
        if len(parts) == 0:
            continue
        xy, part_of = shapely.get_coordinates(parts, return_index=True)
        r = np.hypot(xy[:, 0], xy[:, 1])
        first = np.searchsorted(part_of, np.arange(len(parts)))
        lo = np.minimum.reduceat(r, first)
        hi = np.maximum.reduceat(r, first)
        out_path.append(np.full(len(parts), p))
        out_feat.append(feats[which])
        out_from.append(np.clip(lo, 0.0, length_m[p]))
        out_to.append(np.clip(hi, 0.0, length_m[p]))
    if not out_path:
        return empty
    return Crossings(
        path=np.concatenate(out_path).astype(np.int64),
        feature=np.concatenate(out_feat).astype(np.int64),
        from_m=np.concatenate(out_from),
        to_m=np.concatenate(out_to),
    )


@dataclass(frozen=True)
class SurroundedProfiles:
    """Profiles with clutter, the crossed features and per-path warnings."""

    profiles: Profiles
    crossings: Crossings
    warnings: tuple[tuple[str, ...], ...]


@dataclass(frozen=True, eq=False)
class Surroundings:
    """What stands on the ground: obstruction layers and/or a surface model (DSM).

    ``tree_allowance_m`` is added to every tree height (growth since the
    survey, uncertainty).  ``surface`` is an ElevationModel of first-return
    rasters in the same vertical datum as the terrain.
    """

    layers: tuple[ObstructionLayer, ...] = ()
    surface: ElevationModel | None = None
    tree_allowance_m: float = 0.0

    def __post_init__(self) -> None:
        if not np.isfinite(self.tree_allowance_m) or self.tree_allowance_m < 0:
            raise InputError(f"tree allowance must be 0 m or more, got {self.tree_allowance_m!r}")

    @property
    def empty(self) -> bool:
        return not self.layers and self.surface is None

    @cached_property
    def _features(self) -> dict[str, Any]:
        import shapely

        if not self.layers:
            geom = np.zeros(0, dtype=object)
            return {"geometry": geom, "height_m": np.zeros(0), "top_m": np.zeros(0),
                    "kind": np.zeros(0, np.int8), "layer": np.zeros(0, int), "labels": (), "tree": None,
                    "allowance_m": np.zeros(0)}
        kind = np.concatenate([np.full(len(l), KIND_CODES[l.kind], np.int8) for l in self.layers])
        allowance = np.where(kind == KIND_CODES["trees"], self.tree_allowance_m, 0.0)
        geom = np.concatenate([l.geometry for l in self.layers])
        return {
            "geometry": geom,
            "height_m": np.concatenate([l.height_m for l in self.layers]) + allowance,
            "top_m": np.concatenate([l.top_m for l in self.layers]) + allowance,
            "allowance_m": allowance,
            "kind": kind,
            "layer": np.concatenate([np.full(len(l), i) for i, l in enumerate(self.layers)]),
            "labels": sum((l.feature_labels for l in self.layers), ()),
            "tree": shapely.STRtree(geom),
        }

    def describe(self) -> dict:
        """Settings and sources for the JSON record."""
        return {
            "obstruction_layers": [l.describe() for l in self.layers],
            "surface_sources": self.surface.describe() if self.surface is not None else [],
            "tree_allowance_m": self.tree_allowance_m,
        }

    def check_datum(self, model: ElevationModel) -> None:
        """Refuse a surface model whose stated vertical datum differs from the terrain's."""
        if self.surface is None:
            return
        unknown = "as the raster (not stated in the file)"
        ground = {s.vertical_datum for s in model.sources} - {unknown}
        surface = {s.vertical_datum for s in self.surface.sources} - {unknown}
        if ground and surface and ground != surface:
            raise DataError(
                f"the surface model's heights are in {', '.join(sorted(surface))} but the terrain's in "
                f"{', '.join(sorted(ground))}; bring both to one vertical datum before subtracting them"
            )

    def default_spacing_m(self, model: ElevationModel, lon_deg: np.ndarray, lat_deg: np.ndarray,
                          lat_b_deg: np.ndarray, lon_b_deg: np.ndarray) -> np.ndarray:
        """Half the finest terrain cell on each path a-b, or of the surface model if finer, metres."""
        from .profile import path_spacings_m

        terrain = path_spacings_m(model, lat_deg, lon_deg, lat_b_deg, lon_b_deg)
        if self.surface is None:
            return terrain
        return np.minimum(terrain, surface_finest_cell_m(self.surface) / 2.0)

    def roof_at(self, lon_deg: float, lat_deg: float, ground_m: float) -> RoofInfo | None:
        """The highest building whose footprint holds the point, or None."""
        import shapely

        f = self._features
        if f["tree"] is None:
            return None
        hits = f["tree"].query(shapely.points(lon_deg, lat_deg), predicate="intersects")
        hits = hits[f["kind"][hits] == KIND_CODES["building"]]
        if hits.size == 0:
            return None
        height = f["height_m"][hits]
        roof = np.where(np.isfinite(height), ground_m + height, f["top_m"][hits])
        j = int(np.argmax(roof))
        hit = int(hits[j])
        return RoofInfo(
            layer=self.layers[int(f["layer"][hit])].spec.label,
            feature=f["labels"][hit],
            height_m=float(roof[j] - ground_m),
            roof_m=float(roof[j]),
        )

    def crossing_records(self, crossings: Crossings, path: int) -> list[dict]:
        """JSON-ready list of the features path ``path`` crosses, in order from site a."""
        f = self._features
        sel = np.flatnonzero(crossings.path == path)
        sel = sel[np.argsort(crossings.from_m[sel], kind="stable")]
        kinds = {v: k for k, v in KIND_CODES.items()}
        out = []
        for j in sel:
            feat = int(crossings.feature[j])
            kind = kinds[int(f["kind"][feat])]
            extra = float(f["allowance_m"][feat])
            h, t = float(f["height_m"][feat]) - extra, float(f["top_m"][feat]) - extra
            out.append({
                "layer": self.layers[int(f["layer"][feat])].spec.label,
                "feature": f["labels"][feat],
                "kind": kind,
                "from_km": float(crossings.from_m[j]) / 1000.0,
                "to_km": float(crossings.to_m[j]) / 1000.0,
                "height_m": h if np.isfinite(h) else None,
                "top_m": None if np.isfinite(h) else t,
                "allowance_m": extra,
            })
        return out

    def apply(self, profiles: Profiles, model: ElevationModel) -> SurroundedProfiles:
        """Shorthand for :func:`apply_surroundings`."""
        return apply_surroundings(profiles, model, self)


def surface_finest_cell_m(model: ElevationModel) -> float:
    """Smallest ground cell size of any raster of ``model``, measured at its centre, metres."""
    from pyproj import CRS, Transformer

    sizes = []
    for s in model.sources:
        a, b, c, d, e, f = s.transform
        x = c + a * s.width / 2 + b * s.height / 2
        y = f + d * s.width / 2 + e * s.height / 2
        lon, lat = Transformer.from_crs(CRS.from_wkt(s.crs_wkt), "EPSG:4326", always_xy=True).transform(x, y)
        sizes.append(model.cell_size_m(float(lon), float(lat)))
    finite = [v for v in sizes if np.isfinite(v) and v > 0]
    return min(finite) if finite else np.inf


def _insert_samples(
    profiles: Profiles, model: ElevationModel, path: np.ndarray, distance_m: np.ndarray
) -> Profiles:
    """Profiles with extra samples at the given (path, distance) places, kept in order."""
    lines = profiles.lines
    width = profiles.distance_m.shape[1]
    n = profiles.n_samples
    # Drop places at or next to an existing sample (within a millimetre) and outside (0, length).
    inside = (distance_m > _SAME_POINT_M) & (distance_m < lines.length_m[path] - _SAME_POINT_M)
    path, distance_m = path[inside], distance_m[inside]
    if path.size:
        key = np.unique(np.column_stack([path, np.round(distance_m / _SAME_POINT_M)]), axis=0, return_index=True)[1]
        path, distance_m = path[key], distance_m[key]
        col = np.clip([np.searchsorted(profiles.distance_m[p, : n[p]], d) for p, d in zip(path, distance_m)], 1, None)
        col = np.asarray(col, dtype=int)
        near = np.minimum(
            np.abs(profiles.distance_m[path, col] - distance_m),
            np.abs(profiles.distance_m[path, col - 1] - distance_m),
        )
        path, distance_m = path[near > _SAME_POINT_M], distance_m[near > _SAME_POINT_M]
    if path.size == 0:
        return profiles
    lat_a, lon_a = profiles.lat_deg[path, 0], profiles.lon_deg[path, 0]
    lon_new, lat_new, _ = WGS84.fwd(lon_a, lat_a, lines.azimuth_a_to_b_deg[path], distance_m)
    lon_new, lat_new = np.asarray(lon_new, float), np.asarray(lat_new, float)
    ground_new, _ = model.sample(lon_new, lat_new)
    mask = np.arange(width)[None, :] < n[:, None]
    old_path = np.nonzero(mask)[0]
    all_path = np.concatenate([old_path, path])
    all_d = np.concatenate([profiles.distance_m[mask], distance_m])
    values = {
        "lat_deg": np.concatenate([profiles.lat_deg[mask], lat_new]),
        "lon_deg": np.concatenate([profiles.lon_deg[mask], lon_new]),
        "ground_m": np.concatenate([profiles.ground_m[mask], ground_new]),
    }
    order = np.lexsort((all_d, all_path))
    new_n = np.bincount(all_path, minlength=len(n)).astype(np.int64)
    new_width = int(new_n.max())
    start = np.concatenate([[0], np.cumsum(new_n)[:-1]])
    col = np.arange(order.size) - np.repeat(start, new_n)
    rows_sorted = all_path[order]
    rows = np.arange(len(n))[:, None]
    padded = np.arange(new_width)[None, :] >= new_n[:, None]

    def lay_out(flat: np.ndarray) -> np.ndarray:
        out = np.empty((len(n), new_width), dtype=flat.dtype)
        out[rows_sorted, col] = flat[order]
        return np.where(padded, out[rows[:, 0], new_n - 1][:, None], out)

    problems = list(profiles.problems)
    bad = np.flatnonzero(np.isnan(ground_new))
    for j in bad:
        p = int(path[j])
        if problems and problems[p] is None:
            problems[p] = nodata_problem(
                f"no elevation data (nodata) at {distance_m[j] / 1000:.3f} km from site a "
                f"({lat_new[j]:.6f}, {lon_new[j]:.6f}); fill the hole or pass {PARAMETER}"
            )
    ground = lay_out(values["ground_m"])
    return replace(
        profiles,
        lat_deg=lay_out(values["lat_deg"]),
        lon_deg=lay_out(values["lon_deg"]),
        distance_m=lay_out(all_d),
        ground_m=ground,
        clutter_m=np.zeros_like(ground),
        clutter_kind=np.zeros(ground.shape, dtype=np.int8),
        n_samples=new_n,
        problems=tuple(problems),
    )


def apply_surroundings(profiles: Profiles, model: ElevationModel, surroundings: Surroundings) -> SurroundedProfiles:
    """Add the clutter of obstruction layers and a surface model to profiles.

    Crossing entry and exit points become extra samples; every sample inside
    a crossed stretch carries the feature's height above its own ground (or
    its top minus that ground, for absolute tops).  The surface model adds
    DSM minus DTM, clipped at zero, where it covers the path.  At each
    sample the highest clutter wins and ``clutter_kind`` names its source.
    """
    f = surroundings._features
    lines = profiles.lines
    n = profiles.n_samples
    rows = np.arange(len(n))
    crossings = find_crossings(
        profiles.lat_deg[:, 0], profiles.lon_deg[:, 0],
        profiles.lat_deg[rows, n - 1], profiles.lon_deg[rows, n - 1],
        lines.length_m, profiles.lat_deg, profiles.lon_deg, n, f["geometry"], f["tree"],
    )
    out = _insert_samples(
        profiles, model,
        np.concatenate([crossings.path, crossings.path]),
        np.concatenate([crossings.from_m, crossings.to_m]),
    )
    shape = out.ground_m.shape
    by_kind = np.zeros((4,) + shape)
    if len(crossings):
        lo = np.array([np.searchsorted(out.distance_m[p, : out.n_samples[p]], d - _SAME_POINT_M, "left")
                       for p, d in zip(crossings.path, crossings.from_m)], dtype=np.int64)
        hi = np.array([np.searchsorted(out.distance_m[p, : out.n_samples[p]], d + _SAME_POINT_M, "right")
                       for p, d in zip(crossings.path, crossings.to_m)], dtype=np.int64)
        count = np.maximum(hi - lo, 0)
        k_rep = np.repeat(np.arange(len(crossings)), count)
        offset = np.arange(k_rep.size) - np.repeat(np.cumsum(count) - count, count)
        r = crossings.path[k_rep]
        c = lo[k_rep] + offset
        feat = crossings.feature[k_rep]
        height = f["height_m"][feat]
        value = np.where(np.isfinite(height), height, f["top_m"][feat] - out.ground_m[r, c])
        value = np.clip(np.nan_to_num(value, nan=0.0), 0.0, None)
        np.maximum.at(by_kind, (f["kind"][feat].astype(np.int64), r, c), value)
    warnings: list[list[str]] = [[] for _ in rows]
    if surroundings.surface is not None:
        dsm, covered = surroundings.surface.sample(out.lon_deg, out.lat_deg)
        by_kind[3] = np.clip(np.nan_to_num(dsm - out.ground_m, nan=0.0), 0.0, None)
        mask = np.arange(shape[1])[None, :] < out.n_samples[:, None]
        share = np.sum(np.isfinite(dsm) & mask, axis=1) / out.n_samples
        for p in np.flatnonzero(share < 1.0):
            warnings[p].append(
                f"the surface model covers {100 * share[p]:.0f}% of the path; "
                "no clutter is counted where it has no data"
            )
    clutter = by_kind.max(axis=0)
    kind = np.where(clutter > 0, np.argmax(by_kind, axis=0), 0).astype(np.int8)
    # Padded columns repeat site b; give them site b's clutter.
    last = out.n_samples - 1
    padded = np.arange(shape[1])[None, :] > last[:, None]
    clutter = np.where(padded, clutter[rows, last][:, None], clutter)
    kind = np.where(padded, kind[rows, last][:, None], kind).astype(np.int8)
    return SurroundedProfiles(
        profiles=replace(out, clutter_m=clutter, clutter_kind=kind),
        crossings=crossings,
        warnings=tuple(tuple(w) for w in warnings),
    )
