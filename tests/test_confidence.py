"""profiler.confidence: the Monte Carlo checks of the issue (sources beside each)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm  # the reference library for the normal distribution

from profiler.confidence import (ConfidenceSettings, draw_path, k_distribution, path_seed, resolve_confidence)
from profiler.errors import InputError
from profiler.link_types import Criterion

FREQ = 5.8
L = 10_000.0
N = 201


def _flat(obstacle_m: float):
    """Flat ground at 0 m with one obstacle at mid-path; the distances and surface (m)."""
    d = np.linspace(0.0, L, N)
    s = np.zeros(N)
    s[N // 2] = obstacle_m
    return d, s


def _p(d, s, ha, hb, settings, follow=False, k=4 / 3, k_worst=2 / 3, sigma=2.0):
    draws = draw_path(d, s, None, L, ha, hb, FREQ, k, k_worst, sigma, settings, path_seed(settings.seed, 1, 2, 3, 4),
                      follow_a=follow, follow_b=follow)
    return float(np.mean(Criterion().met(draws.frac_design, draws.frac_worst))), draws


def _f1_mid() -> float:
    lam = 0.299792458 / FREQ
    return float(np.sqrt(lam * (L / 2) ** 2 / L))


def test_one_obstacle_independent_error_matches_the_normal_distribution():
    # P = Phi((c - 0.6 F1) / sigma), standard normal CDF (any statistics handbook; scipy.stats.norm).
    sigma = 2.0
    settings = ConfidenceSettings(draws=20_000, dem_error_corr_m=1e-6, antenna_error_m=0.0, vary_k=False)
    d, s = _flat(40.0)
    f1 = _f1_mid()
    bulge = (L / 2) ** 2 / (2 * 6_371_000.0 * 4 / 3)
    for clearance_m in (f1 * 0.6 - 1.5, f1 * 0.6, f1 * 0.6 + 2.0):
        h = 40.0 + bulge + clearance_m  # both antennas: the line at mid-path is h
        p, _ = _p(d, s, h, h, settings, sigma=sigma)
        expected = norm.cdf((clearance_m - 0.6 * f1) / sigma)
        mc_error = np.sqrt(expected * (1 - expected) / settings.draws)
        # the flat ground far below adds nothing; at the worst k the obstacle is still cleared (0 F1)
        assert abs(p - expected) < 4 * mc_error + 1e-3, (clearance_m, p, expected)


def test_zero_error_gives_zero_or_one():
    settings = ConfidenceSettings(draws=200, dem_error_m=0.0, antenna_error_m=0.0, vary_k=False)
    d, s = _flat(40.0)
    p_low, _ = _p(d, s, 45.0, 45.0, settings, sigma=0.0)
    p_high, _ = _p(d, s, 80.0, 80.0, settings, sigma=0.0)
    assert (p_low, p_high) == (0.0, 1.0)


def test_fully_correlated_error_shifts_the_whole_profile():
    # One error for the whole profile (L = inf): fixed antennas see the obstacle shifted by e, so
    # P = Phi(-shortfall / sigma) with shortfall = max over samples of (c F1 - clearance) (analytic).
    sigma = 3.0
    settings = ConfidenceSettings(draws=20_000, dem_error_corr_m=np.inf, antenna_error_m=0.0, vary_k=False)
    d, s = _flat(40.0)
    f1 = _f1_mid()
    bulge = (L / 2) ** 2 / (2 * 6_371_000.0 * 4 / 3)
    h = 40.0 + bulge + 0.6 * f1 + 1.0
    p, draws = _p(d, s, h, h, settings, sigma=sigma)
    assert np.allclose(draws.surface_m - s, (draws.surface_m - s)[:, :1])  # one shift per draw
    expected = norm.cdf(1.0 / sigma)
    assert abs(p - expected) < 4 * np.sqrt(expected * (1 - expected) / settings.draws)
    # Antennas standing on the ground move with it: the geometry is unchanged, P is the plain verdict.
    p_follow, _ = _p(d, s, h, h, settings, follow=True, sigma=sigma)
    assert p_follow == 1.0


def test_longer_correlation_moves_neighbouring_samples_together():
    # exp(-dx/L): the correlation of neighbours at dx = 50 m is exp(-0.1) for L = 500 m (AR(1) theory).
    d, s = _flat(0.0)
    settings = ConfidenceSettings(draws=20_000, dem_error_corr_m=500.0, antenna_error_m=0.0, vary_k=False)
    _, draws = _p(d, s, 100.0, 100.0, settings, sigma=1.0)
    e = draws.surface_m - s
    r = np.corrcoef(e[:, 50], e[:, 51])[0, 1]
    assert abs(r - np.exp(-50.0 / 500.0)) < 0.02
    r10 = np.corrcoef(e[:, 50], e[:, 60])[0, 1]
    assert abs(r10 - np.exp(-500.0 / 500.0)) < 0.03


def test_same_seed_same_numbers_and_another_seed_differs():
    d, s = _flat(40.0)
    a = _p(d, s, 60.0, 60.0, ConfidenceSettings(draws=500))[1]
    b = _p(d, s, 60.0, 60.0, ConfidenceSettings(draws=500))[1]
    c = _p(d, s, 60.0, 60.0, ConfidenceSettings(draws=500, seed=18))[1]
    assert np.array_equal(a.frac_design, b.frac_design) and np.array_equal(a.k, b.k)
    assert not np.array_equal(a.frac_design, c.frac_design)


def test_k_distribution_from_design_and_worst_k():
    # k = 157 / (157 + G) (ITU-R P.453, from memory): 4/3 is G = -39.2 N/km, 2/3 is G = +78.5 N/km.
    g50, gsig = k_distribution(4 / 3, 2 / 3)
    assert g50 == pytest.approx(-39.24, abs=0.05)
    assert gsig == pytest.approx((78.48 + 39.24) / norm.ppf(0.999), abs=0.05)


@pytest.mark.parametrize("opts, flag", [
    ({"dem_error_m": "-1"}, "dem_error_m"), ({"dem_error_m": "abc"}, "dem_error_m"),
    ({"dem_error_corr_m": "0"}, "dem_error_corr_m"), ({"draws": "10"}, "draws"), ({"draws": "1.5"}, "draws"),
    ({"antenna_error_m": "nan"}, "antenna_error_m"),
])
def test_bad_settings_name_the_setting(opts, flag):
    with pytest.raises(InputError) as info:
        resolve_confidence(opts)
    assert info.value.parameter == flag


def test_nothing_asked_means_no_confidence():
    assert resolve_confidence({}) is None
    assert resolve_confidence({"draws": "500"}).draws == 500
    assert resolve_confidence({"dem_error_corr_m": "inf"}).dem_error_corr_m == np.inf


def test_every_fetched_dataset_has_a_stated_accuracy():
    from profiler.confidence import DEM_ERROR_M
    from profiler.terrain_sources.datasets import DATASETS

    assert set(DEM_ERROR_M) == set(DATASETS)
    # sigma = LE90 / 1.645 for a Gaussian error (scipy.stats.norm.ppf(0.95) = 1.6449)
    assert DEM_ERROR_M["copernicus-30"][0] == pytest.approx(4.0 / norm.ppf(0.95), rel=1e-4)
    assert DEM_ERROR_M["srtm-1"][0] == pytest.approx(16.0 / norm.ppf(0.95), rel=1e-4)


def test_too_many_values_refused_and_diffraction_in_blocks(monkeypatch):
    import dataclasses

    from profiler import confidence as conf
    from profiler.jobs import analyse_job, open_job_data, resolve_link_job
    from tests.conftest import EXAMPLES

    job = resolve_link_job(str(EXAMPLES / "demo-2-grazing.toml"), {})
    with open_job_data(job) as (model, surroundings):
        batch = analyse_job(job, model, surroundings)
    s = ConfidenceSettings(draws=300)
    whole = conf.confidence_for_batch(batch, s)
    monkeypatch.setattr("profiler.profile.MAX_SAMPLES_PER_BATCH", 7 * int(batch.profiles.n_samples[0]))
    blocks = conf.confidence_for_batch(batch, s)  # 7 draws a call: the same numbers
    assert np.array_equal(whole.diffraction_db, blocks.diffraction_db)
    monkeypatch.setattr(conf, "MAX_DRAW_SAMPLES", 1000)
    with pytest.raises(InputError, match="coarser --spacing-m") as info:
        conf.confidence_for_batch(batch, s)
    assert info.value.parameter == "draws"
    skipped = conf.confidence_for_batch(dataclasses.replace(batch), s, skip_too_large=True)
    assert np.isnan(skipped.p_meets[0])
