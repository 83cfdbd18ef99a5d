"""Terrain sampling and link verdicts on real open terrain: the USGS 3-arc-second DEM of the
Jacksboro fault area (Tennessee) shipped with matplotlib as sample data, checked against an
independent bilinear interpolation (scipy.interpolate.RegularGridInterpolator)."""

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator

from profiler.budget import Radio
from profiler.link import Site, analyse_link
from profiler.losses.free_space import free_space_loss_db
from profiler.terrain import ElevationModel


def test_bilinear_matches_scipy(jacksboro):
    z = jacksboro["elevation"].astype(float)
    rows, cols = z.shape
    lat_centres = jacksboro["north"] - (np.arange(rows) + 0.5) * jacksboro["dy"]
    lon_centres = jacksboro["west"] + (np.arange(cols) + 0.5) * jacksboro["dx"]
    ref = RegularGridInterpolator((lat_centres[::-1], lon_centres), z[::-1], method="linear")
    rng = np.random.default_rng(7)
    lat = rng.uniform(lat_centres[-1], lat_centres[0], 5000)
    lon = rng.uniform(lon_centres[0], lon_centres[-1], 5000)
    got, covered = ElevationModel([jacksboro["path"]]).sample(lon, lat)
    assert covered.all()
    assert got == pytest.approx(ref(np.column_stack([lat, lon])), abs=1e-6)


def test_cell_centre_returns_stored_value(jacksboro):
    z = jacksboro["elevation"]
    r, c = 123, 321
    lat = jacksboro["north"] - (r + 0.5) * jacksboro["dy"]
    lon = jacksboro["west"] + (c + 0.5) * jacksboro["dx"]
    got, _ = ElevationModel([jacksboro["path"]]).sample([lon], [lat])
    assert got[0] == pytest.approx(float(z[r, c]), abs=1e-6)


RADIO = Radio(freq_ghz=5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)


def test_path_over_the_ridge_is_blocked(jacksboro):
    # From the valley south-east of the fault across the ridge line (Pine Mountain area).
    m = ElevationModel([jacksboro["path"]])
    r = analyse_link(m, Site("valley", 36.48, -84.13, 10), Site("plateau", 36.566, -84.288, 10), RADIO).record(0)
    assert r["clearance"]["line_of_sight"] is False
    assert r["loss_db"]["diffraction"] > 20.0
    assert r["meets_criterion"] is False


def test_clear_path_has_only_free_space_loss(jacksboro):
    m = ElevationModel([jacksboro["path"]])
    r = analyse_link(m, Site("hill 1", 36.4721, -84.3572, 30), Site("hill 2", 36.4596, -84.3254, 30), RADIO).record(0)
    assert r["clearance"]["line_of_sight"] is True
    assert r["loss_db"]["diffraction"] == 0.0
    # gases per ITU-R P.676-12 Annex 1 add about 0.009 dB/km at 5.8 GHz
    assert 0.0 < r["loss_db"]["gases"] < 0.01 * r["distance_km"]
    assert r["loss_db"]["total"] == pytest.approx(free_space_loss_db(r["distance_km"] * 1e3, 5.8) + r["loss_db"]["gases"])
    assert r["meets_criterion"] is True
