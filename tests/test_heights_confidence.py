"""heights.solve_heights_with_confidence against a brute-force search with the same draws."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.confidence import ConfidenceSettings, p_meets_at
from profiler.heights import solve_heights, solve_heights_with_confidence
from profiler.jobs import analyse_job, open_job_data, resolve_link_job
from tests.conftest import EXAMPLES


@pytest.fixture(scope="module")
def grazing():
    job = resolve_link_job(str(EXAMPLES / "demo-2-grazing.toml"), {})
    with open_job_data(job) as (model, surroundings):
        return analyse_job(job, model, surroundings)


@pytest.mark.parametrize("level", [0.3, 0.7])
def test_solve_b_equals_the_brute_force_least_height(grazing, level):
    s = ConfidenceSettings(draws=200)
    sol = solve_heights_with_confidence(grazing, level, s, solve="b", max_mast_b_m=50.0)
    base_b = float(grazing.ground_b_m[0])
    heights = np.arange(0.0, 51.0)
    offsets = np.column_stack([np.zeros_like(heights), base_b + heights - float(grazing.antenna_b_amsl_m[0])])
    p = p_meets_at(grazing, 0, s, offsets)
    assert np.all(np.diff(p) >= 0)  # never falls as the mast rises
    least = heights[np.argmax(p >= level)]
    assert sol.chosen.antenna_b_m == least
    assert sol.chosen.p_meets == p[int(least)]
    assert sol.one_step_lower[0].p_meets == p[int(least) - 1] < level


def test_both_ends_taller_than_the_plain_solver_and_least_by_sum(grazing):
    s = ConfidenceSettings(draws=200)
    plain = solve_heights(grazing, solve="both", max_mast_a_m=40.0, max_mast_b_m=40.0)
    sure = solve_heights_with_confidence(grazing, 0.9, s, solve="both", max_mast_a_m=40.0, max_mast_b_m=40.0)
    assert sure.chosen.sum_m > plain.chosen.sum_m
    assert sure.chosen.p_meets >= 0.9
    assert all(p.p_meets < 0.9 for p in sure.one_step_lower)
    assert all(p.p_meets >= 0.9 and p.sum_m >= sure.chosen.sum_m for p in sure.pairs)


def test_default_settings_and_a_bad_level(grazing):
    from profiler.errors import InputError

    sol = solve_heights_with_confidence(grazing, 0.5, None, solve="b", max_mast_b_m=60.0)
    assert sol.chosen.p_meets >= 0.5
    with pytest.raises(InputError) as info:
        solve_heights_with_confidence(grazing, 1.0, None)
    assert info.value.parameter == "confidence"
