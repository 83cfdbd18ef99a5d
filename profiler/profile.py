"""Surface profiles of many paths: geodesic samples, ground and clutter heights."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError
from .geodesy import PathLines, sample_paths
from .terrain import ElevationModel

__all__ = ["Profiles", "build_profiles", "default_spacing_m", "default_spacings_m", "CLUTTER_KINDS"]

#: Codes of ``Profiles.clutter_kind``.
CLUTTER_KINDS = {0: "none", 1: "building", 2: "trees", 3: "surface model"}


@dataclass(frozen=True)
class Profiles:
    """Heights along many paths, arrays of shape (paths, samples).

    Rows are padded past ``n_samples`` by repeating the last sample (site b).
    ``ground_m`` is terrain above the raster's vertical datum; ``clutter_m``
    the height of buildings and trees above it (0 where none).  ``problems``
    holds, per path, None or a sentence saying why the path cannot be used.
    ``clutter_kind`` (int8, same shape) says what the clutter is: 0 none,
    1 building, 2 trees, 3 surface model (see :data:`CLUTTER_KINDS`).
    Samples need not be evenly spaced: obstruction edges are inserted.
    """

    lat_deg: np.ndarray
    lon_deg: np.ndarray
    distance_m: np.ndarray
    ground_m: np.ndarray
    clutter_m: np.ndarray
    n_samples: np.ndarray
    lines: PathLines
    spacing_m: np.ndarray
    problems: tuple[str | None, ...] = field(default=())
    clutter_kind: np.ndarray | None = None

    @property
    def length_m(self) -> np.ndarray:
        return self.lines.length_m

    @property
    def surface_m(self) -> np.ndarray:
        """Ground plus clutter, metres above the vertical datum."""
        return self.ground_m + self.clutter_m

    @cached_property
    def interior(self) -> np.ndarray:
        """True for samples strictly between the two ends of each path."""
        col = np.arange(self.distance_m.shape[1])[None, :]
        return (col > 0) & (col < (self.n_samples - 1)[:, None])

    @property
    def valid(self) -> np.ndarray:
        """True for paths without problems."""
        return np.array([p is None for p in self.problems], dtype=bool)


def default_spacing_m(model: ElevationModel, lon_deg: float, lat_deg: float) -> float:
    """Half the ground size of the finest raster cell at a point, metres."""
    cell = model.cell_size_m(lon_deg, lat_deg)
    if not np.isfinite(cell) or cell <= 0:
        return 15.0
    return cell / 2.0


def default_spacings_m(model: ElevationModel, lon_deg: ArrayLike, lat_deg: ArrayLike) -> np.ndarray:
    """Half the ground size of the finest raster cell at many points, metres (15 m where unknown)."""
    cell = model.cell_sizes_m(lon_deg, lat_deg)
    return np.where(np.isfinite(cell) & (cell > 0), cell / 2.0, 15.0)


def build_profiles(
    model: ElevationModel,
    lat_a_deg: ArrayLike,
    lon_a_deg: ArrayLike,
    lat_b_deg: ArrayLike,
    lon_b_deg: ArrayLike,
    *,
    spacing_m: float | ArrayLike | None = None,
    labels: list[str] | None = None,
) -> Profiles:
    """Sample the geodesic of each path and the terrain beneath it.

    ``spacing_m`` None uses half the finest raster cell at site a of each path.
    Paths whose sites lie outside the rasters, or which cross nodata, are
    kept with NaN heights and a sentence in ``problems`` naming the place.
    """
    lat_a = np.atleast_1d(np.asarray(lat_a_deg, dtype=float))
    lon_a = np.atleast_1d(np.asarray(lon_a_deg, dtype=float))
    lat_b = np.atleast_1d(np.asarray(lat_b_deg, dtype=float))
    lon_b = np.atleast_1d(np.asarray(lon_b_deg, dtype=float))
    n_paths = lat_a.shape[0]
    labels = labels or [f"path {i + 1}" for i in range(n_paths)]
    if spacing_m is None:
        spacing = default_spacings_m(model, lon_a, lat_a)
    else:
        spacing = np.broadcast_to(np.asarray(spacing_m, dtype=float), (n_paths,)).copy()
        if np.any(~np.isfinite(spacing)) or np.any(spacing <= 0):
            raise InputError(f"sample spacing must be a positive number of metres, got {spacing_m!r}")
    lat, lon, dist, n, lines = sample_paths(lat_a, lon_a, lat_b, lon_b, spacing)
    ground, covered = model.sample(lon, lat)
    # Padded columns repeat site b, so whole-row checks equal checks of the real samples.
    fine = covered.all(axis=1) & ~np.isnan(ground).any(axis=1)
    problems: list[str | None] = [None] * n_paths
    for i in np.flatnonzero(~fine):
        problems[i] = _problem(labels[i], lat[i], lon[i], dist[i], ground[i], covered[i], n[i])
    return Profiles(
        lat_deg=lat,
        lon_deg=lon,
        distance_m=dist,
        ground_m=ground,
        clutter_m=np.zeros_like(ground),
        n_samples=n,
        lines=lines,
        spacing_m=spacing,
        problems=tuple(problems),
        clutter_kind=np.zeros(ground.shape, dtype=np.int8),
    )


def _problem(label, lat, lon, dist, ground, covered, n) -> str | None:
    if not covered[0]:
        return f"{label}: site a ({lat[0]:.6f}, {lon[0]:.6f}) lies outside the elevation rasters"
    if not covered[n - 1]:
        return f"{label}: site b ({lat[n - 1]:.6f}, {lon[n - 1]:.6f}) lies outside the elevation rasters"
    bad_cover = np.flatnonzero(~covered[:n])
    if bad_cover.size:
        j = bad_cover[0]
        return (
            f"{label}: the path leaves the elevation rasters at {dist[j] / 1000:.3f} km "
            f"from site a ({lat[j]:.6f}, {lon[j]:.6f}); add a raster that covers it"
        )
    holes = np.flatnonzero(np.isnan(ground[:n]))
    if holes.size:
        j = holes[0]
        return (
            f"{label}: no elevation data (nodata) at {dist[j] / 1000:.3f} km from site a "
            f"({lat[j]:.6f}, {lon[j]:.6f}), {holes.size} sample(s) affected; "
            "fill the hole in the raster or pass --nodata-fill-m HEIGHT to use a stated height"
        )
    return None
