"""Obstruction layers and surface models: the clutter standing on the ground along paths.

Reading the layers is :mod:`profiler.obstruction_layers` (re-exported here);
this module finds where paths cross them and adds the clutter to profiles.

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

from dataclasses import dataclass, replace
from functools import cached_property
from typing import Any

import numpy as np

from .errors import PARAMETER, DataError, InputError
from .geodesy import WGS84
from .obstruction_layers import (
    DEFAULT_HEIGHT_FIELDS,
    DEFAULT_TOP_FIELDS,
    KIND_CODES,
    MAX_HEIGHT_ABOVE_GROUND_M,
    LayerSpec,
    ObstructionLayer,
    normalise_kind,
    parse_layer_spec,
    read_obstruction_layer,
)
from .obstruction_layers import __all__ as _LAYER_NAMES
from .profile import Profiles, nodata_problem, path_spacings_m
from .terrain import ElevationModel
from .vertical import raster_datum

__all__ = [
    *_LAYER_NAMES,  # re-exported: the layer names keep their old import path
    "Surroundings",
    "Crossings",
    "find_crossings",
    "SurroundedProfiles",
    "apply_surroundings",
    "RoofInfo",
    "surface_finest_cell_m",
]

#: Distance tolerance when merging inserted samples with existing ones, metres.
_SAME_POINT_M = 1e-3

#: Search radius around a path's samples when picking candidate polygons, degrees (about 1 m).
_CANDIDATE_RADIUS_DEG = 1e-5


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

    empty = Crossings(np.zeros(0, int), np.zeros(0, int), np.zeros(0), np.zeros(0))
    if len(geometry) == 0 or len(length_m) == 0:
        return empty
    path_of, feat_of = _candidates(sample_lat_deg, sample_lon_deg, n_samples, geometry, tree)
    if path_of.size == 0:
        return empty
    out: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    paths: list[int] = []
    starts = np.flatnonzero(np.r_[True, path_of[1:] != path_of[:-1]])
    ends = np.r_[starts[1:], len(path_of)]
    for s, e in zip(starts, ends):
        p = int(path_of[s])
        found = _path_crossings(float(lat_a_deg[p]), float(lon_a_deg[p]), lat_b_deg[p], lon_b_deg[p],
                                float(length_m[p]), feat_of[s:e], geometry, shapely)
        if found is not None:
            out.append(found)
            paths.append(p)
    if not out:
        return empty
    return Crossings(
        path=np.concatenate([np.full(len(f[0]), p) for p, f in zip(paths, out)]).astype(np.int64),
        feature=np.concatenate([f[0] for f in out]).astype(np.int64),
        from_m=np.concatenate([f[1] for f in out]),
        to_m=np.concatenate([f[2] for f in out]),
    )


def _candidates(sample_lat_deg: np.ndarray, sample_lon_deg: np.ndarray, n_samples: np.ndarray,
                geometry: np.ndarray, tree: Any) -> tuple[np.ndarray, np.ndarray]:
    """(path, feature) pairs of polygons near each sampled path (STRtree query), sorted by path then feature."""
    import shapely

    if tree is None:
        tree = shapely.STRtree(geometry)
    width = sample_lat_deg.shape[1]
    mask = np.arange(width)[None, :] < n_samples[:, None]
    rows = np.nonzero(mask)[0]
    coords = np.column_stack([sample_lon_deg[mask], sample_lat_deg[mask]])
    lines = shapely.linestrings(coords, indices=rows)
    pairs = tree.query(lines, predicate="dwithin", distance=_CANDIDATE_RADIUS_DEG)
    if pairs.shape[1] == 0:
        return np.zeros(0, int), np.zeros(0, int)
    order = np.lexsort((pairs[1], pairs[0]))
    return pairs[0][order], pairs[1][order]


def _path_crossings(lat_a: float, lon_a: float, lat_b: Any, lon_b: Any, length_m: float, feats: np.ndarray,
                    geometry: np.ndarray, shapely: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(feature, from_m, to_m) of the stretches of one path inside its candidate polygons; None if none."""
    from pyproj import Transformer

    # A bare PROJ pipeline: building it skips the CRS database search (~100x faster than from_crs).
    to_local = Transformer.from_pipeline(
        "+proj=pipeline +step +proj=unitconvert +xy_in=deg +xy_out=rad "
        f"+step +proj=aeqd +lat_0={lat_a!r} +lon_0={lon_a!r} +ellps=WGS84"
    )

    def project(xy: np.ndarray) -> np.ndarray:
        x, y = to_local.transform(xy[:, 0], xy[:, 1])
        return np.column_stack([x, y])

    xb, yb = to_local.transform(lon_b, lat_b)
    segment = shapely.linestrings([[0.0, 0.0], [xb, yb]])
    polys = shapely.transform(geometry[feats], project)
    inter = shapely.intersection(segment, polys)
    parts, which = shapely.get_parts(inter, return_index=True)
    keep = ~shapely.is_empty(parts)
    parts, which = parts[keep], which[keep]
    if len(parts) == 0:
        return None
    xy, part_of = shapely.get_coordinates(parts, return_index=True)
    r = np.hypot(xy[:, 0], xy[:, 1])
    first = np.searchsorted(part_of, np.arange(len(parts)))
    lo = np.minimum.reduceat(r, first)
    hi = np.maximum.reduceat(r, first)
    return feats[which], np.clip(lo, 0.0, length_m), np.clip(hi, 0.0, length_m)


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
        ground = {d for s in model.sources if (d := raster_datum(s.vertical_datum)) is not None}
        surface = {d for s in self.surface.sources if (d := raster_datum(s.vertical_datum)) is not None}
        if ground and surface and ground != surface:
            raise DataError(
                f"the surface model's heights are in {', '.join(sorted(surface))} but the terrain's in "
                f"{', '.join(sorted(ground))}; bring both to one vertical datum before subtracting them"
            )

    def default_spacing_m(self, model: ElevationModel, lon_deg: np.ndarray, lat_deg: np.ndarray,
                          lat_b_deg: np.ndarray, lon_b_deg: np.ndarray) -> np.ndarray:
        """Half the finest terrain cell on each path a-b, or of the surface model if finer, metres."""
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
