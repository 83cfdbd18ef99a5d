"""The engine's input values refuse bad paths with a sentence that names the path (and sample)."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.availability import ClimateSettings, PathClimate, evaluate_availability
from profiler.errors import InputError
from profiler.losses import terrain_diffraction as td
from profiler.losses.path_geometry import PathGeometry


def _arrays(n_paths=3, n=11):
    d = np.broadcast_to(np.linspace(0.0, 10_000.0, n), (n_paths, n)).copy()
    s = np.full((n_paths, n), 100.0)
    inner = np.zeros((n_paths, n), bool)
    inner[:, 1:-1] = True
    return [d, s, inner, np.full(n_paths, 130.0), np.full(n_paths, 130.0), np.full(n_paths, 10_000.0), 5.8, 4 / 3]


@pytest.mark.parametrize("index, value, words", [
    (5, np.array([10_000.0, -1.0, 10_000.0]), ["path length", "path 1"]),
    (6, np.array([5.8, 5.8, 0.0]), ["frequency", "path 2"]),
    (7, 0.0, ["k-factor", "path 0"]),
    (7, np.nan, ["k-factor"]),
    (3, np.array([130.0, np.inf, 130.0]), ["antenna a", "path 1"]),
    (4, np.array([130.0, 130.0, np.nan]), ["antenna b", "path 2"]),
    (3, np.array([130.0, 130.0]), ["antenna_a_amsl_m has 2 values for 3 paths"]),
    (1, np.full((3, 10), 100.0), ["share one (paths, samples) shape"]),
])
def test_path_geometry_refuses_bad_values(index, value, words):
    args = _arrays()
    args[index] = value
    with pytest.raises(InputError) as err:
        PathGeometry(*args)
    for w in words:
        assert w in str(err.value)


def test_missing_height_names_path_sample_and_distance():
    args = _arrays()
    args[1][2, 4] = np.nan
    with pytest.raises(InputError, match=r"path 2 .* sample 4 \(4\.000 km from site a\)"):
        PathGeometry(*args)


def test_a_path_geometry_and_its_arrays_give_the_same_losses():
    args = _arrays()
    args[1][:, 5] = 140.0  # an edge at mid-path
    g = PathGeometry(*args)
    assert g.n_paths == 3 and g.n_samples == 11 and g.k.shape == (3,)
    for m in td.DIFFRACTION_METHODS:
        assert np.array_equal(td.diffraction_loss_db(m, g), td.diffraction_loss_db(m, *args)), m
    assert td.diffraction_loss_db("knife-edge", g)[0] > 6.0
    with pytest.raises(InputError, match="8 arrays"):
        td.diffraction_loss_db("knife-edge", *args[:7])
    # By name, as the entry points once took them.
    names = ("distance_m", "surface_m", "interior", "antenna_a_amsl_m", "antenna_b_amsl_m", "path_length_m",
             "freq_ghz", "k")
    by_name = td.deygout_loss_db(**dict(zip(names, args)))
    assert np.array_equal(by_name, td.deygout_loss_db(g))
    assert np.array_equal(td.diffraction_loss_db("bullington", *args[:6], freq_ghz=5.8, k=4 / 3),
                          td.diffraction_loss_db("bullington", g))
    with pytest.raises(InputError, match="unknown path argument 'frequency'"):
        td.diffraction_loss_db("bullington", *args[:6], frequency=5.8, k=4 / 3)


def test_every_method_is_in_the_table_once():
    assert td.DIFFRACTION_METHODS == tuple(td.METHODS)
    assert len(set(td.DIFFRACTION_METHODS)) == 5
    assert td.resolve_method("Delta_Bullington") == "delta-bullington"


@pytest.mark.parametrize("kwargs, words", [
    (dict(distance_m=[10_000.0, 0.0]), ["path length must be positive"]),
    (dict(altitude_a_m=[10.0, np.nan]), ["antenna altitudes must be finite"]),
    (dict(multipath_outside_range="skip"), ["multipath_outside_range"]),
])
def test_path_climate_refuses_bad_values(kwargs, words):
    base = dict(distance_m=[10_000.0, 20_000.0], freq_ghz=18.0, altitude_a_m=10.0, altitude_b_m=20.0)
    with pytest.raises(InputError) as err:
        PathClimate(**{**base, **kwargs})
    for w in words:
        assert w in str(err.value)


def test_a_path_climate_and_its_arguments_give_the_same_estimate():
    s = ClimateSettings(rain_rate_mm_h=60.0)
    pc = PathClimate([10_000.0, 20_000.0], 18.0, 10.0, 20.0, s, latitude_deg=45.0)
    a = evaluate_availability(30.0, pc)
    b = evaluate_availability(30.0, [10_000.0, 20_000.0], 18.0, 10.0, 20.0, s, latitude_deg=45.0)
    np.testing.assert_array_equal(a.availability_pct, b.availability_pct)
    np.testing.assert_array_equal(a.required_fade_margin_db, b.required_fade_margin_db)
    assert a.assumptions == b.assumptions
