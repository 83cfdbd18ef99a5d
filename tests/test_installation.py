"""Installer figures (profiler.equipment.installation): record layout, declination notes, dates."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from profiler.equipment.installation import (
    Installation, declination_deg, magnetic_model, parse_date, tilt_deg,
)
from profiler.errors import InputError


def _installation(lat_a, lon_a, lat_b, lon_b, az_a=10.0, az_b=190.0):
    date = dt.date(2026, 6, 1)
    dec_a = declination_deg([lat_a], [lon_a], date)
    dec_b = declination_deg([lat_b], [lon_b], date)
    one = np.array([1.0])
    return Installation(
        date=date, model=magnetic_model(), k=4 / 3, k_worst=2 / 3,
        tilt_a_deg=np.atleast_1d(tilt_deg(10e3, 100.0, 150.0, 4 / 3)), tilt_b_deg=np.atleast_1d(tilt_deg(10e3, 150.0, 100.0, 4 / 3)),
        tilt_a_worst_deg=np.atleast_1d(tilt_deg(10e3, 100.0, 150.0, 2 / 3)), tilt_b_worst_deg=np.atleast_1d(tilt_deg(10e3, 150.0, 100.0, 2 / 3)),
        azimuth_a_deg=np.array([az_a]), azimuth_b_deg=np.array([az_b]), declination_a=dec_a, declination_b=dec_b,
        rx_a_dbm=-50 * one, rx_b_dbm=-50 * one, agl_a_m=10 * one, agl_b_m=12 * one, amsl_a_m=100 * one,
        amsl_b_m=150 * one, vertical_datum="EGM96")


def test_record_layout_and_magnetic_azimuth():
    rec = _installation(47.6, -122.3, 47.7, -122.2, az_a=5.0).record(0)
    assert rec["magnetic_model"] == "WMM-2025" and rec["date"] == "2026-06-01"
    a = rec["a"]
    assert a["declination_deg"] > 14  # about 15 deg east at Seattle (pygeomag's own example, 2025.25)
    # east declination: the compass bearing is smaller; wraps past north
    assert a["azimuth_magnetic_deg"] == pytest.approx((5.0 - a["declination_deg"]) % 360.0)
    assert a["azimuth_magnetic_deg"] > 340
    assert set(a) >= {"tilt_deg", "tilt_worst_deg", "azimuth_true_deg", "azimuth_magnetic_deg",
                      "declination_deg", "declination_uncertainty_deg", "rx_level_dbm", "antenna_agl_m",
                      "antenna_amsl_m"}
    assert "declination_note" not in a
    assert rec["vertical_datum"] == "EGM96"


def test_near_the_magnetic_pole_the_record_warns():
    # The north dip pole lies near 85.8 N, 139 W (2025, from memory); the horizontal field is weak there.
    rec = _installation(85.5, -140.0, 85.6, -139.0).record(0)
    assert "declination_note" in rec["a"] and "true azimuth" in rec["a"]["declination_note"]


@pytest.mark.parametrize("text", ["2026-13-01", "yesterday", "2026/01/02", ""])
def test_bad_date_text(text):
    with pytest.raises(InputError, match="YYYY-MM-DD"):
        parse_date(text)


def test_date_objects_pass_through():
    assert parse_date(dt.datetime(2026, 1, 2, 15, 0)) == dt.date(2026, 1, 2)
    assert parse_date("2026-01-02") == dt.date(2026, 1, 2)


def test_declination_of_a_batch_skips_missing_points():
    d = declination_deg([10.0, np.nan], [20.0, 30.0], dt.date(2026, 1, 1))
    assert np.isfinite(d.declination_deg[0]) and np.isnan(d.declination_deg[1])
