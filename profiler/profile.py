"""Surface profiles of many paths: geodesic samples, ground and clutter heights."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike

from .clutter import ClutterKind
from .errors import PARAMETER, InputError, Problem
from .geodesy import PathLines, path_lines, path_nodes, sample_paths
from .terrain import ElevationModel

__all__ = ["Profiles", "build_profiles", "default_spacing_m", "default_spacings_m", "finest_cells_m",
           "path_spacings_m", "check_spacing_m", "sample_limit_problem", "spacing_warning",
           "CLUTTER_KINDS", "ClutterKind", "MIN_SPACING_M", "MAX_SAMPLES_PER_PATH", "MAX_SAMPLES_PER_BATCH",
           "FALLBACK_SPACING_M"]

#: Finest sample spacing accepted, m: below it the raster, not the sampling, limits
#: what a profile can show, and the sample count grows without bound (common practice).
MIN_SPACING_M = 0.01
#: Most samples one path may have (a 100 km path at 10 cm; bounds memory, common practice).
MAX_SAMPLES_PER_PATH = 1_000_000
#: Most samples one engine call may hold, paths x samples of the widest (about 1 GB of arrays
#: at the 400-500 bytes a sample costs through the whole analysis, measured).
MAX_SAMPLES_PER_BATCH = 2_000_000
#: Spacing used where no raster cell size is known along a path, m.
FALLBACK_SPACING_M = 15.0

#: Codes of ``Profiles.clutter_kind`` and their record words (kept for callers of the old name).
CLUTTER_KINDS = {int(k): k.label for k in ClutterKind}


@dataclass(frozen=True)
class Profiles:
    """Heights along many paths, arrays of shape (paths, samples).

    Rows are padded past ``n_samples`` by repeating the last sample (site b).
    ``ground_m`` is terrain above the raster's vertical datum; ``clutter_m``
    the height of buildings and trees above it (0 where none).  ``problems``
    holds, per path, None or a sentence saying why the path cannot be used.
    ``clutter_kind`` (int8, same shape) says what the clutter is: 0 none,
    1 building, 2 trees, 3 surface model (see :class:`ClutterKind`).
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
    #: Finest raster cell on each path, m (NaN where unknown); see :func:`finest_cells_m`.
    finest_cell_m: np.ndarray | None = None
    #: Per path, None or a sentence saying the given spacing is coarser than the raster.
    sampling_warnings: tuple[str | None, ...] = field(default=())

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
        return FALLBACK_SPACING_M
    return cell / 2.0


def default_spacings_m(model: ElevationModel, lon_deg: ArrayLike, lat_deg: ArrayLike) -> np.ndarray:
    """Half the ground size of the finest raster cell at many points, metres (15 m where unknown)."""
    cell = model.cell_sizes_m(lon_deg, lat_deg)
    return np.where(np.isfinite(cell) & (cell > 0), cell / 2.0, FALLBACK_SPACING_M)


def finest_cells_m(model: ElevationModel, lat_a_deg: ArrayLike, lon_a_deg: ArrayLike,
                   lat_b_deg: ArrayLike, lon_b_deg: ArrayLike) -> np.ndarray:
    """Ground size of the finest raster cell along each path, m, shape (paths,); NaN where unknown.

    Measured at both ends and at exact geodesic points no more than
    ``geodesy.NODE_SPACING_M`` (10 km) apart, all taken from the path's
    canonical end, so the value does not depend on which site is called a.
    """
    offsets, lat, lon = path_nodes(lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg)
    cell = model.cell_sizes_m(lon, lat)
    cell = np.where(np.isfinite(cell) & (cell > 0), cell, np.inf)
    best = np.minimum.reduceat(cell, offsets[:-1]) if cell.size else np.zeros(0)
    return np.where(np.isfinite(best), best, np.nan)


def path_spacings_m(model: ElevationModel, lat_a_deg: ArrayLike, lon_a_deg: ArrayLike,
                    lat_b_deg: ArrayLike, lon_b_deg: ArrayLike) -> np.ndarray:
    """Default spacing of each path: half its finest raster cell (:func:`finest_cells_m`), m.

    Half a cell so every cell crossed gets at least one sample (common
    practice); 15 m where no cell size is known.
    """
    cell = finest_cells_m(model, lat_a_deg, lon_a_deg, lat_b_deg, lon_b_deg)
    return np.where(np.isfinite(cell), cell / 2.0, FALLBACK_SPACING_M)


def check_spacing_m(spacing_m: ArrayLike) -> np.ndarray:
    """The given spacing as an array, or InputError if not finite or finer than 1 cm."""
    spacing = np.asarray(spacing_m, dtype=float)
    bad = ~np.isfinite(spacing) | ~(spacing >= MIN_SPACING_M)
    if np.any(bad):
        value = spacing.reshape(-1)[int(np.argmax(bad.reshape(-1)))]
        raise InputError(
            f"sample spacing must be a number of metres from {MIN_SPACING_M:g} m (1 cm) up, got {float(value):g}; "
            "leave it out to use half the finest raster cell"
        )
    return spacing


def sample_limit_problem(label: str, length_m: float, n_samples: int, spacing_m: float) -> str | None:
    """None, or the sentence refusing a path of more than MAX_SAMPLES_PER_PATH samples."""
    if n_samples <= MAX_SAMPLES_PER_PATH:
        return None
    coarsest = length_m / (MAX_SAMPLES_PER_PATH - 1)
    return (
        f"{label}: {length_m / 1000:.3f} km at {spacing_m:g} m spacing needs {n_samples:,} samples, "
        f"more than the limit of {MAX_SAMPLES_PER_PATH:,} per path; use a spacing of at least "
        f"{_round_up(coarsest):g} m"
    )


def _round_up(value: float) -> float:
    """A short number not below ``value`` (3 significant figures)."""
    if not np.isfinite(value) or value <= 0:
        return value
    scale = 10.0 ** (np.floor(np.log10(value)) - 2)
    return float(np.ceil(value / scale) * scale)


def spacing_warning(label: str, spacing_m: float, finest_cell_m: float, where: str = "on the path") -> str | None:
    """None, or a warning when a given spacing is coarser than the finest raster cell on the path.

    Samples further apart than one cell can step over a ridge or a building
    the raster holds, and the clearance then reads better than the terrain
    allows (common practice: sample at least once per cell).
    """
    if not np.isfinite(finest_cell_m) or not spacing_m > finest_cell_m:
        return None
    return (
        f"{label}: sample spacing {spacing_m:g} m is coarser than the finest raster cell {where} "
        f"({finest_cell_m:.3g} m); terrain between samples is not seen, so clearance and diffraction "
        f"may read too good; recommended spacing {finest_cell_m / 2.0:.3g} m (half a cell, the default)"
    )


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

    ``spacing_m`` None uses half the finest raster cell on each path
    (:func:`path_spacings_m`); a given spacing must be at least 1 cm, and a
    spacing coarser than the finest cell on a path gives that path a sentence
    in ``sampling_warnings``.  A path needing more than MAX_SAMPLES_PER_PATH
    samples, or a batch of more than MAX_SAMPLES_PER_BATCH (paths x widest),
    raises InputError before anything is allocated.
    Paths whose sites lie outside the rasters, or which cross nodata, are
    kept with NaN heights and a sentence in ``problems`` naming the place.
    Sampling is reciprocal: swapping a and b reverses every row exactly.
    """
    lat_a = np.atleast_1d(np.asarray(lat_a_deg, dtype=float))
    lon_a = np.atleast_1d(np.asarray(lon_a_deg, dtype=float))
    lat_b = np.atleast_1d(np.asarray(lat_b_deg, dtype=float))
    lon_b = np.atleast_1d(np.asarray(lon_b_deg, dtype=float))
    n_paths = lat_a.shape[0]
    labels = labels or [f"path {i + 1}" for i in range(n_paths)]
    finest = finest_cells_m(model, lat_a, lon_a, lat_b, lon_b)
    if spacing_m is None:
        spacing = np.where(np.isfinite(finest), finest / 2.0, FALLBACK_SPACING_M)
        notes: list[str | None] = [None] * n_paths
    else:
        spacing = np.broadcast_to(check_spacing_m(spacing_m), (n_paths,)).copy()
        notes = [spacing_warning(labels[i], spacing[i], finest[i]) for i in range(n_paths)]
    _check_sample_limits(labels, lat_a, lon_a, lat_b, lon_b, spacing)
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
        finest_cell_m=finest,
        sampling_warnings=tuple(notes),
    )


def _check_sample_limits(labels, lat_a, lon_a, lat_b, lon_b, spacing) -> None:
    """InputError if a path or the whole batch would hold more samples than allowed."""
    length = path_lines(lat_a, lon_a, lat_b, lon_b).length_m
    with np.errstate(over="ignore", invalid="ignore"):
        counts = np.ceil(length / spacing) + 1  # float: no overflow before the check
    over = np.flatnonzero(~(counts <= MAX_SAMPLES_PER_PATH))
    if over.size:  # the first such path names the problem and the spacing that fits
        i = int(over[0])
        problem = sample_limit_problem(labels[i], float(length[i]), int(min(counts[i], 2**62)), float(spacing[i]))
        assert problem is not None  # counts[i] is above MAX_SAMPLES_PER_PATH, so the sentence is given
        raise InputError(problem)
    total = counts.size * (counts.max() if counts.size else 0)
    if total > MAX_SAMPLES_PER_BATCH:
        raise InputError(
            f"{counts.size} paths of up to {int(counts.max()):,} samples need {int(total):,} samples at once, "
            f"more than the limit of {MAX_SAMPLES_PER_BATCH:,}; analyse fewer links at a time or use a "
            "coarser spacing"
        )


def nodata_problem(template: str) -> Problem:
    """A path's nodata problem: the record keeps the command-line wording (``--nodata-fill-m HEIGHT``),
    the error raised from it names the ``nodata_fill_m`` argument."""
    return Problem(template, "nodata_fill_m", "HEIGHT", template.replace(PARAMETER, "--nodata-fill-m HEIGHT"))


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
        return nodata_problem(
            f"{label}: no elevation data (nodata) at {dist[j] / 1000:.3f} km from site a "
            f"({lat[j]:.6f}, {lon[j]:.6f}), {holes.size} sample(s) affected; "
            f"fill the hole in the raster or pass {PARAMETER} to use a stated height"
        )
    return None
