"""Ground reflections (profiler.reflection): the search on profiles, water, the demo lake link and its sheet."""

from __future__ import annotations

import json
import math
import types
from pathlib import Path

import numpy as np
import pytest

from profiler.errors import InputError
from profiler.reflection import (
    K_STEPS, ReflectionSettings, find_reflections, reflecting_surface, reflections_for_links, resolve_surface,
    sweep_k_values,
)

REPO = Path(__file__).resolve().parents[1]
EXAMPLES = REPO / "examples"


def _profiles(surface_rows: list[np.ndarray], d: float) -> types.SimpleNamespace:
    n = surface_rows[0].size
    x = np.linspace(0.0, d, n)
    return types.SimpleNamespace(
        distance_m=np.tile(x, (len(surface_rows), 1)), ground_m=np.array(surface_rows),
        clutter_m=np.zeros((len(surface_rows), n)), n_samples=np.full(len(surface_rows), n),
        length_m=np.full(len(surface_rows), d), valid=np.ones(len(surface_rows), dtype=bool),
        lat_deg=None, lon_deg=None)


def _run(rows, d=10_000.0, ha=40.0, hb=40.0, margin=10.0, **kw):
    p = _profiles(rows, d)
    n = len(rows)
    return reflections_for_links(p, np.full(n, ha), np.full(n, hb), 6.0, k=4 / 3, k_worst=2 / 3,
                                 fade_margin_db=np.full(n, margin), polarisation="horizontal",
                                 ground=kw.pop("ground", "land"), **kw)


def test_flat_smooth_rough_and_blocked_paths():
    n, d = 1001, 10_000.0
    x = np.linspace(0.0, d, n)
    flat = np.zeros(n)
    rough = 3.0 * np.sin(x / 40.0)  # metres of ripple every 250 m: rough at 6 GHz by Rayleigh
    hill = np.where(np.abs(x - 5000) < 600, 45.0, 0.0)  # blocks the rays to the middle and the direct ray too
    r = _run([flat, rough, hill], d=d)
    assert r.found().tolist() == [True, False, False]
    assert r.design.point_m[0] == pytest.approx(5000.0, abs=1.0)  # equal heights: the middle
    assert "rough" in r.record(1)["reason"]
    assert "blocks" in r.record(2)["reason"] or "no point" in r.record(2)["reason"]
    cols = r.columns()
    assert cols["reflection_point_km"][0] == pytest.approx(5.0, abs=1e-3)
    assert np.isnan(cols["reflection_point_km"][1]) and np.isnan(cols["reflection_swing_db"][2])


def test_a_ridge_beside_the_point_blocks_the_incident_ray():
    n, d = 2001, 10_000.0
    x = np.linspace(0.0, d, n)
    # A narrow wall at 2 km, high enough to cut the ray from a down to the water, not the direct ray.
    wall = np.where(np.abs(x - 2000) < 30, 25.0, 0.0)
    r = _run([wall], d=d, ha=40.0, hb=40.0)
    assert not r.design.found[0]


def test_water_mask_sets_a_flat_level_and_sea_level_option():
    ground = np.array([[5.0, 0.2, -0.3, 0.1, 7.0, 3.0, 3.4, 2.6, 9.0]])
    clutter = np.array([[0, 4.0, 0, 0, 0, 6.0, 0, 0, 0]])
    water = np.array([[False, False, False, False, False, True, True, True, False]])
    surface, mask = reflecting_surface(ground, clutter, np.array([9]), water, sea_level_water=True)
    assert mask[0].tolist() == [False, True, True, True, False, True, True, True, False]
    assert surface[0, 1:4].tolist() == [0.1, 0.1, 0.1]  # median of the run, clutter dropped
    assert surface[0, 5:8].tolist() == [3.0, 3.0, 3.0]
    assert surface[0, 0] == 5.0 and surface[0, 8] == 9.0


def test_water_reflects_as_water():
    n, d = 1001, 10_000.0
    flat = np.zeros(n)
    water = np.ones((1, n), dtype=bool)
    on_land = _run([flat], d=d)
    on_water = _run([flat], d=d, water=water)
    assert not on_land.design.over_water[0] and on_water.design.over_water[0]
    # Horizontal: |R_h| ~ 1 - 2 sin(psi) / sqrt(eps - 1), so water (eps ~ 70-80) reflects more than
    # average ground (22); vertical below the Brewster angle is the other way round (|R_v| ~ 1 - 2 sqrt(eps) sin(psi)).
    assert abs(on_water.design.fresnel[0]) > abs(on_land.design.fresnel[0])
    p = _profiles([flat], d)
    kw = dict(k=4 / 3, k_worst=2 / 3, fade_margin_db=[10.0], polarisation="vertical", ground="land")
    v_land = reflections_for_links(p, [40.0], [40.0], 6.0, **kw)
    v_water = reflections_for_links(p, [40.0], [40.0], 6.0, water=water, **kw)
    assert abs(v_water.design.fresnel[0]) < abs(v_land.design.fresnel[0])


def test_sweep_values_and_settings():
    ks = sweep_k_values(0.5, 10.0, (4 / 3, 2 / 3))
    assert ks[-1] == math.inf and ks[0] == 0.5 and 10.0 in ks
    assert set(K_STEPS) <= set(ks)
    assert sweep_k_values(1.0, 1.0) == (1.0, math.inf)
    for bad in [(2.0, 1.0), (0.0, 1.0), (1.0, math.inf), (math.nan, 2.0)]:
        with pytest.raises(InputError, match="empty"):
            sweep_k_values(*bad)
    with pytest.raises(InputError, match="reflection_k_min"):
        ReflectionSettings(k_min=True).validate()
    with pytest.raises(InputError, match="unknown ground type"):
        resolve_surface("marsh")
    assert resolve_surface(" Sea_Water ") == "sea-water"


def test_warning_only_when_the_swing_exceeds_the_margin():
    n, d = 1001, 10_000.0
    flat = np.zeros(n)
    big = _run([flat], d=d, margin=100.0)
    small = _run([flat], d=d, margin=1.0)
    assert big.warning(0) is None
    text = small.warning(0)
    assert text and "swings" in text and "space diversity" in text
    assert small.record(0)["swing_exceeds_fade_margin"]


def _link_json(path: Path, *extra: str) -> dict:
    from click.testing import CliRunner

    from profiler.cli.main import cli

    result = CliRunner().invoke(cli, ["link", str(path), "--json", *extra], catch_exceptions=False)
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


def test_demo_lake_link():
    r = _link_json(EXAMPLES / "demo-7-lake.toml")
    rf = r["reflection"]
    assert rf["found"] and rf["at_design_k"]["over_water"]
    at = rf["at_design_k"]
    # The point lies on the lake (flat at 112 m, from about 1.05 to 4.95 km on this path).
    assert 1.1 < at["point_km"] < 4.9 and at["surface_m"] == pytest.approx(112.0, abs=0.01)
    assert at["smooth_earth_point_km"] == pytest.approx(at["point_km"], abs=0.01)
    assert rf["swing_db"] > r["budget"]["fade_margin_db"] > 0
    assert any("ground reflection from water" in w for w in r["warnings"])
    assert 0.5 < rf["diversity"]["spacing_b_m"] < 10
    assert len(rf["curve"]["inverse_k"]) == len(rf["curve"]["level_change_db"]) > 100
    assert [s["k"] for s in rf["sweep"]][-1] == "infinity"
    # Without the water layer the lake reflects as the --ground type (land) and is not over water.
    dry = _link_json(EXAMPLES / "demo-7-lake.toml", "--ground", "land", "--water",
                     str(REPO / "data" / "demo" / "lake.gpkg"))
    assert dry["reflection"]["at_design_k"]["over_water"]
    sea = _link_json(EXAMPLES / "demo-7-lake.toml", "--ground", "sea-water")
    assert sea["reflection"]["inputs"]["water_type"] == "sea-water"
    assert sea["inputs"]["ground_relative_permittivity"] == 80.0  # smooth-earth part: as "sea"


def test_hill_paths_show_no_reflection():
    for name in ("demo-1-clear.toml", "demo-3-blocked.toml"):
        rf = _link_json(EXAMPLES / name)["reflection"]
        assert rf["found"] is False and rf["reason"]


def test_summary_lines():
    from profiler.io.report import format_link_summary

    text = format_link_summary(_link_json(EXAMPLES / "demo-7-lake.toml"))
    assert "reflection         from water" in text and "space diversity" in text
    none = format_link_summary(_link_json(EXAMPLES / "demo-1-clear.toml"))
    assert "reflection         none:" in none


def test_sheet_draws_rays_and_the_level_plot(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    from profiler.jobs import analyse_job, open_job_data, resolve_link_job
    from profiler.sheets.build import sheet_contents
    from profiler.sheets.page import render_page
    from profiler.sheets.style import RC_PARAMS

    job = resolve_link_job(str(EXAMPLES / "demo-7-lake.toml"), {})
    with open_job_data(job) as (model, surroundings):
        batch = analyse_job(job, model, surroundings)
        content = sheet_contents(batch, model, draw_map=False)[0]
    with matplotlib.rc_context(RC_PARAMS):
        fig = render_page(content)
        fig.canvas.draw()
        profile = max(fig.axes, key=lambda a: a.get_position().width * a.get_position().height)
        insets = [a for a in profile.child_axes]
        assert len(insets) == 1
        renderer = fig.canvas.get_renderer()
        inset_box = insets[0].get_window_extent(renderer)
        for text in profile.texts:  # the inset covers no label of the profile
            if text.get_visible() and text.get_text():
                assert not inset_box.overlaps(text.get_window_extent(renderer)), text.get_text()
        assert profile.get_window_extent(renderer).contains(inset_box.x0, inset_box.y0)
        assert any(line.get_color() == "#009E73" for line in profile.lines)


def test_water_layer_marks_the_lake():
    from profiler.reflection_water import read_water_layer

    layer = read_water_layer(str(REPO / "data" / "demo" / "lake.gpkg"))
    lat = np.array([[-30.529855, -30.52985, -30.40]])
    lon = np.array([[-20.994788, -20.9636, -20.90]])
    assert layer.mask(lat, lon).tolist() == [[False, True, False]]


def test_screening_columns_only_when_searched_and_equal_to_link(tmp_path):
    import pandas as pd
    from click.testing import CliRunner

    from profiler.cli.main import cli

    demo = REPO / "data" / "demo"
    base = ["screen", str(demo / "sites.csv"), "--dem", str(demo / "terrain.tif"), "--freq-ghz", "5.8",
            "--tx-power-dbm", "20", "--gain-a-dbi", "23", "--gain-b-dbi", "23", "--bandwidth-mhz", "20",
            "--required-snr-db", "15", "--workers", "1", "-q"]
    plain, searched = tmp_path / "plain.csv", tmp_path / "refl.csv"
    for out, extra in ((plain, []), (searched, ["--water", str(demo / "lake.gpkg")])):
        result = CliRunner().invoke(cli, base + extra + ["-o", str(out)], catch_exceptions=False)
        assert result.exit_code == 0, result.stderr
    p, s = pd.read_csv(plain), pd.read_csv(searched)
    cols = ["reflection_point_km", "reflection_swing_db", "over_water"]
    assert not set(cols) & set(p.columns)
    assert set(cols) <= set(s.columns)
    assert list(s.drop(columns=cols).columns) == list(p.columns)
    assert s["over_water"].sum() >= 1  # the pump house to the depot crosses the lake's edge
    row = s[((s.site_a == "Corrow Ridge Mast") & (s.site_b == "Dunmore Tank"))].iloc[0]
    link = _link_json(EXAMPLES / "demo-4-ridge.toml")["reflection"]
    assert row.reflection_point_km == pytest.approx(link["at_design_k"]["point_km"], abs=1e-3)
    assert row.reflection_swing_db == pytest.approx(link["swing_db"], abs=0.01)
