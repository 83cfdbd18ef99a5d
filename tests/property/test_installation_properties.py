"""Properties of the tilt angle (profiler.equipment.installation.tilt_deg)."""

from __future__ import annotations

import numpy as np
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from profiler.equipment.installation import tilt_deg

distance = st.floats(100.0, 150_000.0)
height = st.floats(-400.0, 5000.0)
k_value = st.floats(0.1, 100.0)


@settings(max_examples=200, deadline=None)
@given(distance, height, height, st.floats(0.0, 500.0), k_value)
def test_raising_the_far_antenna_never_lowers_the_tilt_toward_it(d, ha, hb, rise, k):
    assert tilt_deg(d, ha, hb + rise, k) >= tilt_deg(d, ha, hb, k)


@settings(max_examples=200, deadline=None)
@given(distance, height, height, k_value, k_value)
def test_tilt_at_a_larger_k_is_never_lower(d, ha, hb, k1, k2):
    """Holds unless the ray drops steeply to a far antenna high above the datum: with the distance
    measured along the surface, the horizontal leg r_b sin(theta) ~ d (1 + h_b / (k a)) grows as k
    shrinks, which outweighs the curvature when (h_a - h_b) h_b > d^2 / 2 (first-order expansion of
    the triangle formula; also for an antenna below the datum dropping to one lower still, where both
    factors are negative); such cases are left out."""
    lo, hi = min(k1, k2), max(k1, k2)
    assume((ha - hb) * hb <= d * d / 4.0)  # the adverse product, whatever the signs (heights may be below 0)
    assert tilt_deg(d, ha, hb, hi) >= tilt_deg(d, ha, hb, lo)


@settings(max_examples=200, deadline=None)
@given(distance, height, height, k_value)
def test_the_two_tilts_sum_to_minus_the_central_angle(d, ha, hb, k):
    """Angles of the triangle centre-a-b: (90 + ta) + (90 + tb) + theta = 180, so ta + tb = -theta."""
    theta = np.degrees(d / (k * 6_371_000.0))
    total = float(tilt_deg(d, ha, hb, k) + tilt_deg(d, hb, ha, k))
    assert np.isclose(total, -theta, atol=1e-12, rtol=1e-9)
