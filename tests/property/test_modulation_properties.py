"""Invariants of adaptive modulation (hypothesis): more margin never picks a lower step, and the share
of the year at or above a step never grows with the step."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from profiler.availability import ClimateSettings
from profiler.equipment.modulation import highest_closing_step, step_margins_db, step_shares

snr = st.floats(-20.0, 120.0)
steps = st.lists(st.floats(0.5, 6.0), min_size=1, max_size=10)  # rises in required SNR
power_drops = st.lists(st.floats(0.0, 3.0), min_size=10, max_size=10)


def _table(rises, drops):
    required = np.cumsum(rises) - 5.0
    offsets = -np.cumsum([0.0, *drops[: len(rises) - 1]])
    return offsets, required


@given(snr, st.floats(0.0, 40.0), steps, power_drops, st.floats(-5.0, 30.0))
def test_more_margin_never_picks_a_lower_step(s, extra, rises, drops, need):
    offsets, required = _table(rises, drops)
    low = highest_closing_step(step_margins_db([s], offsets, required), need)[0]
    high = highest_closing_step(step_margins_db([s + extra], offsets, required), need)[0]
    assert high >= low


@settings(max_examples=60, deadline=None)
@given(snr, steps, power_drops, st.floats(1.0, 60.0), st.floats(6.0, 40.0), st.floats(5.0, 120.0))
def test_share_of_year_never_grows_with_the_step(s, rises, drops, length_km, freq, rain):
    offsets, required = _table(rises, drops)
    margins = step_margins_db([s], offsets, required)
    shares = step_shares(margins, length_km * 1000.0, freq, 100.0, 150.0, -30.0, True,
                         ClimateSettings(rain_rate_mm_h=rain))
    for lo, hi in ((shares.low_pct[0], shares.low_pct[0]), (shares.high_pct[0], shares.high_pct[0])):
        known = ~np.isnan(lo)
        values = lo[known]
        assert np.all(np.diff(values) <= 1e-12), values
    pct = shares.pct[0]
    figures = pct[~np.isnan(pct)]
    assert np.all(np.diff(figures) <= 1e-12)
