"""Climate of many paths from the ITU-R maps and terrain roughness sa from the elevation data.

R0.01 from ITU-R P.837-7 and dN1 from ITU-R P.453-13, both at the path
centre, through the optional ``itur`` package (``terrahop[climate]``; its
maps ship inside the package, nothing is downloaded).  sa, the standard
deviation of terrain heights over 110 km x 110 km around the path at 30
arc-seconds (ITU-R P.530-17 section 2.3.1), from any :class:`ElevationModel`.
"""

from __future__ import annotations

import warnings
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike

from .climate import (ORIGIN_DEFAULT_UNCOVERED, ORIGIN_GIVEN, ORIGIN_P453, ORIGIN_P837, ClimateSettings, ClimateValues)
from .errors import InputError, TerrahopWarning
from .geodesy import WGS84

if TYPE_CHECKING:
    from .terrain import ElevationModel

__all__ = [
    "MISSING_EXTRA",
    "SA_SIDE_M",
    "SA_STEP_DEG",
    "ClimateSourceWarning",
    "path_centres",
    "itu_rain_rate_mm_h",
    "itu_dn1_n_per_km",
    "sa_windows",
    "terrain_roughness_m",
    "climate_for_paths",
]

#: The one line shown when the ``itur`` package is not installed.
MISSING_EXTRA = ("--climate itu needs the ITU-R maps of the 'itur' package: "
                 "install them with pip install 'terrahop[climate]'")
#: Side of the square over which sa is taken, m (ITU-R P.530-17 section 2.3.1: 110 km x 110 km).
SA_SIDE_M = 110_000.0
#: Grid step of the heights sa is taken over, degrees (ITU-R P.530-17 section 2.3.1: 30 arc-seconds).
SA_STEP_DEG = 1.0 / 120.0
#: Paths whose centres share a cell of this many degrees share one sampled grid.
_GROUP_DEG = 1.0


class ClimateSourceWarning(TerrahopWarning):
    """A climate value could not be taken from its source; the default is used."""


_WARNED: set[str] = set()


def _warn_once(message: str, category: type[Warning], *, repeat: bool) -> None:
    """Warn; with ``repeat`` False, once per process (Python's own registry is reset by catch_warnings)."""
    if not repeat:
        if message in _WARNED:
            return
        _WARNED.add(message)
    warnings.warn(message, category, stacklevel=3)


def _itur() -> Any:
    """The ``itur`` package, imported on first use; InputError naming the extra when missing."""
    try:
        import itur  # noqa: F401  (optional: terrahop[climate])
        from itur.models import itu453, itu837
    except ImportError:
        raise InputError(MISSING_EXTRA) from None
    return itu837, itu453


def path_centres(lat_a: ArrayLike, lon_a: ArrayLike, lat_b: ArrayLike, lon_b: ArrayLike
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Geodesic mid-points of the paths (WGS84), (lat, lon) in degrees, longitude in [-180, 180)."""
    la, oa, lb, ob = (np.atleast_1d(np.asarray(x, dtype=float)) for x in (lat_a, lon_a, lat_b, lon_b))
    az, _, dist = WGS84.inv(oa, la, ob, lb)
    lon, lat, _ = WGS84.fwd(oa, la, az, np.asarray(dist) / 2.0)
    lon = (np.asarray(lon, dtype=float) + 180.0) % 360.0 - 180.0
    return np.asarray(lat, dtype=float), lon


def itu_rain_rate_mm_h(lat_deg: ArrayLike, lon_deg: ArrayLike) -> np.ndarray:
    """R0.01, rain rate exceeded 0.01 % of an average year, mm/h: ITU-R P.837-7 Annex 1 maps (itur.models.itu837)."""
    itu837, _ = _itur()
    if itu837.get_version() != 7:
        itu837.change_version(7)
    lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
    lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
    return np.asarray(itu837.rainfall_rate(lat, lon, 0.01).value, dtype=float).reshape(lat.shape)


def itu_dn1_n_per_km(lat_deg: ArrayLike, lon_deg: ArrayLike) -> np.ndarray:
    """dN1, N-units/km: refractivity gradient of the lowest 65 m not exceeded 1 % of an average year.

    ITU-R P.453-13 section 2.2 digital maps (``itur.models.itu453.DN65`` at p = 1;
    itur's ``DN1`` is the 1 km layer, not this value).  The quantity ITU-R
    P.530-17 section 2.3.1 uses in eq. 4.
    """
    _, itu453 = _itur()
    if itu453.get_version() != 13:
        itu453.change_version(13)
    lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
    lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
    return np.asarray(itu453.DN65(lat, lon, 1).value, dtype=float).reshape(lat.shape)


def sa_windows(lat_c: np.ndarray, lon_c: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Bounds (south, north, west, east) in degrees of the sa square of each path centre.

    ITU-R P.530-17 section 2.3.1: 110 km x 110 km, aligned with the meridian
    through the path centre, which halves it (that clause from memory).  South and north lie 55 km
    along that meridian (geodesics due south and north, WGS84); west and east
    55 km along the parallel through the centre (arc of radius N cos(lat)).
    West/east are not folded, so a window may run past +-180.
    """
    half = SA_SIDE_M / 2.0
    _, north, _ = WGS84.fwd(lon_c, lat_c, np.zeros_like(lat_c), np.full_like(lat_c, half))
    _, south, _ = WGS84.fwd(lon_c, lat_c, np.full_like(lat_c, 180.0), np.full_like(lat_c, half))
    phi = np.radians(lat_c)
    n_radius = WGS84.a / np.sqrt(1.0 - WGS84.es * np.sin(phi) ** 2)
    # Near a pole the parallel is shorter than 110 km: the square takes the whole circle of longitude.
    half_lon = np.minimum(np.degrees(half / np.maximum(n_radius * np.cos(phi), 1.0)), 180.0 - SA_STEP_DEG / 2.0)
    north = np.where(lat_c + half / 111_000.0 > 90.0, 90.0, np.asarray(north, dtype=float))
    south = np.where(lat_c - half / 111_000.0 < -90.0, -90.0, np.asarray(south, dtype=float))
    return south, north, lon_c - half_lon, lon_c + half_lon


def _grid_index_range(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index k of the 30-arc-second grid nodes (k + 0.5) / 120 deg within [lo, hi]."""
    first = np.ceil(lo / SA_STEP_DEG - 0.5).astype(np.int64)
    last = np.floor(hi / SA_STEP_DEG - 0.5).astype(np.int64)
    return first, last


def _box_sums(table: np.ndarray, r0: np.ndarray, r1: np.ndarray, c0: np.ndarray, c1: np.ndarray) -> np.ndarray:
    """Sums over rows r0..r1 and columns c0..c1 (inclusive) from a zero-padded summed-area table."""
    return table[r1 + 1, c1 + 1] - table[r0, c1 + 1] - table[r1 + 1, c0] + table[r0, c0]


def terrain_roughness_m(model: "ElevationModel", lat_c: ArrayLike, lon_c: ArrayLike
                        ) -> tuple[np.ndarray, np.ndarray]:
    """sa of each path centre, m, and whether the elevation data covered its whole square.

    ITU-R P.530-17 section 2.3.1: the standard deviation of terrain heights
    within a 110 km x 110 km area (:func:`sa_windows`) at 30 arc-seconds.
    Heights are sampled from ``model`` at the nodes (k + 0.5) / 120 deg of
    the global 30-arc-second grid that lie in the square, and sa is their
    population standard deviation (ddof 0).  Paths with centres in one 1 deg
    cell share one sampled grid; sums over each square come from summed-area
    tables, so many paths cost about one grid.  Where any node of the square
    has no height (outside the rasters or a hole) the path gets NaN and False.
    """
    lat = np.atleast_1d(np.asarray(lat_c, dtype=float))
    lon = np.atleast_1d(np.asarray(lon_c, dtype=float))
    sa = np.full(lat.shape, np.nan)
    covered = np.zeros(lat.shape, dtype=bool)
    south, north, west, east = sa_windows(lat, lon)
    r0, r1 = _grid_index_range(south, north)
    c0, c1 = _grid_index_range(west, east)
    keys = np.floor(lat / _GROUP_DEG) * 1000.0 + np.floor(lon / _GROUP_DEG)
    for key in np.unique(keys):
        idx = np.flatnonzero(keys == key)
        rows = np.arange(r0[idx].min(), r1[idx].max() + 1)
        cols = np.arange(c0[idx].min(), c1[idx].max() + 1)
        grid_lat = (rows + 0.5) * SA_STEP_DEG
        grid_lon = (cols + 0.5) * SA_STEP_DEG
        glon, glat = np.meshgrid((grid_lon + 180.0) % 360.0 - 180.0, grid_lat)
        heights, _ = model.sample(glon.ravel(), glat.ravel())
        heights = np.asarray(heights, dtype=float).reshape(glat.shape)
        hole = ~np.isfinite(heights)
        # Heights taken about their mean so the sums of squares lose no digits.
        ref = float(np.nanmean(heights)) if not hole.all() else 0.0
        h = np.where(hole, 0.0, heights - ref)
        tables = [np.pad(x.cumsum(0).cumsum(1), ((1, 0), (1, 0))) for x in (h, h * h, hole.astype(float))]
        a0, a1 = r0[idx] - rows[0], r1[idx] - rows[0]
        b0, b1 = c0[idx] - cols[0], c1[idx] - cols[0]
        count = (a1 - a0 + 1) * (b1 - b0 + 1)
        s1, s2, holes = (_box_sums(t, a0, a1, b0, b1) for t in tables)
        mean = s1 / count
        var = np.maximum(s2 / count - mean * mean, 0.0)
        ok = (holes < 0.5) & (count > 1)
        sa[idx] = np.where(ok, np.sqrt(var), np.nan)
        covered[idx] = ok
    return sa, covered


def climate_for_paths(settings: ClimateSettings, model: "ElevationModel | None",
                      lat_a: ArrayLike, lon_a: ArrayLike, lat_b: ArrayLike, lon_b: ArrayLike,
                      *, count_in_warning: bool = True) -> ClimateValues:
    """R0.01, dN1 and sa of each path for ``settings.source == "itu"``: given values win, then maps, then defaults.

    R0.01 (ITU-R P.837-7) and dN1 (ITU-R P.453-13) at the geodesic path
    centre; sa from ``model`` (:func:`terrain_roughness_m`); where the model
    does not cover a path's square, the given or default sa with a
    :class:`ClimateSourceWarning` (``count_in_warning=False``: one text for every
    call, so a screening run's chunks show it once).
    """
    lat, lon = path_centres(lat_a, lon_a, lat_b, lon_b)
    given = {name for name in ("rain_rate_mm_h", "dn1_n_per_km", "terrain_roughness_m")
             if name not in settings.defaults_used()}
    n = lat.shape[0]
    if "rain_rate_mm_h" in given:
        rain, rain_origin = np.full(n, settings.rain_rate_mm_h), ORIGIN_GIVEN
    else:
        rain, rain_origin = itu_rain_rate_mm_h(lat, lon), ORIGIN_P837
    if "dn1_n_per_km" in given:
        dn1, dn1_origin = np.full(n, settings.dn1_n_per_km), ORIGIN_GIVEN
    else:
        dn1, dn1_origin = itu_dn1_n_per_km(lat, lon), ORIGIN_P453
    sa_fallback = ORIGIN_GIVEN if "terrain_roughness_m" in given else ORIGIN_DEFAULT_UNCOVERED
    if "terrain_roughness_m" in given or model is None:
        sa, computed = np.full(n, settings.terrain_roughness_m), np.zeros(n, dtype=bool)
    else:
        sa, computed = terrain_roughness_m(model, lat, lon)
        if not computed.all():
            which = f"{int((~computed).sum())} of {n} path(s)" if count_in_warning else "some pairs"
            _warn_once(
                f"terrain roughness sa: the elevation rasters do not cover the 110 km x 110 km area around "
                f"{which} (ITU-R P.530-17 section 2.3.1); the default "
                f"{settings.terrain_roughness_m:g} m is used there",
                ClimateSourceWarning, repeat=count_in_warning)
        sa = np.where(computed, sa, settings.terrain_roughness_m)
    if not (np.all(np.isfinite(rain)) and np.all(np.isfinite(dn1))):
        raise InputError("the ITU-R maps gave no value at a path centre; give --rain-rate-mm-h and --dn1")
    return ClimateValues(rain_rate_mm_h=np.asarray(rain, dtype=float), dn1_n_per_km=np.asarray(dn1, dtype=float),
                         terrain_roughness_m=np.asarray(sa, dtype=float), rain_origin=rain_origin,
                         dn1_origin=dn1_origin, sa_computed=computed, sa_fallback_origin=sa_fallback)
