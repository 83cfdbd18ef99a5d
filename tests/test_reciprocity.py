"""Reciprocity: a link's figures do not depend on which end is called a (issue 10 item 6).

Real terrain: matplotlib's USGS 3-arc-second sample DEM (``jacksboro`` fixture),
a geographic raster whose cells shrink northwards, so a spacing taken from one
end's cell used to differ with the order of the sites.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from profiler import screening
from profiler.budget import Radio
from profiler.link import Settings, Site, analyse_link
from profiler.losses.terrain_diffraction import DIFFRACTION_METHODS
from profiler.profile import build_profiles
from profiler.terrain import ElevationModel

RADIO = Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23)
TOL_DB = 0.01
# (lat, lon, antenna m) of a and b: a long path over many ridges, shorter ones over one or two,
# one running east-west (equal cell size at both ends) and one north-south.
PATHS = [
    ((36.47, -84.40, 10.0), (36.72, -84.09, 30.0)),
    ((36.50, -84.35, 40.0), (36.60, -84.20, 15.0)),
    ((36.70, -84.38, 60.0), (36.46, -84.10, 60.0)),
    ((36.55, -84.30, 25.0), (36.55, -84.12, 25.0)),
    ((36.4774, -84.2444, 23.0), (36.4602, -84.2298, 23.0)),
    ((36.48, -84.25, 80.0), (36.71, -84.25, 5.0)),
]


@pytest.fixture(scope="module")
def model(jacksboro):
    with ElevationModel([jacksboro["path"]]) as m:
        yield m


def _site(name, t):
    return Site(name, t[0], t[1], t[2])


def test_swapped_sites_give_exactly_the_reversed_samples(model):
    a = np.array([p[0] for p in PATHS])
    b = np.array([p[1] for p in PATHS])
    ab = build_profiles(model, a[:, 0], a[:, 1], b[:, 0], b[:, 1])
    ba = build_profiles(model, b[:, 0], b[:, 1], a[:, 0], a[:, 1])
    np.testing.assert_array_equal(ab.n_samples, ba.n_samples)
    np.testing.assert_array_equal(ab.spacing_m, ba.spacing_m)
    np.testing.assert_array_equal(ab.length_m, ba.length_m)
    np.testing.assert_array_equal(ab.lines.azimuth_a_to_b_deg, ba.lines.azimuth_b_to_a_deg)
    for i, n in enumerate(ab.n_samples):
        np.testing.assert_array_equal(ab.lat_deg[i, :n], ba.lat_deg[i, :n][::-1])
        np.testing.assert_array_equal(ab.lon_deg[i, :n], ba.lon_deg[i, :n][::-1])
        np.testing.assert_array_equal(ab.ground_m[i, :n], ba.ground_m[i, :n][::-1])
        np.testing.assert_allclose(ab.distance_m[i, :n], ab.length_m[i] - ba.distance_m[i, :n][::-1],
                                   rtol=0, atol=1e-6)


def test_default_spacing_is_the_finest_on_the_path_not_site_a(model):
    # North-south path: the cell (and so the default spacing) is finer at the northern end.
    south, north = (36.46, -84.25), (36.72, -84.25)
    p = build_profiles(model, [south[0]], [south[1]], [north[0]], [north[1]])
    cell_north = model.cell_size_m(north[1], north[0])
    assert cell_north < model.cell_size_m(south[1], south[0])
    assert p.spacing_m[0] == pytest.approx(cell_north / 2.0, rel=1e-9)


@pytest.mark.parametrize("i", range(len(PATHS)))
def test_link_figures_are_the_same_either_way(model, i):
    a, b = _site("a", PATHS[i][0]), _site("b", PATHS[i][1])
    ab = analyse_link(model, a, b, RADIO)
    ba = analyse_link(model, b, a, RADIO)
    for at_k in ("design", "worst"):
        x, y = getattr(ab, at_k), getattr(ba, at_k)
        assert set(x.diffraction_by_method_db) == set(DIFFRACTION_METHODS)
        for m in DIFFRACTION_METHODS:
            assert x.diffraction_by_method_db[m][0] == pytest.approx(y.diffraction_by_method_db[m][0], abs=TOL_DB), m
        assert x.clearance.worst_f1_fraction[0] == pytest.approx(y.clearance.worst_f1_fraction[0], abs=1e-6)
        assert x.clearance.worst_clearance_m[0] == pytest.approx(y.clearance.worst_clearance_m[0], abs=1e-4)
        # Worst point measured from a: from b it lies at length minus that distance.
        assert x.clearance.worst_distance_m[0] == pytest.approx(
            ab.profiles.length_m[0] - y.clearance.worst_distance_m[0], abs=1e-3)
        assert x.gases_db[0] == pytest.approx(y.gases_db[0], abs=1e-9)
    assert bool(ab.meets_criterion[0]) == bool(ba.meets_criterion[0])


def _task(paths, settings, reverse=False):
    ends = [(p[1], p[0]) if reverse else p for p in paths]
    col = lambda k, j: np.array([e[k][j] for e in ends])  # noqa: E731
    n = len(ends)
    names = np.array([f"s{i}" for i in range(n)], dtype=object)
    return screening.ChunkTask(
        first_pair=0, a=np.arange(n), b=np.arange(n) + n, names_a=names, names_b=names,
        lat_a=col(0, 0), lon_a=col(0, 1), lat_b=col(1, 0), lon_b=col(1, 1), agl_a=col(0, 2), agl_b=col(1, 2),
        gain_a=None, gain_b=None, radio=RADIO, settings=settings)


@pytest.mark.parametrize("method", DIFFRACTION_METHODS)
def test_screening_engine_is_reciprocal_for_every_method(model, method):
    settings = dataclasses.replace(Settings(), diffraction_method=method)
    ab, pa = screening.evaluate_chunk(model, _task(PATHS, settings))
    ba, pb = screening.evaluate_chunk(model, _task(PATHS, settings, reverse=True))
    assert not pa and not pb
    np.testing.assert_array_equal(ab["samples"], ba["samples"])
    np.testing.assert_allclose(ab["diffraction_db"], ba["diffraction_db"], rtol=0, atol=TOL_DB)
    np.testing.assert_allclose(ab["wc_diffraction_db"], ba["wc_diffraction_db"], rtol=0, atol=TOL_DB)
    np.testing.assert_allclose(ab["worst_f1_fraction"], ba["worst_f1_fraction"], rtol=0, atol=1e-6)
    np.testing.assert_allclose(ab["wc_worst_f1_fraction"], ba["wc_worst_f1_fraction"], rtol=0, atol=1e-6)
    np.testing.assert_array_equal(ab["meets_criterion"], ba["meets_criterion"])
