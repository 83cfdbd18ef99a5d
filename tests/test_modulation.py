"""Adaptive modulation of many links: step margins, the chosen step, shares of the year, capacities, EIRP."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from profiler.availability import AvailabilityStatus, ClimateSettings, availability_for_links
from profiler.budget import Budget, Radio
from profiler.equipment.modulation import (
    RadioPlan, eirp_check, highest_closing_step, mean_capacity_mbps, modulation_for_links, step_margins_db,
    step_shares,
)
from profiler.equipment.radios import EirpLimit, read_radio_profile, step_table
from tests.radio_profiles import write

CLIMATE = ClimateSettings(rain_rate_mm_h=42.0, target_availability_pct=99.99)


def _plan(tmp_path, min_margin_db=10.0, width=28):
    p = read_radio_profile(write(tmp_path))
    c = p.channel(width)
    return RadioPlan(p, width, 18.0, p.band(18.0), step_table(p, c, None, 20.0), min_margin_db)


def test_step_margins_shift_by_power_and_threshold():
    m = step_margins_db([30.0, 10.0], [0.0, 0.0, -2.0], [6.0, 12.0, 19.0])
    np.testing.assert_allclose(m, [[24.0, 18.0, 9.0], [4.0, -2.0, -11.0]])


def test_the_highest_step_with_the_margin_is_chosen():
    m = np.array([[24.0, 18.0, 9.0], [4.0, -2.0, -11.0], [30.0, 20.0, 10.0], [np.nan, np.nan, np.nan]])
    np.testing.assert_array_equal(highest_closing_step(m, 10.0), [1, -1, 2, -1])
    np.testing.assert_array_equal(highest_closing_step(m, 0.0), [2, 0, 2, -1])


def test_mean_capacity_is_the_time_at_each_step_times_its_capacity():
    capacity = [40.0, 80.0, 120.0]
    share = np.array([[99.99, 99.9, 99.0]])
    by_time = (40 * (99.99 - 99.9) + 80 * (99.9 - 99.0) + 120 * 99.0) / 100.0  # time at exactly each step
    assert mean_capacity_mbps(capacity, share)[0] == pytest.approx(by_time, rel=1e-12)
    assert mean_capacity_mbps(capacity, [[100.0, 100.0, 100.0]])[0] == pytest.approx(120.0)
    assert mean_capacity_mbps(capacity, [[100.0, 0.0, 0.0]])[0] == pytest.approx(40.0)


# 17 km paths at 18 GHz in the demo climate: margins chosen to fall inside the rain method's range,
# below it (a bound), and below 0 dB (the step does not close).
D = np.array([17_000.0, 17_000.0, 17_000.0])
PATH = dict(distance_m=D, freq_ghz=18.0, altitude_a_m=np.array([150.0, 150.0, 150.0]),
            altitude_b_m=np.array([380.0, 380.0, 380.0]), latitude_deg=np.array([-30.5, -30.5, -30.5]),
            valid=np.array([True, True, True]))


def test_share_of_each_step_is_the_availability_engine_run_with_that_steps_margin():
    margins = np.array([[42.0, 30.0, 21.0, 12.0], [100.0, 95.0, 90.0, 85.0], [8.0, 3.0, -1.0, -5.0]])
    meets = np.array([True, True, True])
    shares = step_shares(margins, *PATH.values(), CLIMATE, meets_criterion=meets)
    for s in range(margins.shape[1]):
        av = availability_for_links(margins[:, s], PATH["distance_m"], 18.0, PATH["altitude_a_m"],
                                    PATH["altitude_b_m"], PATH["latitude_deg"], PATH["valid"], CLIMATE,
                                    meets_criterion=meets, solve_required=False)
        np.testing.assert_array_equal(shares.status[:, s], av.status)
        for i in range(3):
            j = av.rows[i]
            if j < 0:
                assert np.isnan(shares.pct[i, s]) and not shares.meets_target[i, s]
                continue
            side = av.result.rain_range_side[j]
            assert shares.side[i, s] == side
            assert shares.meets_target[i, s] == av.result.meets_target[j]
            if side == 0:
                assert shares.pct[i, s] == av.result.availability_pct[j]  # the engine's figure, bit for bit
            else:
                assert np.isnan(shares.pct[i, s])  # a bound is never given as a figure
            np.testing.assert_equal(shares.multipath_pct[i, s], av.result.multipath_outage_pct[j])
    assert (shares.side[1] < 0).all() and (shares.low_pct[1] == 99.999).all() and (shares.high_pct[1] == 100).all()
    assert shares.status[2, 2] == AvailabilityStatus.DOES_NOT_CLOSE
    assert shares.low_pct[2, 2] == shares.high_pct[2, 2] == 0.0 and "does not close" in shares.reason(2, 2)


def _budget(snr_db):
    snr = np.asarray(snr_db, dtype=float)
    z = np.zeros_like(snr)
    return Budget(eirp_dbm=z, rx_level_dbm=z, noise_floor_dbm=z, snr_db=snr, fade_margin_db=snr - 0.0)


def test_modulation_for_links_chooses_shares_and_capacities(tmp_path):
    plan = _plan(tmp_path)
    snr = np.array([40.0, 120.0, 12.0])
    worst = np.array([39.0, 119.0, 11.0])
    r = modulation_for_links(plan, _budget(snr), _budget(worst), meets_criterion=np.array([True, True, False]),
                             settings=CLIMATE, **PATH)
    np.testing.assert_allclose(r.margin_db[:, 0], snr - plan.steps.required_snr_db[0])
    np.testing.assert_allclose(r.margin_db[:, 2], snr - 2.0 - plan.steps.required_snr_db[2])  # 2 dB less power
    np.testing.assert_allclose(r.margin_worst_db, r.margin_db - 1.0)
    assert list(r.chosen) == list(highest_closing_step(r.margin_db, 10.0))
    # Path 2: every share is a bound above 99.999 %: the mean is the range those bounds allow.
    assert r.mean_low_mbps[1] == pytest.approx(120 * 0.99999) and r.mean_high_mbps[1] == pytest.approx(120.0)
    assert r.capacity_at_target_mbps()[1] == 120.0
    # Path 3 fails the clearance criterion: no share, no mean, no capacity at the target.
    assert not r.shares.estimated[2] and np.isnan(r.mean_low_mbps[2]) and r.at_target[2] == -1
    rec = r.record(2)
    assert rec["shares_estimated"] is False and "clearance" in rec["shares_reason"]
    assert rec["mean_capacity_mbps"] is None and rec["capacity_at_target_mbps"] is None
    rec1 = r.record(1)
    assert rec1["mean_capacity_mbps"] is None  # a range, not a figure
    assert rec1["steps"][0]["share_of_year_above_pct"] == 99.999 and rec1["steps"][0]["share_of_year_pct"] is None
    assert rec1["chosen_label"] == "64QAM" and rec1["capacity_mbps"] == 120.0


def test_engine_radio_is_the_lowest_step(tmp_path):
    plan = _plan(tmp_path, width=56)
    radio = plan.engine_radio(Radio(18.0, tx_power_dbm=99, bandwidth_mhz=3, noise_figure_db=1, required_snr_db=1))
    assert (radio.tx_power_dbm, radio.bandwidth_mhz, radio.noise_figure_db, radio.required_snr_db) == (20, 50, 6, 9)


def test_eirp_check_at_both_ends_and_its_warning():
    radio = Radio(18.0, tx_power_dbm=18, gain_a_dbi=np.array([41.0, 30.0]), gain_b_dbi=np.array([38.0, 30.0]),
                  loss_a_db=0.5, loss_b_db=0.5)
    check = eirp_check(radio, EirpLimit(55.0, "--max-eirp-dbm"), 2)
    np.testing.assert_allclose(check.eirp_a_dbm, [58.5, 47.5])
    np.testing.assert_allclose(check.excess_db, [3.5, -7.5])
    rec = check.record(0)
    assert rec["exceeds"] and rec["excess_db"] == pytest.approx(3.5) and "regulator" in rec["note"]
    assert "by 3.5 dB" in check.warning(0) and "site a 58.5 dBm" in check.warning(0) and "site b 55.5" in check.warning(0)
    assert check.warning(1) is None and check.record(1)["excess_db"] == 0.0
