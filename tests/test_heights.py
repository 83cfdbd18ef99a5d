"""Lowest antenna heights (profiler.heights), checked with the link analysis itself."""

from __future__ import annotations

import math

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from profiler.budget import Radio
from profiler.errors import InputError
from profiler.heights import solve_heights, take_paths
from profiler.link import Settings, Site, analyse_link
from profiler.terrain import ElevationModel

from tests.synthetic_urban import SIZE, site_lonlat, write_raster

A_XY, B_XY = (200.0, 1500.0), (2800.0, 1500.0)
RIDGE_TOP_M = 140.0  # 40 m above the 100 m plain, between x = 1205 and 1215 m
SETTINGS = Settings(spacing_m=5.0)
RADIO = Radio(5.8)


@pytest.fixture(scope="module")
def ridge(tmp_path_factory):
    z = np.full((SIZE, SIZE), 100.0)
    z[:, 120:122] = RIDGE_TOP_M  # cells x 1200-1220 m: bilinear plateau between their centres
    path = write_raster(tmp_path_factory.mktemp("ridge") / "ridge.tif", z)
    with ElevationModel([path]) as model:
        yield model


def _analyse(model, agl_a, agl_b):
    a = Site("A", *site_lonlat(*A_XY), agl_a)
    b = Site("B", *site_lonlat(*B_XY), agl_b)
    return analyse_link(model, a, b, RADIO, SETTINGS)


def _meets(model, agl_a, agl_b) -> bool:
    return bool(_analyse(model, agl_a, agl_b).meets_criterion[0])


def _least_a_by_hand(agl_b: float) -> float:
    """Least antenna a height over the ridge plateau: handbook bulge and P.530 F1, geographiclib distances."""
    lat_a, lon_a = site_lonlat(*A_XY)
    lat_b, lon_b = site_lonlat(*B_XY)
    d = Geodesic.WGS84.Inverse(lat_a, lon_a, lat_b, lon_b)["s12"]
    lam = 299_792_458.0 / 5.8e9
    need = -math.inf
    for x in np.linspace(1205.0, 1215.0, 41):
        la, lo = site_lonlat(x, 1500.0)
        d1 = Geodesic.WGS84.Inverse(lat_a, lon_a, la, lo)["s12"]
        d2 = d - d1
        f1 = math.sqrt(lam * d1 * d2 / d)  # ITU-R P.526-15 eq. 2 (first Fresnel radius)
        for k, c in ((4 / 3, 0.6), (2 / 3, 0.0)):
            bulge = d1 * d2 / (2 * k * 6_371_000.0)  # handbook earth bulge
            line = RIDGE_TOP_M + bulge + c * f1
            t = d1 / d
            need = max(need, (line - (100.0 + agl_b) * t) / (1 - t))
    return need - 100.0


def test_one_end_solved_meets_and_one_metre_less_fails(ridge):
    batch = _analyse(ridge, 10.0, 25.0)
    assert not batch.meets_criterion[0]
    sol = solve_heights(batch, solve="a", max_mast_a_m=80.0)
    a = sol.chosen.antenna_a_m
    assert sol.chosen.antenna_b_m == pytest.approx(25.0)
    assert _meets(ridge, a, 25.0)
    assert not _meets(ridge, a - 1.0, 25.0)
    by_hand = _least_a_by_hand(25.0)
    assert a - 1.0 < by_hand + 0.01 and by_hand <= a + 1e-6
    assert [p.meets_criterion for p in sol.one_step_lower] == [False]
    assert all(p.meets_criterion for p in sol.pairs)


def test_other_end_solved(ridge):
    sol = solve_heights(_analyse(ridge, 30.0, 10.0), solve="b", max_mast_b_m=80.0)
    b = sol.chosen.antenna_b_m
    assert sol.chosen.antenna_a_m == pytest.approx(30.0)
    assert _meets(ridge, 30.0, b) and not _meets(ridge, 30.0, b - 1.0)


def test_both_ends_least_sum(ridge):
    sol = solve_heights(_analyse(ridge, 10.0, 10.0), solve="both", max_mast_a_m=60.0, max_mast_b_m=60.0)
    a, b = sol.chosen.antenna_a_m, sol.chosen.antenna_b_m
    assert _meets(ridge, a, b)
    assert not _meets(ridge, a - 1.0, b) and not _meets(ridge, a, b - 1.0)
    # No pair of smaller sum within the mast limits meets the criterion (brute force over the engine).
    sums = [p.sum_m for p in sol.pairs]
    assert min(sums) == pytest.approx(a + b)
    grid = [(x, a + b - 1.0 - x) for x in np.arange(0.0, 61.0)]
    assert not any(_meets(ridge, x, y) for x, y in grid if 0 <= y <= 60)
    # The table is a frontier: b never rises as a rises.
    bs = [p.antenna_b_m for p in sol.pairs]
    assert all(np.diff(bs) < 0)


def test_infeasible_within_mast_limits(ridge):
    sol = solve_heights(_analyse(ridge, 10.0, 10.0), max_mast_a_m=12.0, max_mast_b_m=12.0)
    assert not sol.feasible and sol.chosen is None and sol.pairs == ()
    assert not sol.at_limits.meets_criterion
    assert sol.at_limits.antenna_a_m == 12.0
    assert sol.record()["feasible"] is False


def test_already_clear_gives_zero(ridge):
    # Over a plain with no ridge in the way, the least heights are set by the ends only.
    a = Site("A", *site_lonlat(200.0, 500.0), 10.0)
    b = Site("B", *site_lonlat(1000.0, 500.0), 10.0)
    batch = analyse_link(ridge, a, b, RADIO, SETTINGS)
    sol = solve_heights(batch, max_mast_a_m=5.0, max_mast_b_m=5.0, step_m=0.5)
    assert sol.chosen is not None and sol.chosen.meets_criterion
    assert sol.chosen.sum_m <= 10.0


def test_take_paths_repeats_every_field(ridge):
    p = _analyse(ridge, 10.0, 10.0).profiles
    q = take_paths(p, np.array([0, 0, 0]))
    assert q.distance_m.shape == (3, p.distance_m.shape[1])
    assert q.lines.length_m.shape == (3,) and len(q.problems) == 3 and q.clutter_kind.shape[0] == 3
    np.testing.assert_array_equal(q.ground_m[2], p.ground_m[0])


@pytest.mark.parametrize("kwargs, message", [
    ({"solve": "c"}, "solve must be one of"),
    ({"max_mast_a_m": -1.0}, "between 0 and 1000 m"),
    ({"max_mast_a_m": 1e9}, "between 0 and 1000 m"),
    ({"step_m": 0.0}, "between 0.01 and 100 m"),
    ({"step_m": 1e-9}, "between 0.01 and 100 m"),
    ({"step_m": 0.01, "max_mast_a_m": 999.0}, "heights to try"),
])
def test_bad_settings(ridge, kwargs, message):
    with pytest.raises(InputError, match=message):
        solve_heights(_analyse(ridge, 10.0, 10.0), **kwargs)


@pytest.mark.parametrize("agl_m", [5.0, 20.0, 35.0])
def test_mast_raise_makes_the_path_meet_the_criterion_and_no_less_does(ridge, agl_m):
    """Both antennas raised by mast_raise_m meet the criterion (re-analysed); 5 cm less does not."""
    from profiler.heights import mast_raise_m

    raise_m = float(mast_raise_m(_analyse(ridge, agl_m, agl_m))[0])
    if _meets(ridge, agl_m, agl_m):
        assert raise_m == 0.0
        return
    assert raise_m > 0.05
    assert _meets(ridge, agl_m + raise_m + 0.001, agl_m + raise_m + 0.001)
    assert not _meets(ridge, agl_m + raise_m - 0.05, agl_m + raise_m - 0.05)
