"""Coverage agrees with `terrahop link` (the link engine) from the hub to 200 random cells of the demo terrain.

The tolerances are the README's (Coverage, "Agreement with terrahop link"): a cell's figures come from
the samples of its radial, which may pass up to half an output cell beside the cell's own path, and
from the cell's own distance and ground height.
"""

from __future__ import annotations

import numpy as np
import pytest

from profiler.budget import Radio
from profiler.coverage.engine import CoverageSettings, Hub, plan_coverage
from profiler.coverage.run import run_coverage
from profiler.link import analyse_links
from profiler.link_types import Settings, Site
from profiler.terrain import ElevationModel
from tests.conftest import DEMO_DEM

#: README tolerances: F1 fraction (where either is under 1: every cell, and 9 cells in 10), diffraction and
#: received level, dB.
F1_TOLERANCE = 0.1
F1_TOLERANCE_90 = 0.03
DB_TOLERANCE = 1.0


@pytest.mark.parametrize("method", ["delta-bullington", "bullington", "knife-edge"])
def test_coverage_agrees_with_link_on_random_cells(tmp_path, method):
    model = ElevationModel([DEMO_DEM])
    hub = Hub("Tallis Farm", -30.444113, -20.937510, 15.0)
    radio = Radio(5.8, 23.0, 16.0, 16.0, bandwidth_mhz=20.0)
    s = CoverageSettings(radius_m=9000.0, rx_agl_m=6.0, radio=radio, method=method)
    plan = plan_coverage(model, hub, s)
    result, _ = run_coverage(model, plan, str(tmp_path / "x.tif"), stage=False, workers=1)
    rows, cols = np.nonzero(np.isfinite(result.bands["fade_margin_db"]))
    rng = np.random.default_rng(18)
    pick = rng.choice(rows.size, 200, replace=False)
    r, c = rows[pick], cols[pick]
    from pyproj import Transformer

    x, y = plan.grid.centres(r, c)
    lon, lat = Transformer.from_crs(plan.grid.crs, "EPSG:4326", always_xy=True).transform(x, y)
    sites_b = [Site(f"cell {i}", float(lat[i]), float(lon[i]), 6.0) for i in range(200)]
    sites_a = [Site(hub.name, hub.lat_deg, hub.lon_deg, hub.agl_m)] * 200
    batch = analyse_links(model, sites_a, sites_b, radio, Settings(diffraction_method=method, compare_methods=False),
                          estimate_availability=False)
    assert all(p is None for p in batch.problems)
    d = batch.design
    q_link = np.asarray(d.clearance.worst_f1_fraction, dtype=float)
    q_cov = result.bands["f1_fraction"][r, c].astype(float)
    low = (q_link < 1.0) | (q_cov < 1.0)
    assert low.sum() > 40 and (q_link < 0).sum() > 10  # the sample has blocked and marginal cells
    dq = np.abs(q_cov - q_link)[low]
    assert np.max(dq) <= F1_TOLERANCE and np.percentile(dq, 90) <= F1_TOLERANCE_90
    # At 1 F1 and above coverage reports a lower bound: never more clearance than the link finds.
    # (within 10 % of the link's fraction there, as the README states; 3 % was the largest seen here).
    assert np.all(q_cov[~low] <= q_link[~low] * (1.0 + F1_TOLERANCE))
    los_cov = result.bands["line_of_sight"][r, c] == 1
    los_link = np.asarray(d.clearance.line_of_sight, dtype=bool)
    assert np.all((los_cov == los_link) | (np.abs(q_link) < F1_TOLERANCE))
    for band, ref in (("diffraction_db", d.diffraction_db), ("rx_level_dbm", d.budget.rx_level_dbm),
                      ("snr_db", d.budget.snr_db), ("fade_margin_db", d.budget.fade_margin_db)):
        got = result.bands[band][r, c].astype(float)
        assert np.max(np.abs(got - np.asarray(ref, dtype=float))) <= DB_TOLERANCE, band
