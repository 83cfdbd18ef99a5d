"""Coverage from a hub: the plan of a run (radials, cells, blocks) and the evaluation of one block.

A run is planned once (:func:`plan_coverage`): the hub's ground, the output
grid, every cell's distance and azimuth from the hub, the radial each cell
belongs to (the nearest in azimuth), the cells sorted by radial then distance,
and blocks of radials.  A block (:func:`evaluate_block`) samples its radials'
terrain once with the link engine's elevation model, sweeps them with the
compiled kernel (:mod:`profiler.coverage._kernels`), and turns the per-cell
reductions into losses and a budget with the link engine's own functions
(free space ITU-R P.525-4, knife-edge J(v) ITU-R P.526-15 eq. 31, Bullington
ITU-R P.526-15 section 4.5.1, the complete delta-Bullington method of section
4.5.2 with the smooth-earth loss of section 3.2, gases ITU-R P.676-12 Annex 1,
budget as :func:`profiler.budget.link_budget`).

Cost: O(radials x samples) to sample and sweep (each radial sample read once)
plus a small constant per cell (its own ground height, the hull vertices it
reads): a far cell costs what a near one costs.  Pure core: no click, no
printing, no file writing (the rasters are read through
:class:`profiler.terrain.ElevationModel`).
"""

from __future__ import annotations

import dataclasses
import math
import types
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..budget import Radio, link_budget
from ..errors import InputError
from ..losses.bullington import bullington_from
from ..losses.free_space import free_space_loss_db
from ..losses.knife_edge import knife_edge_loss_db
from ..units import EARTH_RADIUS_M, wavelength_m
from ._kernels import cell_order, sweep_radials
from .grid import Grid, Lattice, aeqd_crs, fold_lon, hub_grid, raster_grid

__all__ = ["Hub", "Sector", "CoverageSettings", "CoveragePlan", "BANDS", "COVERAGE_METHODS", "plan_coverage",
           "evaluate_block", "band_names", "off_axis_deg"]

#: Diffraction methods coverage computes from the sweep's running quantities (module _kernels; the
#: smooth-earth Bullington term of delta-bullington by :func:`_smooth_bullington_db`).
COVERAGE_METHODS = ("delta-bullington", "bullington", "knife-edge")

#: Bands of the output: (name, unit, description).  ``step`` only with a radio profile.
BANDS = (
    ("f1_fraction", "1", "worst clearance as a fraction of the first Fresnel radius, design k "
                         "(exact below 1; 1 and above a lower bound)"),
    ("line_of_sight", "1", "1 where the ray from the hub clears the ground, 0 where blocked"),
    ("diffraction_db", "dB", "diffraction loss by the chosen method, design k"),
    ("rx_level_dbm", "dBm", "received level"),
    ("snr_db", "dB", "signal-to-noise ratio"),
    ("fade_margin_db", "dB", "fade margin: SNR minus the SNR needed"),
    ("step", "1", "best modulation step of the radio profile with the margin it needs (1 = lowest, 0 = none)"),
)

#: Radials per block (a block is one task of a worker).
DEFAULT_BLOCK_RADIALS = 256


def band_names(with_steps: bool) -> tuple[str, ...]:
    """Names of the bands written, in order."""
    return tuple(b[0] for b in BANDS if with_steps or b[0] != "step")


@dataclass(frozen=True)
class Hub:
    """The hub: name, WGS84 position (degrees) and antenna height above ground, m."""

    name: str
    lat_deg: float
    lon_deg: float
    agl_m: float


@dataclass(frozen=True)
class Sector:
    """A sector antenna at the hub: boresight azimuth (degrees from true north), down-tilt (degrees, positive
    down) and the radiation envelope (angles from boresight, degrees -> dB relative to boresight)."""

    azimuth_deg: float
    downtilt_deg: float
    angle_deg: tuple[float, ...]
    relative_db: tuple[float, ...]


@dataclass(frozen=True)
class CoverageSettings:
    """What a coverage run computes.

    ``radius_m``: disk radius; ``rx_agl_m``: receiver antenna height above the
    ground (or above the surface model with ``rx_above_surface``); ``cell_m``:
    output cell size, None for the terrain raster's grid; ``spacing_m``: radial
    sample spacing, None for half the terrain cell at the hub (the link
    engine's default); ``radio`` the link radio (site a = hub transmits);
    ``plan``: a :class:`profiler.equipment.modulation.RadioPlan` or None;
    ``sector``: a :class:`Sector` or None (the antenna's gain in every direction).
    """

    radius_m: float
    rx_agl_m: float
    radio: Radio
    k: float = 4.0 / 3.0
    method: str = "delta-bullington"
    cell_m: float | None = None
    spacing_m: float | None = None
    plan: Any = None
    sector: Sector | None = None
    climate: Any = None
    polarisation: str = "horizontal"
    ground: str = "land"
    rx_above_surface: bool = False
    block_radials: int = DEFAULT_BLOCK_RADIALS


@dataclass(frozen=True)
class CoveragePlan:
    """A planned run: everything a worker needs besides the elevation model (picklable)."""

    hub: Hub
    settings: CoverageSettings
    hub_ground_m: float
    grid: Grid
    overruns: bool
    spacing_m: float
    n_samples: int
    n_radials: int
    to_lonlat: Lattice
    #: Cells sorted by radial then distance: flat grid index (-1 for a candidate site), lon, lat, distance, radial.
    cell_index: np.ndarray
    cell_lon: np.ndarray
    cell_lat: np.ndarray
    cell_d: np.ndarray
    cell_az: np.ndarray
    cell_radial: np.ndarray
    cell_agl: np.ndarray
    #: Start of each radial's cells in the sorted arrays, (radials + 1,).
    radial_start: np.ndarray
    #: A block task holds the cells of radials first_radial.. only (see :meth:`task`).
    first_radial: int = 0

    @property
    def hub_antenna_m(self) -> float:
        return self.hub_ground_m + self.hub.agl_m

    @property
    def n_blocks(self) -> int:
        return int(math.ceil(self.n_radials / self.settings.block_radials))

    def block_radials(self, b: int) -> tuple[int, int]:
        size = self.settings.block_radials
        return b * size, min((b + 1) * size, self.n_radials)

    def cells_of_block(self, b: int) -> tuple[int, int]:
        """Positions of block ``b``'s cells in the sorted arrays."""
        r0, r1 = self.block_radials(b)
        return int(self.radial_start[r0]), int(self.radial_start[r1])

    def task(self, b: int) -> "CoveragePlan":
        """The plan cut to block ``b``: its radials' cells only (what a worker is sent)."""
        r0, r1 = self.block_radials(b)
        c0, c1 = self.cells_of_block(b)
        cut = {f.name: getattr(self, f.name)[c0:c1] for f in dataclasses.fields(self) if f.name.startswith("cell_")}
        return dataclasses.replace(self, radial_start=self.radial_start[r0:r1 + 1] - c0, first_radial=r0, **cut)

    @property
    def bands(self) -> tuple[str, ...]:
        return band_names(self.settings.plan is not None)


def _surface_at(model: Any, surface: Any, lon: np.ndarray, lat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Ground and ground plus clutter (surface model above the terrain, clipped at 0) at points, m."""
    ground, _ = model.sample(lon, lat)
    if surface is None:
        return ground, ground
    top, _ = surface.sample(lon, lat)
    clutter = np.where(np.isnan(top), 0.0, np.maximum(top - ground, 0.0))
    return ground, ground + clutter


def plan_coverage(model: Any, hub: Hub, settings: CoverageSettings, candidates: Any = None,
                  surface: Any = None) -> CoveragePlan:
    """Plan a coverage run: hub, grid, cells and radials.  Raises InputError for a hub off the rasters.

    ``candidates``: optional (names, lat, lon, agl_m) of candidate subscriber
    sites evaluated as extra cells (agl NaN: ``rx_agl_m``); ``surface``: an
    :class:`profiler.terrain.ElevationModel` of a surface model.
    """
    from pyproj import Transformer

    ground, covered = model.sample(np.array([hub.lon_deg]), np.array([hub.lat_deg]))
    if not covered[0] or not np.isfinite(ground[0]):
        raise InputError(f"hub {hub.name!r} ({hub.lat_deg}, {hub.lon_deg}) lies outside the terrain rasters "
                         "or on a nodata cell; give rasters that cover it")
    hub_ground = float(ground[0])  # the hub's antenna height is above the ground, as in `terrahop link`
    radius = float(settings.radius_m)
    if settings.cell_m is None:
        grid, overruns = raster_grid(model.sources[0], hub.lat_deg, hub.lon_deg, radius)
    else:
        grid, overruns = hub_grid(hub.lat_deg, hub.lon_deg, radius, float(settings.cell_m)), False
    cell_w, cell_h = grid.cell_size
    aeqd = aeqd_crs(hub.lat_deg, hub.lon_deg)
    pad = 4.0 * max(settings.spacing_m or 0.0, 1.0) + radius * 0.01
    box = (-radius - pad, -radius - pad, radius + pad, radius + pad)
    # lon/lat from the hub's projection: 1 degree < 111.4 km on WGS84, so degrees x 111_400 bound metres.
    to_lonlat = Lattice(aeqd, "EPSG:4326", box, min(radius / 8.0, 2_000.0) + 1.0, metres_per_unit=111_400.0,
                        lon_about=hub.lon_deg)
    rows, cols = np.divmod(np.arange(grid.n_cells, dtype=np.int64), grid.width)
    gx, gy = grid.centres(rows, cols)
    if grid.crs == aeqd:
        x, y = gx, gy
    else:
        bounds = (float(gx.min()) - cell_w, float(gy.min()) - cell_h, float(gx.max()) + cell_w,
                  float(gy.max()) + cell_h)
        step = (bounds[2] - bounds[0]) / 16.0 + 1e-9
        x, y = Lattice(grid.crs, aeqd, bounds, step)(gx, gy)
    d = np.hypot(x, y)
    inside = (d <= radius) & (d >= 1.0)  # a link needs ends 1 m apart (profiler.validation.too_close)
    idx = np.flatnonzero(inside)
    x, y, d = x[idx], y[idx], d[idx]
    lon, lat = to_lonlat(x, y)
    lon = fold_lon(lon)
    agl = np.full(idx.size, np.nan)
    if candidates is not None:
        _names, c_lat, c_lon, c_agl = candidates
        tr = Transformer.from_crs("EPSG:4326", aeqd, always_xy=True)
        cx, cy = tr.transform(np.asarray(c_lon, dtype=float), np.asarray(c_lat, dtype=float))
        cx, cy = np.asarray(cx, dtype=float), np.asarray(cy, dtype=float)
        idx = np.concatenate([idx, -1 - np.arange(cx.size)])
        x, y = np.concatenate([x, cx]), np.concatenate([y, cy])
        d = np.concatenate([d, np.hypot(cx, cy)])
        lon = np.concatenate([lon, np.asarray(c_lon, dtype=float)])
        lat = np.concatenate([lat, np.asarray(c_lat, dtype=float)])
        agl = np.concatenate([agl, np.asarray(c_agl, dtype=float)])
    spacing = settings.spacing_m
    if spacing is None:
        spacing = model.cell_size_m(hub.lon_deg, hub.lat_deg) / 2.0  # the link engine's default spacing
    spacing = float(spacing)
    n_samples = int(math.ceil(radius / spacing)) + 2
    finest = min(cell_w, cell_h) if grid.crs == aeqd else _ground_cell_m(grid, hub)
    n_radials = max(int(math.ceil(2.0 * math.pi * radius / max(finest, 1e-3))), 8)
    az = np.mod(np.arctan2(x, y), 2.0 * np.pi)
    radial = np.mod(np.rint(az / (2.0 * np.pi / n_radials)).astype(np.int64), n_radials)
    order, start = cell_order(radial, d, n_radials)
    return CoveragePlan(
        hub=hub, settings=settings, hub_ground_m=hub_ground, grid=grid, overruns=overruns, spacing_m=spacing,
        n_samples=n_samples, n_radials=n_radials, to_lonlat=to_lonlat,
        cell_index=idx[order], cell_lon=lon[order], cell_lat=lat[order], cell_d=d[order],
        cell_az=np.degrees(az[order]), cell_radial=radial[order], cell_agl=agl[order], radial_start=start,
    )


def _ground_cell_m(grid: Grid, hub: Hub) -> float:
    """Smallest ground size of a grid cell at the hub, m."""
    from pyproj import CRS, Transformer

    crs = CRS.from_user_input(grid.crs)
    a, _, _, _, e, _ = grid.transform
    tr = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    x, y = tr.transform(hub.lon_deg, hub.lat_deg)
    back = Transformer.from_crs(crs, aeqd_crs(hub.lat_deg, hub.lon_deg), always_xy=True)
    px, py = back.transform(np.array([x, x + a, x]), np.array([y, y, y + e]))
    return float(min(math.hypot(px[1] - px[0], py[1] - py[0]), math.hypot(px[2] - px[0], py[2] - py[0])))


def off_axis_deg(sector: Sector, azimuth_deg: np.ndarray, elevation_deg: np.ndarray) -> np.ndarray:
    """Angle between the sector's boresight and directions (azimuth, elevation), degrees (spherical cosine rule)."""
    e1 = np.radians(-sector.downtilt_deg)
    e2 = np.radians(elevation_deg)
    daz = np.radians(np.asarray(azimuth_deg) - sector.azimuth_deg)
    c = np.cos(e1) * np.cos(e2) * np.cos(daz) + np.sin(e1) * np.sin(e2)
    return np.degrees(np.arccos(np.clip(c, -1.0, 1.0)))


def sector_gain_db(sector: Sector, azimuth_deg: np.ndarray, elevation_deg: np.ndarray) -> np.ndarray:
    """Gain relative to boresight towards each direction, dB: the envelope at the off-axis angle."""
    return np.interp(off_axis_deg(sector, azimuth_deg, elevation_deg), sector.angle_deg, sector.relative_db)


def evaluate_block(model: Any, plan: CoveragePlan, surface: Any = None) -> dict[str, np.ndarray]:
    """Evaluate the cells of a block task (:meth:`CoveragePlan.task`): ``{band: values}`` in the task's cell order.

    Values are float32, NaN where a cell cannot be evaluated (no terrain on the
    way, or under the cell).
    """
    s = plan.settings
    r0 = plan.first_radial
    r1 = r0 + plan.radial_start.size - 1
    c0, c1 = 0, plan.cell_d.size
    dist = np.arange(plan.n_samples) * plan.spacing_m
    theta = np.arange(r0, r1) * (2.0 * np.pi / plan.n_radials)
    x = np.sin(theta)[:, None] * dist[None, :]
    y = np.cos(theta)[:, None] * dist[None, :]
    lon, lat = plan.to_lonlat(x.ravel(), y.ravel())
    lon = fold_lon(lon)
    _, top = _surface_at(model, surface, lon, lat)
    top = top.reshape(x.shape)
    top[:, 0] = plan.hub_ground_m  # the hub itself is not an obstacle (never an interior sample)
    cell_ground, cell_top = _surface_at(model, surface, plan.cell_lon[c0:c1], plan.cell_lat[c0:c1])
    agl = np.where(np.isnan(plan.cell_agl[c0:c1]), s.rx_agl_m, plan.cell_agl[c0:c1])
    base = cell_top if s.rx_above_surface else cell_ground
    hb = base + agl
    ha = plan.hub_antenna_m
    lam = float(wavelength_m(s.radio.freq_ghz))
    den = 2.0 * s.k * EARTH_RADIUS_M
    d = plan.cell_d[c0:c1]
    start = plan.radial_start
    q, v, stim, srim, los, ok, hstd, hsrd = sweep_radials(dist, top, ha, lam, den, start, d, hb, cell_top,
                                                           smooth=s.method == "delta-bullington")
    ok &= d >= 1.0  # a link needs ends 1 m apart (profiler.validation.MIN_PATH_M)
    dd = np.where(ok, d, 1.0)
    if s.method == "knife-edge":
        diffraction = knife_edge_loss_db(v)
    else:
        with np.errstate(invalid="ignore", divide="ignore"):
            diffraction = bullington_from(stim, srim, v, np.full(d.shape, ha), hb, dd, np.full(d.shape, lam))
        if s.method == "delta-bullington":
            diffraction = _delta_bullington(diffraction, ha, hb, dd, lam, den, plan.spacing_m, hstd, hsrd, ok, s)
    gases = _gases_db(dd, s)
    total = free_space_loss_db(dd, s.radio.freq_ghz) + diffraction + gases
    radio = s.radio
    if s.sector is not None:
        elev = np.degrees(np.arctan2(hb - ha, d) - d / den)
        gain = radio.gain_a_dbi + sector_gain_db(s.sector, plan.cell_az[c0:c1], elev)
        radio = dataclasses.replace(radio, gain_a_dbi=gain)
    budget = link_budget(radio, total)
    out: dict[str, np.ndarray] = {}
    bad = ~ok
    values = {
        "f1_fraction": q, "line_of_sight": los.astype(float), "diffraction_db": diffraction,
        "rx_level_dbm": budget.rx_level_dbm, "snr_db": budget.snr_db, "fade_margin_db": budget.fade_margin_db,
    }
    if s.plan is not None:
        from ..equipment.modulation import highest_closing_step, step_margins_db

        margins = step_margins_db(budget.snr_db, s.plan.power_offsets_db, s.plan.steps.required_snr_db)
        values["step"] = (highest_closing_step(margins, s.plan.min_margin_db) + 1).astype(float)
    for name, val in values.items():
        arr = np.asarray(val, dtype=np.float32).copy()
        arr[bad] = np.nan
        out[name] = arr
    return out


def _smooth_bullington_db(hts: np.ndarray, hrs: np.ndarray, d: np.ndarray, lam: float, den: float,
                          spacing_m: float) -> np.ndarray:
    """Bullington over the bare smooth earth (bulge only) sampled at the radial's spacing, dB (ITU-R P.526-15
    section 4.5.2, Lbulls).

    The slopes from each antenna have one maximum in closed form (d/dx of (d - x) / 2ka - h / x is zero at
    x = sqrt(2ka h)): the samples either side of it and the end samples are compared.  The largest v is
    found by a ternary search over the sample indices, which assumes v has one maximum along the path
    (it does for a bulge under a straight ray; checked against the link engine in the tests).
    """
    n = np.maximum(np.ceil(d / spacing_m) - 1.0, 1.0)  # samples strictly between the ends: 1..n

    def elev(i: np.ndarray) -> np.ndarray:
        x = i * spacing_m
        return x * (d - x) / den

    def best(values: list[np.ndarray]) -> np.ndarray:
        return np.max(np.stack(values), axis=0)

    def at(i: np.ndarray) -> np.ndarray:
        return np.clip(i, 1.0, n)

    with np.errstate(invalid="ignore", divide="ignore"):
        xt = np.sqrt(np.maximum(hts, 0.0) * den) / spacing_m
        cands = [at(np.ones_like(d)), n, at(np.floor(xt)), at(np.ceil(xt))]
        stim = best([(elev(i) - hts) / (i * spacing_m) for i in cands])
        xr = (d - np.sqrt(np.maximum(hrs, 0.0) * den)) / spacing_m
        cands = [at(np.ones_like(d)), n, at(np.floor(xr)), at(np.ceil(xr))]
        srim = best([(elev(i) - hrs) / (d - i * spacing_m) for i in cands])

        def v_at(i: np.ndarray) -> np.ndarray:
            x = i * spacing_m
            h = elev(i) - (hts + (hrs - hts) * x / d)
            return h * np.sqrt(2.0 / lam * (1.0 / x + 1.0 / (d - x)))

        lo, hi = np.ones_like(d), n.copy()
        for _ in range(64):
            if not np.any(hi - lo > 2.0):
                break
            m1 = np.floor(lo + (hi - lo) / 3.0)
            m2 = np.ceil(hi - (hi - lo) / 3.0)
            up = v_at(m1) < v_at(m2)
            lo = np.where(up, m1, lo)
            hi = np.where(up, hi, m2)
        v_max = best([v_at(lo), v_at(at(lo + 1.0)), v_at(hi)])
        return bullington_from(stim, srim, v_max, hts, hrs, d, np.full(d.shape, lam))


def _delta_bullington(l_bulla: np.ndarray, ha: float, hb: np.ndarray, d: np.ndarray, lam: float, den: float,
                      spacing_m: float, hstd: np.ndarray, hsrd: np.ndarray, ok: np.ndarray,
                      s: CoverageSettings) -> np.ndarray:
    """Ld = Lbulla + max(Ldsph - Lbulls, 0) (ITU-R P.526-15 section 4.5.2, as
    :func:`profiler.losses.bullington.delta_bullington`), per cell, dB."""
    from ..losses.smooth_earth import smooth_earth_loss_db

    hts = ha - np.where(ok, hstd, 0.0)
    hrs = hb - np.where(ok, hsrd, 0.0)
    l_dsph = smooth_earth_loss_db(d, hts, hrs, s.radio.freq_ghz, s.k, polarisation=s.polarisation, ground=s.ground)
    out = l_bulla.copy()
    rows = np.flatnonzero(~(l_dsph == 0.0) & ok)
    if rows.size:
        l_bulls = _smooth_bullington_db(hts[rows], hrs[rows], d[rows], lam, den, spacing_m)
        out[rows] = l_bulla[rows] + np.maximum(l_dsph[rows] - l_bulls, 0.0)
    return out


def _gases_db(d: np.ndarray, s: CoverageSettings) -> np.ndarray:
    """Gaseous absorption to each cell, dB, by the link engine's rule (profiler.link_engine.gaseous_loss_db)."""
    from ..availability import ClimateSettings
    from ..link_engine import gaseous_loss_db

    climate = s.climate if s.climate is not None else ClimateSettings()
    return gaseous_loss_db(types.SimpleNamespace(length_m=d), s.radio.freq_ghz, climate)  # type: ignore[arg-type]
