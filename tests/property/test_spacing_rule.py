"""The sampling rule on random paths (hypothesis): reciprocal sample sets, no step coarser
than asked, counts within the caps or refused (issue 10 item 6, issue 11)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from profiler import profile
from profiler.errors import InputError
from profiler.geodesy import path_nodes, sample_counts, sample_paths

lats = st.floats(-89.0, 89.0)
lons = st.floats(-180.0, 180.0)
offsets_deg = st.floats(-0.6, 0.6)
spacings = st.floats(profile.MIN_SPACING_M, 50_000.0)


@st.composite
def paths(draw):
    lat_a, lon_a = draw(lats), draw(lons)
    lat_b = float(np.clip(lat_a + draw(offsets_deg), -89.5, 89.5))
    lon_b = lon_a + draw(offsets_deg)
    lon_b = float(lon_b - 360.0 if lon_b > 180.0 else lon_b + 360.0 if lon_b < -180.0 else lon_b)
    assume((lat_a, lon_a) != (lat_b, lon_b))
    return lat_a, lon_a, lat_b, lon_b


@settings(max_examples=150, deadline=None)
@given(paths(), spacings)
def test_swapping_the_ends_reverses_the_samples_exactly(path, spacing):
    lat_a, lon_a, lat_b, lon_b = path
    _, _, _, _, lines = sample_paths([lat_a], [lon_a], [lat_b], [lon_b], 1e9)
    spacing = max(spacing, lines.length_m[0] / 5000.0)  # keep each example small
    la, lo, da, na, la_lines = sample_paths([lat_a], [lon_a], [lat_b], [lon_b], spacing)
    lb, lob, db, nb, lb_lines = sample_paths([lat_b], [lon_b], [lat_a], [lon_a], spacing)
    assert na[0] == nb[0]
    n = int(na[0])
    np.testing.assert_array_equal(la[0, :n], lb[0, :n][::-1])
    np.testing.assert_array_equal(lo[0, :n], lob[0, :n][::-1])
    assert la_lines.length_m[0] == lb_lines.length_m[0]
    np.testing.assert_allclose(da[0, :n], la_lines.length_m[0] - db[0, :n][::-1], rtol=0, atol=1e-6)
    # Ends sit exactly on the sites, from either side.
    assert (la[0, 0], lo[0, 0], la[0, n - 1], lo[0, n - 1]) == (lat_a, lon_a, lat_b, lon_b)
    # The nodes behind the interpolation are one set too.
    oa, nla, nloa = path_nodes([lat_a], [lon_a], [lat_b], [lon_b])
    ob, nlb, nlob = path_nodes([lat_b], [lon_b], [lat_a], [lon_a])
    np.testing.assert_array_equal(nla, nlb)
    np.testing.assert_array_equal(nloa, nlob)


@settings(max_examples=150, deadline=None)
@given(paths(), spacings)
def test_no_step_is_coarser_than_the_spacing_asked(path, spacing):
    lat_a, lon_a, lat_b, lon_b = path
    _, _, _, _, lines = sample_paths([lat_a], [lon_a], [lat_b], [lon_b], 1e9)
    spacing = max(spacing, lines.length_m[0] / 5000.0)
    _, _, d, n, _ = sample_paths([lat_a], [lon_a], [lat_b], [lon_b], spacing)
    assume(lines.length_m[0] > 0.0)  # same place to the last bit: refused before sampling (input rules)
    steps = np.diff(d[0, : int(n[0])])
    assert n[0] >= 3
    assert steps.max() <= spacing * (1 + 1e-12) + 1e-9
    assert np.all(steps > 0)


@settings(max_examples=200, deadline=None)
@given(st.floats(1.0, 2.0e6), st.floats(profile.MIN_SPACING_M, 1.0e5))
def test_count_within_the_cap_or_refused(length_m, spacing):
    count = int(sample_counts(length_m, spacing))
    message = profile.sample_limit_problem("x - y", length_m, count, spacing)
    if count <= profile.MAX_SAMPLES_PER_PATH:
        assert message is None
    else:
        assert message is not None and "limit of" in message
        advised = float(message.split("spacing of at least ")[1].split(" m")[0])
        assert advised >= spacing and int(sample_counts(length_m, advised)) <= profile.MAX_SAMPLES_PER_PATH


@settings(max_examples=100, deadline=None)
@given(st.one_of(st.floats(-1e3, 1e6), st.sampled_from([float("nan"), float("inf"), -float("inf")])))
def test_spacing_under_one_centimetre_is_always_refused(spacing):
    if np.isfinite(spacing) and spacing >= profile.MIN_SPACING_M:
        assert profile.check_spacing_m(spacing) == spacing
    else:
        with pytest.raises(InputError, match="1 cm"):
            profile.check_spacing_m(spacing)
