"""Geodesic paths between sites on the WGS84 ellipsoid (pyproj.Geod).

Distances in metres, azimuths in degrees clockwise from true north, in 0-360.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from pyproj import Geod

from ._sampling_kernels import hermite_paths

__all__ = ["WGS84", "PathLines", "path_lines", "sample_counts", "sample_paths", "NODE_SPACING_M",
           "canonical_order", "path_nodes"]

#: The one ellipsoid of the package: WGS84 (Karney's algorithms in PROJ).
WGS84 = Geod(ellps="WGS84")


@dataclass(frozen=True)
class PathLines:
    """Length and end azimuths of many geodesics (arrays of shape (paths,))."""

    length_m: np.ndarray
    azimuth_a_to_b_deg: np.ndarray
    azimuth_b_to_a_deg: np.ndarray


def path_lines(
    lat_a_deg: ArrayLike, lon_a_deg: ArrayLike, lat_b_deg: ArrayLike, lon_b_deg: ArrayLike
) -> PathLines:
    """Geodesic length and the forward azimuth seen from each end."""
    lat_a, lon_a, lat_b, lon_b = (np.atleast_1d(np.asarray(x, dtype=float)) for x in
                                  (lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg))
    az_ab, az_ba, dist = WGS84.inv(lon_a, lat_a, lon_b, lat_b)
    return PathLines(
        length_m=np.asarray(dist, dtype=float),
        azimuth_a_to_b_deg=np.mod(np.asarray(az_ab, dtype=float), 360.0),
        azimuth_b_to_a_deg=np.mod(np.asarray(az_ba, dtype=float), 360.0),
    )


def sample_counts(length_m: ArrayLike, spacing_m: ArrayLike) -> np.ndarray:
    """Number of samples (end points included, at least 3) so no step exceeds ``spacing_m``."""
    length = np.asarray(length_m, dtype=float)
    return (np.ceil(length / np.asarray(spacing_m, dtype=float)).astype(np.int64) + 1).clip(min=3)


#: Spacing of the exact geodesic points between which samples are interpolated, m.
#: Cubic Hermite interpolation over 10 km keeps samples within about 1 mm of
#: the exact geodesic up to latitude 85 degrees (tests/test_geodesy_nodes.py).
NODE_SPACING_M = 10_000.0
#: Paths reaching beyond this latitude are sampled exactly at every point.
INTERPOLATION_MAX_LAT_DEG = 85.0


def _node_derivatives(lat_deg: np.ndarray, back_az_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """d(lat)/ds and d(lon)/ds in degrees per metre along a geodesic.

    dphi/ds = cos(alpha) / M, dlambda/ds = sin(alpha) / (N cos phi), M and N the
    meridional and prime-vertical radii of curvature (Karney 2013, J. Geodesy
    87, eq. 1-2 of the geodesic equations; any geodesy handbook).
    """
    alpha = np.radians(back_az_deg + 180.0)
    phi = np.radians(lat_deg)
    e2 = WGS84.es
    w = 1.0 - e2 * np.sin(phi) ** 2
    m_radius = WGS84.a * (1.0 - e2) / w**1.5
    n_radius = WGS84.a / np.sqrt(w)
    dlat = np.degrees(np.cos(alpha) / m_radius)
    dlon = np.degrees(np.sin(alpha) / (n_radius * np.cos(phi)))
    return dlat, dlon


def _geodesic_nodes(
    lat_a: np.ndarray, lon_a: np.ndarray, az_deg: np.ndarray, length_m: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Exact points every <= NODE_SPACING_M along each geodesic, with derivatives.

    Returns ``(offsets, lat, lon, dlat_ds, dlon_ds, node_step_m)``: node j of
    path i is at flat index ``offsets[i] + j``; longitudes are unwrapped along
    each path so they can be interpolated across the antimeridian.
    """
    segments = np.maximum(np.ceil(length_m / NODE_SPACING_M), 1).astype(np.int64)
    counts = segments + 1
    offsets = np.zeros(counts.size + 1, dtype=np.int64)
    np.cumsum(counts, out=offsets[1:])
    path = np.repeat(np.arange(counts.size), counts)
    j = np.arange(offsets[-1]) - offsets[path]
    step = length_m / segments
    step = np.where(step > 0.0, step, 1.0)  # a zero-length path: every sample at node 0, no 0/0
    lon, lat, back = WGS84.fwd(lon_a[path], lat_a[path], az_deg[path], j * step[path])
    lon = np.asarray(lon, dtype=float)
    lat = np.asarray(lat, dtype=float)
    dlat, dlon = _node_derivatives(lat, np.asarray(back, dtype=float))
    # Unwrap longitude along each path (a jump of more than 180 degrees is a wrap).
    jump = np.diff(lon, prepend=lon[:1])
    jump[offsets[:-1]] = 0.0
    wraps = np.cumsum(np.round(jump / 360.0))
    wraps -= np.repeat(wraps[offsets[:-1]], counts)
    lon = lon - 360.0 * wraps
    return offsets, lat, lon, dlat, dlon, step


def canonical_order(
    lat_a: np.ndarray, lon_a: np.ndarray, lat_b: np.ndarray, lon_b: np.ndarray
) -> np.ndarray:
    """True where a path is sampled from b to a: the end of smaller (lat, lon) comes first.

    Every sampling step runs from this canonical first end, so a path and its
    reverse get exactly the same points (reciprocity; common practice).
    """
    return (lat_a > lat_b) | ((lat_a == lat_b) & (lon_a > lon_b))


def _canonical(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg):
    lat_a, lon_a, lat_b, lon_b = (np.atleast_1d(np.asarray(x, dtype=float)) for x in
                                  (lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg))
    flip = canonical_order(lat_a, lon_a, lat_b, lon_b)
    c_lat_a, c_lat_b = np.where(flip, lat_b, lat_a), np.where(flip, lat_a, lat_b)
    c_lon_a, c_lon_b = np.where(flip, lon_b, lon_a), np.where(flip, lon_a, lon_b)
    return flip, c_lat_a, c_lon_a, c_lat_b, c_lon_b


def path_nodes(
    lat_a_deg: ArrayLike, lon_a_deg: ArrayLike, lat_b_deg: ArrayLike, lon_b_deg: ArrayLike
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact points along each geodesic, both ends included, at most NODE_SPACING_M apart.

    Returns ``(offsets, lat_deg, lon_deg)``; the points of path i are at flat
    indices ``offsets[i]:offsets[i + 1]``.  Computed from the canonical end
    (:func:`canonical_order`), so a path and its reverse give the same set.
    """
    flip, la, lo, lb, lob = _canonical(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg)
    az, _, dist = WGS84.inv(lo, la, lob, lb)
    offsets, lat, lon, _, _, _ = _geodesic_nodes(la, lo, np.mod(np.asarray(az, dtype=float), 360.0),
                                                 np.asarray(dist, dtype=float))
    lon = np.where((lon < -180.0) | (lon > 180.0), np.mod(lon + 180.0, 360.0) - 180.0, lon)
    return offsets, lat, lon


def sample_paths(
    lat_a_deg: ArrayLike,
    lon_a_deg: ArrayLike,
    lat_b_deg: ArrayLike,
    lon_b_deg: ArrayLike,
    spacing_m: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, PathLines]:
    """Evenly spaced points along many geodesics, both end points included.

    Returns ``(lat_deg, lon_deg, distance_m, n_samples, lines)``; the first
    three have shape (paths, samples), ordered from site a.  Rows of shorter
    paths are padded by repeating their last point, so padded columns sit
    exactly on site b.

    Reciprocal: each path is sampled from its canonical end
    (:func:`canonical_order`) and the row reversed when that end is site b, so
    swapping a and b gives exactly the reversed points, the same length and
    the same count (distances from a then agree to rounding).

    Exact points every ``NODE_SPACING_M`` come from one vectorised forward
    geodesic call (pyproj.Geod.fwd, Karney's algorithm); samples between them
    are cubic Hermite interpolated using the geodesic's direction at each node
    (within about a millimetre of the exact geodesic).  Paths reaching beyond
    ``INTERPOLATION_MAX_LAT_DEG`` are computed exactly at every sample.
    """
    flip, lat_a, lon_a, lat_b, lon_b = _canonical(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg)
    canon = path_lines(lat_a, lon_a, lat_b, lon_b)
    lines = PathLines(
        length_m=canon.length_m,
        azimuth_a_to_b_deg=np.where(flip, canon.azimuth_b_to_a_deg, canon.azimuth_a_to_b_deg),
        azimuth_b_to_a_deg=np.where(flip, canon.azimuth_a_to_b_deg, canon.azimuth_b_to_a_deg),
    )
    n = np.broadcast_to(sample_counts(lines.length_m, spacing_m), lines.length_m.shape)
    width = int(n.max())
    col = np.arange(width)[None, :]
    last = (n - 1)[:, None]
    frac = np.minimum(col, last) / last
    distance = frac * lines.length_m[:, None]
    offsets, nlat, nlon, dlat, dlon, step = _geodesic_nodes(
        lat_a, lon_a, canon.azimuth_a_to_b_deg, lines.length_m
    )
    lat, lon = hermite_paths(distance, offsets, step, nlat, nlon, dlat, dlon)
    if lon.size and (lon.min() < -180.0 or lon.max() > 180.0):
        wrapped = (lon < -180.0) | (lon > 180.0)
        lon = np.where(wrapped, np.mod(lon + 180.0, 360.0) - 180.0, lon)
    # Near the poles interpolation in latitude/longitude degrades: exact points there.
    polar = np.flatnonzero(np.maximum.reduceat(np.abs(nlat), offsets[:-1]) > INTERPOLATION_MAX_LAT_DEG)
    if polar.size:
        shape = (polar.size, width)
        plon, plat, _ = WGS84.fwd(
            np.broadcast_to(lon_a[polar, None], shape).ravel(),
            np.broadcast_to(lat_a[polar, None], shape).ravel(),
            np.broadcast_to(canon.azimuth_a_to_b_deg[polar, None], shape).ravel(),
            distance[polar].ravel(),
        )
        lat[polar] = np.asarray(plat, dtype=float).reshape(shape)
        lon[polar] = np.asarray(plon, dtype=float).reshape(shape)
    # Put the ends exactly on the sites (fwd rounds at the 1e-9 degree level).
    lat[:, 0] = lat_a
    lon[:, 0] = lon_a
    at_end = col >= last
    np.copyto(lat, lat_b[:, None], where=at_end)  # in place: no new (paths, samples) arrays
    np.copyto(lon, lon_b[:, None], where=at_end)
    rows = np.flatnonzero(flip)
    if rows.size:
        # Reverse the real samples of b-first rows; padding (column >= n-1) maps to column 0, site b.
        idx = last[rows] - np.minimum(col, last[rows])
        lat[rows] = np.take_along_axis(lat[rows], idx, axis=1)
        lon[rows] = np.take_along_axis(lon[rows], idx, axis=1)
        distance[rows] = lines.length_m[rows, None] - np.take_along_axis(distance[rows], idx, axis=1)
    return lat, lon, distance, n, lines
