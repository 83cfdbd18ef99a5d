"""Geodesic paths between sites on the WGS84 ellipsoid (pyproj.Geod).

Distances in metres, azimuths in degrees clockwise from true north, in 0-360.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from pyproj import Geod

__all__ = ["WGS84", "PathLines", "path_lines", "sample_counts", "sample_paths"]

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


def sample_paths(
    lat_a_deg: ArrayLike,
    lon_a_deg: ArrayLike,
    lat_b_deg: ArrayLike,
    lon_b_deg: ArrayLike,
    spacing_m: ArrayLike,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, PathLines]:
    """Evenly spaced points along many geodesics, both end points included.

    Returns ``(lat_deg, lon_deg, distance_m, n_samples, lines)``; the first
    three have shape (paths, samples).  Rows of shorter paths are padded by
    repeating their last point, so padded columns sit exactly on site b.
    Points come from one vectorised forward geodesic call (pyproj.Geod.fwd).
    """
    lines = path_lines(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg)
    lat_a = np.atleast_1d(np.asarray(lat_a_deg, dtype=float))
    lon_a = np.atleast_1d(np.asarray(lon_a_deg, dtype=float))
    lat_b = np.atleast_1d(np.asarray(lat_b_deg, dtype=float))
    lon_b = np.atleast_1d(np.asarray(lon_b_deg, dtype=float))
    n = np.broadcast_to(sample_counts(lines.length_m, spacing_m), lines.length_m.shape)
    width = int(n.max())
    col = np.arange(width)[None, :]
    last = (n - 1)[:, None]
    frac = np.minimum(col, last) / last
    distance = frac * lines.length_m[:, None]
    az = np.broadcast_to(lines.azimuth_a_to_b_deg[:, None], distance.shape)
    lon0 = np.broadcast_to(lon_a[:, None], distance.shape)
    lat0 = np.broadcast_to(lat_a[:, None], distance.shape)
    lon, lat, _ = WGS84.fwd(lon0.ravel(), lat0.ravel(), az.ravel(), distance.ravel())
    lon = np.asarray(lon, dtype=float).reshape(distance.shape)
    lat = np.asarray(lat, dtype=float).reshape(distance.shape)
    # Put the far end exactly on site b (fwd rounds at the 1e-9 degree level).
    at_end = col >= last
    lat = np.where(at_end, lat_b[:, None], lat)
    lon = np.where(at_end, lon_b[:, None], lon)
    return lat, lon, distance, n, lines
