"""Unit tests of profiler.availability."""

from __future__ import annotations

import math

import numpy as np
import pytest

from profiler.availability import (
    MINUTES_PER_YEAR,
    ClimateSettings,
    evaluate_availability,
    outage_components_pct,
    required_fade_margin_db,
)
from profiler.errors import InputError, ModelValidityError
from profiler.losses.multipath import fade_exceedance_pct, multipath_occurrence_factor_pct
from profiler.losses.rain import rain_attenuation_001_db, rain_attenuation_exceeded_db


def test_settings_defaults_and_validation():
    s = ClimateSettings()
    assert (s.rain_rate_mm_h, s.polarisation, s.target_availability_pct) == (42.0, "horizontal", 99.99)
    assert (s.pressure_hpa, s.temperature_c, s.water_vapour_g_m3) == (1013.25, 15.0, 7.5)
    assert set(s.defaults_used()) == set(s.as_dict())
    t = ClimateSettings(rain_rate_mm_h=60, polarisation="Vertical")
    assert t.tilt_deg == 90.0 and t.polarisation == "vertical" and "rain_rate_mm_h" not in t.defaults_used()
    assert ClimateSettings(polarisation=30).polarisation == "30"
    g = ClimateSettings(rain_rate_mm_h=42.0, given=frozenset({"rain_rate_mm_h"}))
    assert "rain_rate_mm_h" not in g.defaults_used() and "dn1_n_per_km" in g.defaults_used()
    assert "given" not in g.as_dict()
    assert isinstance(t.rain_rate_mm_h, float)


@pytest.mark.parametrize(
    "kwargs,error",
    [
        ({"rain_rate_mm_h": -1}, InputError),
        ({"rain_rate_mm_h": "lots"}, InputError),
        ({"polarisation": "diagonal"}, InputError),
        ({"target_availability_pct": 100.0}, InputError),
        ({"target_availability_pct": 99.9999}, ModelValidityError),
        ({"target_availability_pct": 95.0}, ModelValidityError),
        ({"terrain_roughness_m": -3}, InputError),
        ({"dn1_n_per_km": float("nan")}, InputError),
        ({"pressure_hpa": 0}, InputError),
        ({"water_vapour_g_m3": -0.1}, InputError),
    ],
)
def test_settings_refuse_bad_values(kwargs, error):
    with pytest.raises(error):
        ClimateSettings(**kwargs)


def test_targets_at_the_ends_of_the_rain_range_are_accepted():
    ClimateSettings(target_availability_pct=99.0)
    ClimateSettings(target_availability_pct=99.999)


PATHS = dict(
    distance_m=np.array([20_000.0, 20_000.0, 40_000.0, 8_000.0]),
    freq_ghz=np.array([18.0, 18.0, 11.0, 23.0]),
    altitude_a_m=np.array([100.0, 100.0, 300.0, 50.0]),
    altitude_b_m=np.array([200.0, 200.0, 600.0, 80.0]),
)


def test_components_agree_with_the_modules():
    s = ClimateSettings()
    margin = np.array([20.0, 30.0, 40.0, 35.0])
    r = evaluate_availability(margin, **PATHS, settings=s)
    elev = np.degrees(np.arctan2(np.abs(PATHS["altitude_b_m"] - PATHS["altitude_a_m"]), PATHS["distance_m"]))
    a001 = rain_attenuation_001_db(PATHS["distance_m"], PATHS["freq_ghz"], 42.0, elev, 0.0)
    np.testing.assert_allclose(r.rain_attenuation_001_db, a001)
    # rain: the attenuation exceeded for the outage percentage equals the margin
    inside = r.rain_range_side == 0
    assert inside.sum() >= 2 and np.all(np.isnan(r.rain_outage_pct[~inside]))
    a = rain_attenuation_exceeded_db(PATHS["distance_m"][inside], PATHS["freq_ghz"][inside], 42.0,
                                     r.rain_outage_pct[inside], elev[inside], 0.0)
    np.testing.assert_allclose(a, margin[inside], rtol=1e-9)
    # multipath: no latitude, so the worst month stands for the year
    p0 = multipath_occurrence_factor_pct(
        PATHS["distance_m"], PATHS["freq_ghz"], PATHS["altitude_a_m"], PATHS["altitude_b_m"], -200.0, 40.0
    )
    np.testing.assert_allclose(r.multipath_outage_pct, fade_exceedance_pct(margin, p0), rtol=1e-12)
    np.testing.assert_allclose(r.multipath_worst_month_pct, r.multipath_outage_pct)
    # availability counts rain only (ITU-R P.530-17 section 2.4.1); multipath is performance
    np.testing.assert_allclose(r.availability_pct, 100 - r.rain_outage_pct)
    np.testing.assert_allclose(r.rain_outage_min_per_year, r.rain_outage_pct / 100 * 525_960)
    np.testing.assert_allclose(r.multipath_worst_month_min, r.multipath_worst_month_pct / 100 * 43_830)
    assert MINUTES_PER_YEAR == 525_960
    rain, mp = outage_components_pct(margin, **PATHS, settings=s)
    np.testing.assert_allclose(rain, r.rain_outage_pct)
    np.testing.assert_allclose(mp, r.multipath_outage_pct)


def test_latitude_converts_worst_month_to_year():
    margin = np.full(4, 30.0)
    month = evaluate_availability(margin, **PATHS)
    year = evaluate_availability(margin, **PATHS, latitude_deg=47.0)
    assert np.all(year.worst_month_to_year_db > 0)
    np.testing.assert_allclose(year.multipath_worst_month_pct, month.multipath_outage_pct)
    assert np.all(year.multipath_outage_pct < month.multipath_outage_pct)
    assert any("worst month" in a for a in month.assumptions)
    assert any("section 2.3.4" in a for a in year.assumptions)


def test_required_margin_meets_target_exactly():
    s = ClimateSettings(target_availability_pct=99.995)
    need = required_fade_margin_db(**PATHS, settings=s, latitude_deg=40.0)
    r = evaluate_availability(need, **PATHS, settings=s, latitude_deg=40.0)
    assert np.all(r.rain_range_side == 0)
    np.testing.assert_allclose(r.rain_outage_pct + r.multipath_outage_pct, 0.005, rtol=1e-6)
    np.testing.assert_allclose(r.required_fade_margin_db, need)
    assert np.all(need >= r.required_fade_margin_rain_db)
    # rain only: 0.1 dB below A_0.005 fails the target, 0.1 dB above meets it (P.530-17 eq. 34)
    rain_need = r.required_fade_margin_rain_db
    assert not evaluate_availability(rain_need - 0.1, **PATHS, settings=s, latitude_deg=40.0).meets_target.any()
    assert evaluate_availability(rain_need + 0.1, **PATHS, settings=s, latitude_deg=40.0).meets_target.all()


def test_non_positive_margin_means_down_all_year():
    r = evaluate_availability([0.0, -5.0, 30.0, 30.0], **PATHS)
    np.testing.assert_array_equal(r.availability_pct[:2], [0.0, 0.0])
    assert not r.meets_target[:2].any()


def test_out_of_range_multipath_raises_or_is_excluded():
    paths = dict(distance_m=[3_000.0, 20_000.0], freq_ghz=[2.4, 18.0], altitude_a_m=10.0, altitude_b_m=20.0)
    with pytest.raises(ModelValidityError, match="15/d"):
        evaluate_availability([20.0, 20.0], **paths)
    r = evaluate_availability([20.0, 20.0], **paths, multipath_outside_range="exclude")
    assert list(r.multipath_applicable) == [False, True]
    assert np.isnan(r.multipath_outage_pct[0]) and r.multipath_outage_pct[1] > 0.0
    assert np.isnan(r.multipath_worst_month_pct[0]) and np.isnan(r.multipath_occurrence_factor_pct[0])


@pytest.mark.filterwarnings("ignore::profiler.errors.ModelValidityWarning")
def test_p0_too_large_is_excluded_per_path_not_fatal():
    # ITU-R P.530-17 section 2.3.2 needs pt = p0 10^(-At/10) < 100 %: a 300 km path with
    # dN1 = -850 leaves it; that path loses its multipath figures, the others keep theirs.
    s = ClimateSettings(dn1_n_per_km=-850.0)
    paths = dict(distance_m=[300_000.0, 20_000.0], freq_ghz=6.0, altitude_a_m=100.0, altitude_b_m=200.0)
    with pytest.raises(ModelValidityError, match="too large"):
        evaluate_availability([20.0, 20.0], **paths, settings=s)
    r = evaluate_availability([20.0, 20.0], **paths, settings=s, multipath_outside_range="exclude")
    assert list(r.multipath_status) == [2, 0]
    assert np.isnan(r.multipath_outage_pct[0]) and np.isfinite(r.multipath_outage_pct[1])
    assert np.all(np.isfinite(r.rain_attenuation_001_db))


def test_bad_inputs_are_refused():
    with pytest.raises(InputError, match="NaN"):
        evaluate_availability(float("nan"), 10_000.0, 18.0, 0.0, 0.0)
    with pytest.raises(InputError, match="path length"):
        evaluate_availability(20.0, 0.0, 18.0, 0.0, 0.0)
    with pytest.raises(ModelValidityError, match="GHz"):
        evaluate_availability(20.0, 10_000.0, 150.0, 0.0, 0.0)
    with pytest.raises(InputError, match="multipath_outside_range"):
        evaluate_availability(20.0, 10_000.0, 18.0, 0.0, 0.0, multipath_outside_range="skip")


def test_assumptions_name_the_defaults():
    r = evaluate_availability(30.0, 20_000.0, 18.0, 100.0, 200.0)
    text = " ".join(r.assumptions)
    assert "R0.01 = 42 mm/h (default" in text
    assert "dN1 = -200" in text and "sa = 40 m (default)" in text
    assert math.isclose(r.target_availability_pct, 99.99)


def test_skipping_the_required_margin_leaves_the_other_numbers_unchanged():
    """solve_required=False (screening) skips only the bisection of the margin needed."""
    rng = np.random.default_rng(8)
    args = (rng.uniform(-5.0, 60.0, 200), rng.uniform(2_000.0, 50_000.0, 200), rng.choice([6.0, 18.0, 38.0], 200),
            rng.uniform(0.0, 900.0, 200), rng.uniform(0.0, 900.0, 200))
    full = evaluate_availability(*args, latitude_deg=rng.uniform(-60, 60, 200), multipath_outside_range="exclude")
    rng = np.random.default_rng(8)
    args = (rng.uniform(-5.0, 60.0, 200), rng.uniform(2_000.0, 50_000.0, 200), rng.choice([6.0, 18.0, 38.0], 200),
            rng.uniform(0.0, 900.0, 200), rng.uniform(0.0, 900.0, 200))
    fast = evaluate_availability(*args, latitude_deg=rng.uniform(-60, 60, 200), multipath_outside_range="exclude",
                                 solve_required=False)
    assert np.all(np.isnan(fast.required_fade_margin_db)) and np.all(np.isfinite(full.required_fade_margin_db))
    for name in ("availability_pct", "rain_outage_pct", "multipath_outage_pct", "multipath_worst_month_pct"):
        assert np.array_equal(getattr(full, name), getattr(fast, name), equal_nan=True)
    assert np.array_equal(full.meets_target, fast.meets_target)
