"""Gases and availability inside the link engine (profiler.link with profiler.availability)."""

from __future__ import annotations

import numpy as np
import pytest
from rasterio.transform import from_origin

from profiler.availability import ClimateSettings
from profiler.budget import Radio
from profiler.link import Settings, Site, analyse_link, analyse_links
from profiler.losses.atmosphere import gaseous_specific_attenuation_db_km
from profiler.terrain import ElevationModel

RADIO_18 = Radio(freq_ghz=18.0, tx_power_dbm=18, gain_a_dbi=38, gain_b_dbi=38, bandwidth_mhz=28, required_snr_db=20)


@pytest.fixture
def plain(raster_factory):
    """Flat 100 m ground, 0.0005-degree cells around (46.0, 10.05)."""
    arr = np.full((200, 200), 100.0, dtype="float32")
    return ElevationModel([raster_factory("plain.tif", arr, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))])


A = Site("a", 46.0, 10.01, 30)
B = Site("b", 46.04, 10.09, 30)


def test_gases_follow_p676_at_both_k(plain):
    r = analyse_link(plain, A, B, RADIO_18).record(0)
    expected = gaseous_specific_attenuation_db_km(18.0) * r["distance_km"]  # ITU-R P.676-12 Annex 1, A = gamma d
    assert r["loss_db"]["gases"] == pytest.approx(expected, rel=1e-9)
    assert r["worst_case"]["loss_db"]["gases"] == r["loss_db"]["gases"]
    for block in (r, r["worst_case"]):
        loss = block["loss_db"]
        assert loss["total"] == pytest.approx(loss["free_space"] + loss["diffraction"] + loss["gases"])


def test_wetter_air_costs_more_at_23_ghz(plain):
    dry = Settings(climate=ClimateSettings(water_vapour_g_m3=2.0))
    wet = Settings(climate=ClimateSettings(water_vapour_g_m3=20.0))
    radio = Radio(freq_ghz=23.0)
    g_dry = analyse_link(plain, A, B, radio, dry).record(0)["loss_db"]["gases"]
    g_wet = analyse_link(plain, A, B, radio, wet).record(0)["loss_db"]["gases"]
    assert g_wet > 3 * g_dry


def test_availability_block(plain):
    r = analyse_link(plain, A, B, RADIO_18).record(0)
    av = r["availability"]
    assert av["estimated"] is True
    assert av["fade_margin_db"] == pytest.approx(r["budget"]["fade_margin_db"])
    rain, mp = av["rain"], av["multipath"]
    assert "rain outage only" in av["includes"]
    assert rain["outside_method_range"] is False
    assert av["availability_pct"] == pytest.approx(100 - rain["outage_pct"])  # rain only (P.530-17 2.4.1)
    assert rain["outage_min_per_year"] == pytest.approx(rain["outage_pct"] / 100 * 525_960)
    assert mp["average_year_min"] == pytest.approx(mp["average_year_pct"] / 100 * 525_960)
    assert mp["worst_month_pct"] >= mp["average_year_pct"]
    assert "performance" in mp["counts_against"] and "occurrence_factor_worst_month_pct" in mp
    assert av["target_availability_pct"] == 99.99
    assert av["meets_target"] == (av["availability_pct"] >= 99.99)
    assert av["required_fade_margin_db"] >= av["required_fade_margin_rain_only_db"] > 0
    assert av["rain"]["polarisation"] == "horizontal" and av["rain"]["tilt_deg"] == 0.0
    assert av["multipath"]["latitude_deg"] == pytest.approx(46.02)
    assert av["multipath"]["inclination_mrad"] == pytest.approx(0.0, abs=1e-9)
    assert any("default" in a for a in av["assumptions"])
    assert r["inputs"]["climate"]["rain_rate_mm_h"] == 42.0


def test_required_margin_is_consistent_with_outage(plain):
    # Raise the transmit power by exactly the shortfall: the link then meets its target.
    r = analyse_link(plain, A, B, RADIO_18).record(0)["availability"]
    shortfall = r["required_fade_margin_db"] - r["fade_margin_db"]
    radio = Radio(**{**RADIO_18.__dict__, "tx_power_dbm": RADIO_18.tx_power_dbm + shortfall + 1e-6})
    again = analyse_link(plain, A, B, radio).record(0)["availability"]
    assert again["meets_target"] is True
    assert again["rain"]["outage_pct"] + again["multipath"]["average_year_pct"] == pytest.approx(0.01, rel=1e-4)


def test_more_rain_less_availability(plain):
    avail = [
        analyse_link(plain, A, B, RADIO_18, Settings(climate=ClimateSettings(rain_rate_mm_h=rate))).record(0)[
            "availability"
        ]["availability_pct"]
        for rate in (60.0, 90.0, 120.0)
    ]
    assert avail[0] > avail[1] > avail[2]


def test_below_1_ghz_no_gases_and_no_availability(plain):
    r = analyse_link(plain, A, B, Radio(freq_ghz=0.9)).record(0)
    assert r["loss_db"]["gases"] == 0.0
    assert r["availability"]["estimated"] is False
    assert "1-100 GHz" in r["availability"]["reason"]


def test_short_low_band_hop_leaves_multipath_out(plain):
    radio = Radio(freq_ghz=2.4, gain_a_dbi=20, gain_b_dbi=20)
    r = analyse_link(plain, A, Site("near", 46.0, 10.03, 10), radio).record(0)["availability"]
    assert r["estimated"] is True
    assert r["multipath"]["estimated"] is False and r["multipath"]["average_year_pct"] is None
    assert "15/d" in r["multipath"]["reason"]
    assert any("15/d" in a for a in r["assumptions"])


def test_rain_beyond_the_method_is_a_bound_not_a_figure(plain):
    # ITU-R P.530-17 section 2.4.1: below 0.001 % eq. 34 turns (about 4.5e-6 % at 5.8 GHz);
    # a large margin reads "availability above 99.999 %", never 100 - 4.49e-6 %.
    radio = Radio(freq_ghz=5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23, bandwidth_mhz=20)
    av = analyse_link(plain, A, B, radio).record(0)["availability"]
    assert av["fade_margin_db"] > 10
    assert av["availability_pct"] is None and av["availability_above_pct"] == 99.999
    assert av["rain"]["outage_pct"] is None and av["rain"]["outage_below_pct"] == 0.001
    assert "outside" in av["rain"]["note"] and av["meets_target"] is True
    assert av["required_fade_margin_rain_below_range"] is True


def test_link_that_does_not_close_has_no_availability(plain):
    av = analyse_link(plain, A, B, Radio(freq_ghz=18.0)).record(0)["availability"]
    assert av["estimated"] is False and "does not close" in av["reason"]
    assert "meets_target" not in av


def test_batch_equals_single(plain):
    sites_b = [B, Site("b2", 46.03, 10.06, 20)]
    batch = analyse_links(plain, [A, A], sites_b, RADIO_18)
    for i, b in enumerate(sites_b):
        assert batch.record(i)["availability"] == analyse_link(plain, A, b, RADIO_18).record(0)["availability"]
