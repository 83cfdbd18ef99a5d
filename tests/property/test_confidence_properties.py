"""Hypothesis: the probability of meeting the criterion never falls when a mast rises (same draws)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings, strategies as st

from profiler.confidence import ConfidenceSettings, draw_path, path_seed
from profiler.link_types import Criterion


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**31), top=st.floats(0.0, 60.0), ha=st.floats(5.0, 80.0), hb=st.floats(5.0, 80.0),
       rise=st.floats(0.0, 20.0), corr=st.sampled_from([50.0, 500.0, 1e5]), sigma=st.floats(0.0, 10.0))
def test_probability_never_falls_when_a_mast_rises(seed, top, ha, hb, rise, corr, sigma):
    rng = np.random.default_rng(seed)
    d = np.linspace(0.0, 8_000.0, 81)
    s = rng.uniform(0.0, top, d.size)
    conf = ConfidenceSettings(draws=200, seed=seed, dem_error_corr_m=corr)

    def p(offsets):
        dr = draw_path(d, s, None, 8_000.0, ha, hb, 5.8, 4 / 3, 2 / 3, sigma, conf, path_seed(seed, 0, 0, 1, 1),
                       height_offsets_m=offsets)
        return float(np.mean(Criterion().met(dr.frac_design, dr.frac_worst)))

    base = p((0.0, 0.0))
    assert p((rise, 0.0)) >= base
    assert p((0.0, rise)) >= base
