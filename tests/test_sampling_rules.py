"""The spacing rule and sample caps (issue 11): coarse spacing warned, sub-centimetre refused,
samples per path and per batch capped with a message a planner can act on."""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest
from rasterio.transform import from_origin

from profiler import profile, screening
from profiler.budget import Radio
from profiler.errors import InputError
from profiler.link import Settings, Site, analyse_link
from profiler.profile import MAX_SAMPLES_PER_BATCH, MAX_SAMPLES_PER_PATH, build_profiles
from profiler.terrain import ElevationModel
from tests.conftest import DEMO_DEM, REPO

RADIO = Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23)
A, B = Site("west", 46.02, 10.01, 10), Site("east", 46.02, 10.09, 10)


@pytest.fixture
def ridge(raster_factory):
    """Flat 100 m ground with a north-south ridge of 300 m, 4 cells (about 155 m) wide, at 10.05 E."""
    arr = np.full((200, 200), 100.0, dtype="float32")
    arr[:, 98:102] = 300.0
    return ElevationModel([raster_factory("ridge.tif", arr, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))])


def test_a_spacing_coarser_than_the_raster_is_warned_and_recorded(ridge):
    coarse = analyse_link(ridge, A, B, RADIO, Settings(spacing_m=2500.0)).record(0)  # 4 samples
    fine = analyse_link(ridge, A, B, RADIO).record(0)
    # The coarse samples step over the ridge: the figures alone would read clear.
    assert coarse["loss_db"]["diffraction"] == 0.0 and fine["loss_db"]["diffraction"] > 10.0
    cell = ridge.cell_size_m(10.09, 46.02)
    inputs = coarse["inputs"]
    assert inputs["spacing_coarser_than_raster"] is True
    assert inputs["sample_spacing_source"] == "given"
    assert inputs["finest_cell_m"] == pytest.approx(min(cell, ridge.cell_size_m(10.01, 46.02)), rel=1e-9)
    assert inputs["recommended_spacing_m"] == pytest.approx(inputs["finest_cell_m"] / 2.0)
    assert any("coarser than the finest raster cell" in w and "recommended spacing" in w
               for w in coarse["warnings"])
    assert fine["inputs"]["spacing_coarser_than_raster"] is False
    assert fine["inputs"]["sample_spacing_source"] == "default"
    assert not any("coarser than the finest" in w for w in fine["warnings"])


def test_a_spacing_at_or_under_one_cell_is_not_warned(ridge):
    cell = min(ridge.cell_size_m(10.01, 46.02), ridge.cell_size_m(10.09, 46.02))
    r = analyse_link(ridge, A, B, RADIO, Settings(spacing_m=cell * 0.99)).record(0)
    assert r["inputs"]["spacing_coarser_than_raster"] is False


@pytest.mark.parametrize("spacing", [1e-9, 1e-4, 0.0099, 0.0, -1.0, float("nan"), float("inf")])
def test_spacing_under_one_centimetre_or_not_finite_is_refused(ridge, spacing):
    with pytest.raises(InputError, match="1 cm"):
        Settings(spacing_m=spacing).validate()
    with pytest.raises(InputError, match="1 cm"):
        build_profiles(ridge, [A.lat_deg], [A.lon_deg], [B.lat_deg], [B.lon_deg], spacing_m=spacing)


def test_one_centimetre_is_accepted(ridge):
    p = build_profiles(ridge, [46.02], [10.01], [46.02], [10.0101], spacing_m=0.01)
    assert p.n_samples[0] == int(np.ceil(p.length_m[0] / 0.01)) + 1


def test_a_path_over_the_sample_cap_is_refused_before_allocating(ridge, monkeypatch):
    # 6.2 km at 1 cm would need 620,000 samples; with the cap lowered the refusal names the fix.
    monkeypatch.setattr(profile, "MAX_SAMPLES_PER_PATH", 100_000)
    with pytest.raises(InputError) as err:
        analyse_link(ridge, A, B, RADIO, Settings(spacing_m=0.01))
    msg = str(err.value)
    assert "west - east" in msg and "limit of 100,000 per path" in msg and "spacing of at least" in msg
    # The advised spacing does fit under the cap.
    advised = float(msg.split("spacing of at least ")[1].split(" m")[0])
    assert np.ceil(6200.0 / advised) + 1 <= 100_000 * 1.01


def test_the_default_caps_hold_a_100_km_path_at_10_cm():
    assert MAX_SAMPLES_PER_PATH >= 100_000 / 0.1 and MAX_SAMPLES_PER_BATCH >= MAX_SAMPLES_PER_PATH


def test_a_batch_over_the_total_cap_is_refused(ridge, monkeypatch):
    monkeypatch.setattr(profile, "MAX_SAMPLES_PER_BATCH", 10_000)
    n = 5
    with pytest.raises(InputError, match="analyse fewer links at a time"):
        build_profiles(ridge, [46.02] * n, [10.01] * n, [46.02] * n, [10.09] * n, spacing_m=1.0)


def test_screening_flags_a_pair_over_the_cap_and_goes_on(ridge, monkeypatch):
    monkeypatch.setattr(profile, "MAX_SAMPLES_PER_PATH", 2_000)
    settings = Settings(spacing_m=2.0)  # 6.2 km -> 3,100 samples (over); 1.5 km -> 770 (under)
    names = np.array(["w", "e", "m"], dtype=object)
    task = screening.ChunkTask(
        first_pair=10, a=np.array([0, 0]), b=np.array([1, 2]), names_a=names[[0, 0]], names_b=names[[1, 2]],
        lat_a=np.array([46.02, 46.02]), lon_a=np.array([10.01, 10.01]),
        lat_b=np.array([46.02, 46.02]), lon_b=np.array([10.09, 10.03]),
        agl_a=np.array([10.0, 10.0]), agl_b=np.array([10.0, 10.0]), gain_a=None, gain_b=None,
        radio=RADIO, settings=dataclasses.replace(settings))
    cols, problems = screening.evaluate_chunk(ridge, task)
    assert [p for p, _ in problems] == [10]
    assert "w - e" in problems[0][1] and "limit of 2,000 per path" in problems[0][1]
    assert cols["status"].tolist() == [1, 0]
    assert np.isfinite(cols["fade_margin_db"][1])


def test_screening_warns_once_when_the_given_spacing_is_coarser_than_the_raster(tmp_path):
    from profiler.io.sites import read_sites
    from tests._screening_data import DEMO_SITES

    sites, _ = read_sites(DEMO_SITES)
    sites_few = screening.pairs.drop_sites(sites, screening.PairPlan(), np.arange(len(sites)) < 3)[0]
    with ElevationModel([DEMO_DEM]) as model:
        coarse = screening.screen(sites_few, model, RADIO, Settings(spacing_m=60.0), tmp_path / "c.gpkg", workers=1)
        fine = screening.screen(sites_few, model, RADIO, Settings(spacing_m=20.0), tmp_path / "f.gpkg", workers=1)
    assert len(coarse.warnings) == 1
    assert "60 m is coarser than the finest raster cell at the sites (25 m)" in coarse.warnings[0]
    assert "recommended spacing 12.5 m" in coarse.warnings[0]
    assert fine.warnings == ()


def test_a_surface_model_finer_than_the_terrain_sets_the_warning(cli):
    # Demo town: terrain cells 25 m, surface model 2 m; 10 m spacing is fine for the terrain only.
    args = ["link", "--dem", str(DEMO_DEM), "--surface", str(REPO / "data" / "demo" / "town-surface.tif"),
            "--site-a", "-30.535178,-20.845193", "--site-b", "-30.534618,-20.830600",
            "--agl-a", "23", "--agl-b", "23", "--freq-ghz", "5.8", "--json"]
    r = json.loads(cli(*args, "--spacing-m", "10").stdout)
    assert r["inputs"]["finest_cell_m"] == pytest.approx(2.0, rel=0.01)
    assert r["inputs"]["spacing_coarser_than_raster"] is True
    assert any("recommended spacing 1 m" in w for w in r["warnings"])
    r = json.loads(cli(*args).stdout)  # default: half the surface model's cell, no warning
    assert r["inputs"]["sample_spacing_m"] == pytest.approx(1.0, rel=0.01)
    assert r["inputs"]["spacing_coarser_than_raster"] is False
