"""Properties of the reflection point (profiler.reflection), with hypothesis.

Sources: the mirror geometry of the reflection-point cubic (module docstring of
profiler.reflection): the point depends only on the two heights and the path,
so swapping the ends mirrors it, and it lies nearer the lower antenna.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings, strategies as st

from profiler.reflection import find_reflections, reflection_point_m

heights = st.floats(min_value=5.0, max_value=300.0)
lengths = st.floats(min_value=1_000.0, max_value=60_000.0)
ks = st.sampled_from([0.5, 2.0 / 3.0, 1.0, 4.0 / 3.0, 2.0, 10.0, math.inf])


def _has_point(h1: float, h2: float, d: float, k: float) -> bool:
    return bool(np.isfinite(reflection_point_m(h1, h2, d, k)))


@settings(max_examples=300, deadline=None)
@given(heights, heights, lengths, ks)
def test_swapping_the_ends_mirrors_the_point(h1, h2, d, k):
    p = reflection_point_m(h1, h2, d, k)
    q = reflection_point_m(h2, h1, d, k)
    if np.isfinite(p):
        assert abs(float(p) + float(q) - d) < 1e-6 * d


@settings(max_examples=300, deadline=None)
@given(heights, heights, lengths, ks, st.floats(min_value=0.5, max_value=50.0))
def test_raising_antenna_a_moves_the_point_away_from_it(h1, h2, d, k, rise):
    if not (_has_point(h1, h2, d, k) and _has_point(h1 + rise, h2, d, k)):
        return
    assert float(reflection_point_m(h1 + rise, h2, d, k)) > float(reflection_point_m(h1, h2, d, k))


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=10.0, max_value=80.0), st.floats(min_value=10.0, max_value=80.0),
       st.floats(min_value=3_000.0, max_value=20_000.0), ks, st.floats(min_value=0.0, max_value=200.0))
def test_profile_search_swapped_ends(ha, hb, d, k, level):
    # On a flat water profile the actual-profile search gives the same point measured from the other end.
    n = 801
    x = np.linspace(0.0, d, n)
    surface = np.full(n, level)

    def point(h1, h2):
        r = find_reflections(x[None, :], surface[None, :], np.array([n]), np.array([d]), np.array([level + h1]),
                             np.array([level + h2]), 6.0, k, None, "horizontal", "fresh-water")
        return float(r.point_m[0]) if r.found[0] else None

    p, q = point(ha, hb), point(hb, ha)
    assert (p is None) == (q is None)
    if p is not None:
        assert abs(p + q - d) < 1e-3 * d
        assert abs(p - float(reflection_point_m(ha, hb, d, k))) < 1e-3 * d
