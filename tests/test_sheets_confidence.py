"""The sheet's confidence band and rows (profiler.sheets.confidence)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from profiler.confidence import ConfidenceSettings, confidence_for_batch
from profiler.jobs import analyse_job, open_job_data, resolve_link_job
from profiler.sheets.confidence import BAND_Z
from profiler.sheets.content import profile_drawing
from profiler.sheets.table import parameter_rows
from tests.conftest import EXAMPLES


@pytest.fixture(scope="module")
def grazing():
    job = resolve_link_job(str(EXAMPLES / "demo-2-grazing.toml"), {"draws": "200"})
    with open_job_data(job) as (model, surroundings):
        batch = analyse_job(job, model, surroundings)
    return batch


def _axes():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 4))
    FigureCanvasAgg(fig)
    return fig.add_subplot()


def test_band_is_the_ground_plus_minus_1645_sigma(grazing):
    from matplotlib.collections import PolyCollection

    from profiler.sheets.drawing import draw_profile

    rec = grazing.record(0)
    d = profile_drawing(grazing, 0)
    assert d.uncertainty_m is not None and np.allclose(d.uncertainty_m, 3.0)  # bare terrain: the DEM sigma
    ax = _axes()
    art = draw_profile(ax, d, rec)
    assert "terrain and clutter 5-95 %" in [p.get_label() for p in art.legend]
    bands = [c for c in ax.collections if isinstance(c, PolyCollection) and c.get_zorder() == 1.5]
    assert len(bands) == 1
    ys = bands[0].get_paths()[0].vertices[:, 1]
    ground = d.ground_m + d.bulge_m
    # 5 and 95 % points of a Gaussian error: +-1.645 sigma (scipy.stats.norm.ppf(0.95) = 1.6449).
    assert ys.max() == pytest.approx(np.max(ground) + BAND_Z * 3.0, abs=1e-6)
    assert ys.min() == pytest.approx(np.min(ground) - BAND_Z * 3.0, abs=1e-6)


def test_table_rows_give_the_probabilities(grazing):
    rec = grazing.record(0)
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["P(meets criterion)"].left == f"{100 * rec['confidence']['p_meets_criterion']:.1f} %"
    assert rows["P(line of sight)"].left == f"{100 * rec['confidence']['p_line_of_sight']:.1f} %"
    plain = dataclasses.replace(grazing, confidence=None)
    assert "P(meets criterion)" not in {r.label for r in parameter_rows(plain.record(0))}
    assert profile_drawing(plain, 0).uncertainty_m is None


def test_confidence_of_a_batch_equals_that_of_each_link_alone(grazing):
    # Seeded per link by its ends: the same link in a batch of three gives the same numbers.
    from profiler.heights import take_paths

    s = ConfidenceSettings(draws=200)
    alone = confidence_for_batch(grazing, s)
    three = dataclasses.replace(grazing, profiles=take_paths(grazing.profiles, np.array([0, 0, 0])),
                                names=grazing.names * 3, antenna_a_amsl_m=np.repeat(grazing.antenna_a_amsl_m, 3),
                                antenna_b_amsl_m=np.repeat(grazing.antenna_b_amsl_m, 3),
                                placements_a=None if grazing.placements_a is None else grazing.placements_a * 3,
                                placements_b=None if grazing.placements_b is None else grazing.placements_b * 3)
    many = confidence_for_batch(three, s, diffraction=False)
    assert np.all(many.p_meets == alone.p_meets[0]) and np.all(many.p_los == alone.p_los[0])


def test_an_elevation_error_the_raster_did_not_state_is_marked_assumed_on_the_sheet(grazing):
    from profiler.sheets.confidence import confidence_rows

    # The demo raster states no accuracy: the 3 m default stands in for it, and the sheet says so.
    rec = grazing.record(0)
    row = next(r for r in confidence_rows(rec) if r[0] == "Elevation error (1 sigma)")
    assert row[1] == "3 m (assumed)"
    given = resolve_link_job(str(EXAMPLES / "demo-2-grazing.toml"), {"draws": "200", "dem_error_m": "2"})
    with open_job_data(given) as (model, surroundings):
        rec2 = analyse_job(given, model, surroundings).record(0)
    row2 = next(r for r in confidence_rows(rec2) if r[0] == "Elevation error (1 sigma)")
    assert row2[1] == "2 m"
