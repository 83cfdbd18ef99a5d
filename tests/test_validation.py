"""The shared value rule (profiler/validation.py): numbers, ranges, positions, shortest path."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.errors import InputError
from profiler.validation import (
    LIMITS,
    check_k_pair,
    check_number,
    check_numbers,
    normalise_positions,
    position_problems,
    same_place_problem,
    too_close,
)


@pytest.mark.parametrize("value", [True, False, np.bool_(True)])
def test_booleans_are_not_numbers(value):
    with pytest.raises(InputError, match="must be a number"):
        check_number(value, "freq_ghz")


@pytest.mark.parametrize("value", [float("nan"), float("inf"), "-inf"])
def test_non_finite_values_are_refused(value):
    with pytest.raises(InputError, match="finite"):
        check_number(value, "tx_power_dbm", "--tx-power-dbm")


def test_text_numbers_and_ranges():
    assert check_number(" 5.8 ", "freq_ghz") == 5.8
    assert check_number(1000, "freq_ghz") == 1000.0  # the upper end is included
    with pytest.raises(InputError, match=r"^--freq-ghz: frequency \(freq_ghz\) must lie between 0.03 and 1000"):
        check_number(1000.5, "freq_ghz", "--freq-ghz")
    with pytest.raises(InputError, match="above 0 and at most"):
        check_number(0.0, "bandwidth_mhz")  # open at 0
    with pytest.raises(InputError, match="must be a number, got 'abc'"):
        check_number("abc", "nodata_fill_m")


def test_every_limit_states_a_reason_and_a_sane_range():
    for name, limit in LIMITS.items():
        assert limit.low < limit.high, name
        assert len(limit.reason) > 10, name


def test_k_worst_may_not_exceed_k():
    check_k_pair(4 / 3, 2 / 3)
    check_k_pair(1.0, 1.0)
    with pytest.raises(InputError, match="k_worst 1.333 is above k 0.6667"):
        check_k_pair(2 / 3, 4 / 3)


def test_check_numbers_gives_one_reason_per_bad_value():
    reasons = check_numbers([10.0, -1.0, np.nan, 2000.0], "antenna_agl_m")
    assert reasons[0] is None
    assert "between 0 and 1000" in reasons[1] and "-1" in reasons[1]
    assert "not a finite number" in reasons[2]
    assert "2000" in reasons[3]


def test_position_rule():
    reasons = position_problems([0, 91, 0, 0, np.nan], [0, 0, 360, 360.5, 0])
    assert reasons[0] is None and reasons[2] is None
    assert "latitude 91" in reasons[1]
    assert "longitude 360.5" in reasons[3]
    assert "finite" in reasons[4]


def test_normalisation_keeps_in_range_values_and_folds_the_rest():
    lat, lon = normalise_positions([10, 10, 10, 90, -90], [-180.0, 180.0, 180.05, 123.0, -7.0])
    assert lon[0] == -180.0 and lon[1] == 180.0  # both ends of the range stay as given
    assert lon[2] == pytest.approx(-179.95, abs=1e-12)
    assert lon[3] == 0.0 and lon[4] == 0.0  # every longitude is the same point at a pole


def test_same_place_written_differently():
    short, dist = too_close([10.05, 90.0, -90.0, 0.0, 0.0], [-179.95, 0.0, 10.0, 0.0, 0.0],
                            [10.05, 90.0, -90.0, 0.0, 0.0], [180.05, 45.0, -170.0, 1e-8, 2e-5])
    assert short.tolist() == [True, True, True, True, False]  # 1e-8 deg ~ 1 mm; 2e-5 deg ~ 2.2 m
    assert dist[3] == pytest.approx(1.113e-3, rel=1e-3)
    assert same_place_problem(0.0, 0.0, 0.0, 1e-8).endswith("a link needs at least 1 m)")
    assert same_place_problem(0.0, 0.0, 0.0, 1e-4) is None
