"""Coverage from a hub (profiler.coverage): the sweep kernel, shadows against independent geometry,
sector patterns, Dask and local runs, resume."""

from __future__ import annotations

import numpy as np
import pytest
from pyproj import Transformer
from rasterio.transform import from_origin

from profiler.budget import Radio
from profiler.coverage import run as cov_run
from profiler.coverage._kernels import sweep_radials
from profiler.coverage.engine import CoverageSettings, Hub, Sector, off_axis_deg, plan_coverage
from profiler.coverage.run import run_coverage
from profiler.losses._bullington_kernels import bullington_reductions_numpy, smooth_heights_numpy
from profiler.terrain import ElevationModel
from profiler.units import EARTH_RADIUS_M
from tests.conftest import write_raster

UTM = "EPSG:32633"
X0, Y0 = 500_000.0, 5_000_000.0  # north-west corner of the synthetic rasters (UTM 33N, about 45.1 N 15 E)
DEN = 2.0 * 4.0 / 3.0 * EARTH_RADIUS_M


def _lonlat(x: float, y: float) -> tuple[float, float]:
    lon, lat = Transformer.from_crs(UTM, "EPSG:4326", always_xy=True).transform(x, y)
    return float(lon), float(lat)


def _flat_with_wall(tmp_path, cell=10.0, n=600, wall_col=None, wall_h=30.0, ground=100.0):
    z = np.full((n, n), ground, dtype=np.float32)
    if wall_col is not None:
        z[:, wall_col:wall_col + 3] += wall_h  # a wall 3 cells (30 m) thick running north-south
    return write_raster(tmp_path / "flat.tif", z, crs=UTM, transform=from_origin(X0, Y0, cell, cell))


# --------------------------------------------------------------------------- the kernel


def test_sweep_equals_the_link_engine_reductions_on_the_radial_samples():
    """Stim, Srim, line of sight and the smooth-surface heights exactly; F1 fraction and v exactly below
    1 F1 (the link engine's reductions, profiler.losses._bullington_kernels, on the same samples)."""
    rng = np.random.default_rng(7)
    n_s = 400
    dist = np.arange(n_s) * 12.5
    surface = np.cumsum(rng.normal(0.0, 2.0, (8, n_s)), axis=1) + 100.0
    per = np.full(8, 40)
    start = np.concatenate([[0], np.cumsum(per)]).astype(np.int64)
    cell_d = np.concatenate([np.sort(rng.uniform(20.0, dist[-1], p)) for p in per])
    rad = np.repeat(np.arange(8), per)
    cell_hb = surface[rad, np.minimum((cell_d / 12.5).astype(int), n_s - 1)] + rng.uniform(2.0, 40.0, rad.size)
    ha, lam = 140.0, 0.0517
    cell_hr = cell_hb - 5.0
    q, v, stim, srim, los, ok, hstd, hsrd = sweep_radials(dist, surface, ha, lam, DEN, start, cell_d, cell_hb, cell_hr)
    assert ok.all()
    for c in range(cell_d.size):
        r, D, hb = rad[c], cell_d[c], cell_hb[c]
        inner = dist[1:][dist[1:] < D]
        z = surface[r, 1:1 + inner.size]
        d1 = np.concatenate([[0.0], inner, [D]])[None, :]
        surf = np.concatenate([[0.0], z, [0.0]])[None, :]
        interior = np.zeros(d1.shape, dtype=bool)
        interior[0, 1:-1] = True
        s_ref, r_ref, v_ref, _ = bullington_reductions_numpy(d1, surf, interior, np.array([ha]), np.array([hb]),
                                                             np.array([D]), np.array([lam]), np.array([4.0 / 3.0]))
        ends = np.concatenate([[surface[r, 0]], z, [cell_hr[c]]])[None, :]
        hst_ref, hsr_ref = smooth_heights_numpy(d1, ends, interior, np.array([ha]), np.array([hb]), np.array([D]))
        assert hstd[c] == pytest.approx(hst_ref[0], abs=1e-6) and hsrd[c] == pytest.approx(hsr_ref[0], abs=1e-6)
        assert stim[c] == pytest.approx(s_ref[0], abs=1e-9)
        assert srim[c] == pytest.approx(r_ref[0], abs=1e-9)
        gap = ha + (hb - ha) * inner / D - (z + inner * (D - inner) / DEN)
        q_ref = np.min(gap / np.sqrt(lam * inner * (D - inner) / D))
        assert bool(los[c]) == bool(np.all(gap > 0))
        if q_ref < 1.0:
            assert q[c] == pytest.approx(q_ref, abs=1e-9)
            assert v[c] == pytest.approx(v_ref[0], abs=1e-9)
        else:  # a lower bound, never above the truth
            assert 1.0 <= q[c] <= q_ref + 1e-9


def test_sweep_fraction_is_exact_on_smooth_hills_with_many_marginal_clear_paths():
    """Smooth relief (many hull vertices on the hill caps) and receivers just above the ground: the worst
    F1 fraction of clear paths under 1 F1 equals the brute-force minimum over every sample (the max-tree
    branch and bound and the two edges beside the closest vertex miss nothing), blocked paths too; the
    smooth-surface terms off change nothing else."""
    rng = np.random.default_rng(11)
    n_rad, n_s, step = 6, 700, 15.0
    dist = np.arange(n_s) * step
    x = dist[None, :]
    surface = np.zeros((n_rad, n_s)) + 100.0
    for _ in range(6):
        k, ph = rng.uniform(300.0, 3000.0, (n_rad, 1)), rng.uniform(0.0, 6.3, (n_rad, 1))
        surface += rng.uniform(2.0, 25.0, (n_rad, 1)) * np.sin(2 * np.pi * x / k + ph)
    per = np.full(n_rad, 120)
    start = np.concatenate([[0], np.cumsum(per)]).astype(np.int64)
    cell_d = np.concatenate([np.sort(rng.uniform(100.0, dist[-1] - 1.0, p)) for p in per])
    rad = np.repeat(np.arange(n_rad), per)
    ground = surface[rad, np.minimum(np.rint(cell_d / step).astype(int), n_s - 1)]
    cell_hb = ground + rng.uniform(1.0, 60.0, rad.size)
    ha, lam = surface[0, 0] + 40.0, 0.0517
    out = sweep_radials(dist, surface, ha, lam, DEN, start, cell_d, cell_hb, ground)
    plain = sweep_radials(dist, surface, ha, lam, DEN, start, cell_d, cell_hb, ground, smooth=False)
    for a, b in zip(out[:6], plain[:6]):
        assert np.array_equal(a, b, equal_nan=True)
    assert np.isnan(plain[6]).all() and np.isnan(plain[7]).all()
    q, v = out[0], out[1]
    marginal = blocked = 0
    for c in range(cell_d.size):
        r, D, hb = rad[c], cell_d[c], cell_hb[c]
        inner = dist[1:][dist[1:] < D]
        z = surface[r, 1:1 + inner.size]
        gap = ha + (hb - ha) * inner / D - (z + inner * (D - inner) / DEN)
        fr = gap / np.sqrt(lam * inner * (D - inner) / D)
        q_ref = np.min(fr)
        if q_ref < 1.0:
            assert q[c] == pytest.approx(q_ref, abs=1e-9)
            assert v[c] == pytest.approx(-np.sqrt(2.0) * q_ref, abs=1e-9)
            marginal += q_ref >= 0.0
            blocked += q_ref < 0.0
        else:
            assert 1.0 <= q[c] <= q_ref + 1e-9
    assert marginal >= 30 and blocked >= 30  # both branches were exercised


# --------------------------------------------------------------------------- geometry checks


def _run(model, hub, tmp_path, **kw):
    model.preload()
    s = CoverageSettings(radius_m=kw.pop("radius_m", 2500.0), rx_agl_m=kw.pop("rx_agl_m", 2.0),
                         radio=kw.pop("radio", Radio(5.8, 20.0, 16.0, 16.0)), block_radials=kw.pop("block", 256),
                         **kw)
    plan = plan_coverage(model, hub, s)
    result, _ = run_coverage(model, plan, str(tmp_path / "x.tif"), stage=False, workers=1)
    return plan, result


def test_shadow_behind_a_long_wall_matches_independent_geometry(tmp_path):
    """Flat ground 100 m, a 30 m wall 1.5 km east of the hub; the hub 20 m up, receivers 2 m up.
    A cell is shadowed when the wall's top stands above the straight ray plus the earth bulge there
    (bulge d1 d2 / 2ka, ITU-R P.526-15 section 2 / eq. in Annex); cells within 15 m of the boundary
    are not judged (the wall's bilinear edges)."""
    path = _flat_with_wall(tmp_path, wall_col=300)
    model = ElevationModel([path])
    hx, hy = X0 + 1500.0, Y0 - 3000.0
    hub = Hub("hub", *reversed(_lonlat(hx, hy)), 20.0)
    plan, result = _run(model, hub, tmp_path)
    los = result.bands["line_of_sight"]
    a, _, c, _, e, f = plan.grid.transform
    rows, cols = np.mgrid[0:plan.grid.height, 0:plan.grid.width]
    x = c + (cols + 0.5) * a - hx
    y = f + (rows + 0.5) * e - hy
    wall_near, wall_far = 3000.0 - 1500.0, 3030.0 - 1500.0
    D = np.hypot(x, y)
    judged = np.isfinite(los) & (x > wall_far + 15.0)
    ha, hb, top = 120.0, 102.0, 130.0
    # The ray's lowest margin over the wall's thickness (both faces), straight line plus bulge.
    margins = []
    for xw in (wall_near + 5.0, wall_far - 5.0):
        dw = D * xw / x
        margins.append(ha + (hb - ha) * dw / D - (top + dw * (D - dw) / DEN))
    margin = np.minimum(*margins)
    judged &= np.abs(margin) > 0.5
    expected = margin > 0
    assert judged.sum() > 20_000
    assert ((los == 1) == expected)[judged].all()
    # In front of the wall every cell sees the hub.
    front = np.isfinite(los) & (x < wall_near - 15.0)
    assert (los[front] == 1).all()
    assert (expected[judged] == 0).sum() > 5_000  # there is a shadow to check


def test_cells_behind_a_hill_lose_line_of_sight_where_the_geometry_says(tmp_path):
    """A Gaussian hill 60 m high between hub and cells; the reference samples the hill's formula (not the
    raster) every metre along each cell's straight line and adds the earth bulge."""
    n, cell = 400, 10.0
    ys, xs = np.mgrid[0:n, 0:n]
    cx, cy = X0 + (xs + 0.5) * cell, Y0 - (ys + 0.5) * cell
    hill_x, hill_y, sigma = X0 + 2000.0, Y0 - 2000.0, 150.0

    def hill(x, y):
        return 100.0 + 60.0 * np.exp(-((x - hill_x) ** 2 + (y - hill_y) ** 2) / (2 * sigma ** 2))

    path = write_raster(tmp_path / "hill.tif", hill(cx, cy).astype(np.float64), crs=UTM,
                        transform=from_origin(X0, Y0, cell, cell))
    model = ElevationModel([path])
    hx, hy = X0 + 1000.0, Y0 - 2000.0
    hub = Hub("hub", *reversed(_lonlat(hx, hy)), 10.0)
    plan, result = _run(model, hub, tmp_path, radius_m=1900.0)
    los = result.bands["line_of_sight"]
    a, _, c, _, e, f = plan.grid.transform
    rng = np.random.default_rng(3)
    rr, cc = np.nonzero(np.isfinite(los))
    pick = rng.choice(rr.size, 1500, replace=False)
    checked = blocked = 0
    for i in pick:
        x = c + (cc[i] + 0.5) * a
        y = f + (rr[i] + 0.5) * e
        D = float(np.hypot(x - hx, y - hy))
        t = np.arange(1.0, D) / D
        d1 = t * D
        ground = hill(hx + t * (x - hx), hy + t * (y - hy))
        ha, hb = hill(hx, hy) + 10.0, hill(x, y) + 2.0
        margin = np.min(ha + (hb - ha) * t - (ground + d1 * (D - d1) / DEN))
        if abs(margin) < 1.0:
            continue  # within a metre of grazing: raster cells may decide either way
        checked += 1
        blocked += margin < 0
        assert (los[rr[i], cc[i]] == 1) == (margin > 0), (x, y, margin)
    assert checked > 1000 and blocked > 50


def test_a_sector_antennas_pattern_appears_in_the_received_level(tmp_path):
    """Flat ground: the received level with a sector minus the omni level equals the envelope at the
    off-axis angle (boresight 90 deg, no tilt)."""
    path = _flat_with_wall(tmp_path)
    model = ElevationModel([path])
    hx, hy = X0 + 3000.0, Y0 - 3000.0
    hub = Hub("hub", *reversed(_lonlat(hx, hy)), 20.0)
    sector = Sector(90.0, 0.0, (0.0, 30.0, 60.0, 90.0, 180.0), (0.0, -3.0, -12.0, -20.0, -30.0))
    _, omni = _run(model, hub, tmp_path)
    plan, sect = _run(model, hub, tmp_path, sector=sector)
    diff = sect.bands["rx_level_dbm"] - omni.bands["rx_level_dbm"]
    a, _, c, _, e, f = plan.grid.transform
    rows, cols = np.mgrid[0:plan.grid.height, 0:plan.grid.width]
    az = np.degrees(np.arctan2(c + (cols + 0.5) * a - hx, f + (rows + 0.5) * e - hy)) % 360.0
    ok = np.isfinite(diff)
    # The hub 18 m above the receivers: off-axis angles within a degree of the azimuth difference beyond 1 km.
    dist = np.hypot(c + (cols + 0.5) * a - hx, f + (rows + 0.5) * e - hy)
    far = ok & (dist > 1000.0)
    off = np.abs((az - 90.0 + 180.0) % 360.0 - 180.0)
    expected = np.interp(off, sector.angle_deg, sector.relative_db)
    assert np.max(np.abs(diff[far] - expected[far])) < 0.35  # UTM grid azimuth vs true azimuth, under 1 degree
    east = far & (np.abs(az - 90.0) < 2.0)
    west = far & (np.abs(az - 270.0) < 2.0)
    # Within 2 degrees of azimuth and 1 of elevation: the envelope moves at most 0.11 dB a degree there.
    assert np.all(np.abs(diff[east]) < 0.4) and np.all(np.abs(diff[west] + 30.0) < 0.4)


def test_off_axis_angle_counts_the_tilt():
    s = Sector(0.0, 10.0, (0.0, 180.0), (0.0, -30.0))
    assert off_axis_deg(s, np.array([0.0]), np.array([-10.0]))[0] == pytest.approx(0.0, abs=1e-5)
    assert off_axis_deg(s, np.array([0.0]), np.array([0.0]))[0] == pytest.approx(10.0)
    assert off_axis_deg(s, np.array([180.0]), np.array([-10.0]))[0] == pytest.approx(160.0)


# --------------------------------------------------------------------------- scale


def _demo_plan(block=64, radius_m=3000.0):
    from tests.conftest import DEMO_DEM

    model = ElevationModel([DEMO_DEM])
    hub = Hub("Tallis Farm", -30.444113, -20.937510, 15.0)
    s = CoverageSettings(radius_m=radius_m, rx_agl_m=6.0, radio=Radio(5.8, 20.0, 16.0, 16.0), block_radials=block)
    return model, plan_coverage(model, hub, s)


def test_dask_equals_local(tmp_path):
    distributed = pytest.importorskip("distributed")
    model, plan = _demo_plan()
    local, _ = run_coverage(model, plan, str(tmp_path / "a.tif"), stage=False, workers=1)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                                  host="127.0.0.1", dashboard_address=":0") as cluster:
        with distributed.Client(cluster) as client:
            dask, _ = run_coverage(model, plan, str(tmp_path / "b.tif"), stage=False, scheduler=client)
    for name in plan.bands:
        assert np.array_equal(local.bands[name], dask.bands[name], equal_nan=True), name


def test_resume_equals_an_uninterrupted_run(tmp_path, monkeypatch):
    model, plan = _demo_plan(block=32)
    assert plan.n_blocks > 4
    whole, lock = run_coverage(model, plan, str(tmp_path / "whole.tif"), workers=1)
    cov_run.finish(str(tmp_path / "whole.tif"), lock)
    out = str(tmp_path / "cut.tif")
    monkeypatch.setattr(cov_run, "CRASH_AFTER_BLOCKS", 3)
    with pytest.raises(KeyboardInterrupt):
        run_coverage(model, plan, out, workers=1)
    assert len(list((tmp_path / "cut.tif.partial").glob("block-*.npz"))) == 3
    assert not (tmp_path / "cut.tif.lock").exists()  # released on the way out
    monkeypatch.setattr(cov_run, "CRASH_AFTER_BLOCKS", None)
    with pytest.raises(Exception, match="--resume"):
        run_coverage(model, plan, out, workers=1)
    resumed, lock = run_coverage(model, plan, out, workers=1, resume=True)
    assert resumed.blocks_resumed == 3
    cov_run.finish(out, lock)
    assert not (tmp_path / "cut.tif.partial").exists()
    for name in plan.bands:
        assert np.array_equal(whole.bands[name], resumed.bands[name], equal_nan=True), name


def test_a_local_pool_equals_one_process(tmp_path):
    model, plan = _demo_plan()
    one, _ = run_coverage(model, plan, str(tmp_path / "a.tif"), stage=False, workers=1)
    two, _ = run_coverage(model, plan, str(tmp_path / "b.tif"), stage=False, workers=2)
    for name in plan.bands:
        assert np.array_equal(one.bands[name], two.bands[name], equal_nan=True), name


def test_a_surface_model_casts_the_shadow_a_terrain_wall_casts(tmp_path):
    """Flat terrain with the wall in the surface model (clutter = surface - terrain, as `link --surface`)
    gives the line of sight of the terrain with the wall, away from the wall itself; receivers put on
    the surface with rx_above_surface stand on the wall's top there."""
    hx, hy = X0 + 1500.0, Y0 - 3000.0
    hub = Hub("hub", *reversed(_lonlat(hx, hy)), 20.0)
    walled = ElevationModel([_flat_with_wall(tmp_path, wall_col=300)])
    _, ref = _run(walled, hub, tmp_path)
    (tmp_path / "flat.tif").rename(tmp_path / "surface.tif")
    surface = ElevationModel([tmp_path / "surface.tif"])
    flat = ElevationModel([_flat_with_wall(tmp_path)])
    surface.preload()
    flat.preload()
    s = CoverageSettings(radius_m=2500.0, rx_agl_m=2.0, radio=Radio(5.8, 20.0, 16.0, 16.0))
    plan = plan_coverage(flat, hub, s, surface=surface)
    got, _ = run_coverage(flat, plan, str(tmp_path / "y.tif"), surface=surface, stage=False, workers=1)
    a, _, c, _, e, f = plan.grid.transform
    cols = np.arange(plan.grid.width)
    x = c + (cols + 0.5) * a
    off_wall = (x < X0 + 2990.0) | (x > X0 + 3040.0)
    same = ref.bands["line_of_sight"][:, off_wall] == got.bands["line_of_sight"][:, off_wall]
    assert same[np.isfinite(ref.bands["line_of_sight"][:, off_wall])].all()
    on = CoverageSettings(radius_m=2500.0, rx_agl_m=2.0, radio=Radio(5.8, 20.0, 16.0, 16.0), rx_above_surface=True)
    plan_on = plan_coverage(flat, hub, on, surface=surface)
    roof, _ = run_coverage(flat, plan_on, str(tmp_path / "z.tif"), surface=surface, stage=False, workers=1)
    top = (x > X0 + 3005.0) & (x < X0 + 3025.0)
    assert np.nanmin(roof.bands["line_of_sight"][:, top]) == 1  # on the wall's top every receiver sees the hub


def test_a_hub_beside_the_antimeridian_covers_both_sides(tmp_path):
    """Longitudes around +-180 stay continuous in the lattice; cells on both sides are evaluated."""
    z = np.full((300, 600), 50.0, dtype=np.float32)
    path = write_raster(tmp_path / "am.tif", z, crs="EPSG:4326", transform=from_origin(179.7, 0.15, 0.001, 0.001))
    model = ElevationModel([path])
    hub = Hub("hub", 0.0, 179.995, 20.0)
    s = CoverageSettings(radius_m=1500.0, rx_agl_m=5.0, radio=Radio(5.8, 20.0, 16.0, 16.0), cell_m=50.0)
    plan = plan_coverage(model, hub, s)
    assert np.all(np.abs(plan.cell_lon) <= 180.0) and (plan.cell_lon < 0).any() and (plan.cell_lon > 0).any()
    result, _ = run_coverage(model, plan, str(tmp_path / "x.tif"), stage=False, workers=1)
    los = result.bands["line_of_sight"]
    # The raster runs from 179.7 E to 180.3 E (-179.7): every cell of the disk on both sides is evaluated,
    # all in sight over flat ground.
    assert np.isfinite(los).sum() > 0.98 * np.pi * 1500.0 ** 2 / 50.0 ** 2
    assert np.all(los[np.isfinite(los)] == 1)
