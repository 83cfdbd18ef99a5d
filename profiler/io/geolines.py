"""Link lines for vector outputs: the geodesic between the sites, densified, cut at the antimeridian.

The profile follows the WGS84 geodesic (:mod:`profiler.geodesy`); a straight
line in longitude/latitude drawn between the ends strays from it (about 85 m
at the middle of a 50 km east-west link at 60 degrees latitude), so every
vector output draws the geodesic itself: vertices every ``MAX_STEP_M`` or
less, placed with ``pyproj.Geod.fwd`` along the azimuth of ``Geod.inv``.

A line that crosses the antimeridian is cut there in two parts, one ending at
longitude +180 and the other starting at -180 (or the reverse), as RFC 7946
section 3.1.9 asks of GeoJSON; the KML and CSV (WKT) writers use the same
parts.  The latitude of the cut is interpolated between the two vertices on
either side (at most ``MAX_STEP_M`` apart, so it stays within millimetres
of the geodesic's).  A GeoPackage layer holds one geometry type
(LineString), so there the line stays whole and its longitudes run on past
+-180 instead.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["MAX_STEP_M", "geodesic_vertices", "geodesic_parts", "line_geometries"]

#: Longest distance between two vertices of a drawn link, m.
MAX_STEP_M = 1000.0


def geodesic_vertices(lon_a, lat_a, lon_b, lat_b, max_step_m: float = MAX_STEP_M):
    """Vertices of the geodesics a->b: ``(lon_deg, lat_deg, offsets)``, all rows concatenated.

    Row ``i`` is ``lon_deg[offsets[i]:offsets[i + 1]]``; it starts exactly at
    a, ends exactly at b, and its vertices are equally spaced along the
    geodesic, at most ``max_step_m`` apart (two vertices for a zero-length row).
    """
    from pyproj import Geod

    geod = Geod(ellps="WGS84")
    lon_a, lat_a, lon_b, lat_b = (np.atleast_1d(np.asarray(v, dtype=float)) for v in (lon_a, lat_a, lon_b, lat_b))
    az12, _, dist = geod.inv(lon_a, lat_a, lon_b, lat_b)
    dist = np.asarray(dist, dtype=float)
    segments = np.maximum(1, np.ceil(dist / max_step_m - 1e-9)).astype(np.int64)
    counts = segments + 1
    offsets = np.concatenate([[0], np.cumsum(counts)])
    row = np.repeat(np.arange(lon_a.size), counts)
    step = np.arange(offsets[-1]) - offsets[row]
    s = dist[row] * step / segments[row]
    lon, lat, _ = geod.fwd(lon_a[row], lat_a[row], np.asarray(az12, dtype=float)[row], s)
    lon, lat = np.asarray(lon, dtype=float), np.asarray(lat, dtype=float)
    lon[offsets[:-1]], lat[offsets[:-1]] = _wrap(lon_a), lat_a
    lon[offsets[1:] - 1], lat[offsets[1:] - 1] = _wrap(lon_b), lat_b
    return lon, lat, offsets


def _wrap(lon: np.ndarray) -> np.ndarray:
    """Longitudes in [-180, 180] (180 stays 180)."""
    return np.where((lon >= -180.0) & (lon <= 180.0), lon, (lon + 180.0) % 360.0 - 180.0)


def _split(lon: np.ndarray, lat: np.ndarray) -> list[np.ndarray]:
    """One row's vertices as parts (n, 2) of (lon, lat), cut where a step crosses the antimeridian."""
    parts: list[np.ndarray] = []
    start_lon, start_lat = [lon[0]], [lat[0]]
    cur_lon, cur_lat = start_lon, start_lat
    for i in range(1, lon.size):
        d = lon[i] - lon[i - 1]
        if abs(d) > 180.0:
            edge = 180.0 if d < 0 else -180.0  # going east past +180 (d < 0 after wrapping), or west past -180
            nxt = lon[i] + (360.0 if d < 0 else -360.0)
            t = (edge - lon[i - 1]) / (nxt - lon[i - 1]) if nxt != lon[i - 1] else 0.0
            lat_cut = lat[i - 1] + t * (lat[i] - lat[i - 1])
            cur_lon.append(edge)
            cur_lat.append(lat_cut)
            parts.append(np.column_stack([cur_lon, cur_lat]))
            cur_lon, cur_lat = [-edge], [lat_cut]
        cur_lon.append(lon[i])
        cur_lat.append(lat[i])
    parts.append(np.column_stack([cur_lon, cur_lat]))
    # A site exactly on the antimeridian leaves a part of one repeated point: drop it.
    kept = [p for p in parts if len(p) >= 2 and np.ptp(p, axis=0).any()]
    return kept or parts[:1]


def geodesic_parts(lon_a, lat_a, lon_b, lat_b, max_step_m: float = MAX_STEP_M) -> list[list[np.ndarray]]:
    """For each row, its line as a list of parts, each an (n, 2) array of (lon, lat) degrees."""
    lon, lat, offsets = geodesic_vertices(lon_a, lat_a, lon_b, lat_b, max_step_m)
    jumps = np.abs(np.diff(lon)) > 180.0
    out: list[list[np.ndarray]] = []
    for i in range(offsets.size - 1):
        lo, hi = offsets[i], offsets[i + 1]
        if jumps[lo:hi - 1].any():
            out.append(_split(lon[lo:hi], lat[lo:hi]))
        else:
            out.append([np.column_stack([lon[lo:hi], lat[lo:hi]])])
    return out


def line_geometries(lon_a, lat_a, lon_b, lat_b, drawn: Any = None, *, unwrap: bool = False,
                    max_step_m: float = MAX_STEP_M) -> np.ndarray:
    """Shapely lines of the geodesics a->b, None where ``drawn`` is False (rows not profiled).

    A line that crosses the antimeridian is a MultiLineString cut there; or,
    with ``unwrap`` (the GeoPackage, whose layer holds LineStrings only), one
    LineString whose longitudes run on past +-180 from site a's (179.9 to
    180.1, not to -179.9), so that it is drawn short, not around the world.
    """
    import shapely

    n = np.atleast_1d(np.asarray(lon_a)).size
    keep = np.ones(n, dtype=bool) if drawn is None else np.asarray(drawn, dtype=bool)
    geoms = np.full(n, None, dtype=object)
    rows = np.flatnonzero(keep)
    if rows.size == 0:
        return geoms
    ends = [np.atleast_1d(np.asarray(v, dtype=float))[rows] for v in (lon_a, lat_a, lon_b, lat_b)]
    lon, lat, offsets = geodesic_vertices(ends[0], ends[1], ends[2], ends[3], max_step_m=max_step_m)
    counts = np.diff(offsets)
    index = np.repeat(np.arange(rows.size), counts)
    jumps = np.zeros(lon.size, dtype=bool)
    jumps[1:] = np.abs(np.diff(lon)) > 180.0
    jumps[offsets[:-1]] = False  # the first vertex of a row follows another row's last
    crossing = np.zeros(rows.size, dtype=bool)
    crossing[index[jumps]] = True
    simple = shapely.linestrings(np.column_stack([lon, lat]), indices=index)
    for j in np.flatnonzero(crossing):
        lo, hi = offsets[j], offsets[j + 1]
        if unwrap:
            steps = (np.diff(lon[lo:hi]) + 180.0) % 360.0 - 180.0
            run = lon[lo] + np.concatenate([[0.0], np.cumsum(steps)])
            simple[j] = shapely.LineString(np.column_stack([run, lat[lo:hi]]))
        else:
            simple[j] = shapely.MultiLineString(_split(lon[lo:hi], lat[lo:hi]))
    geoms[rows] = simple
    return geoms
