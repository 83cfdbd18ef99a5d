"""One pair outside an availability model's range never sinks a link or a screening run.

ITU-R P.530-17 section 2.3.2 needs pt = p0 10^(-At/10) below 100 %; very long paths
or an extreme dN1 leave it.  Such a pair keeps its clearance, losses and budget, and
only its multipath figures read "not estimated" with the reason.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from rasterio.transform import from_origin

from profiler.availability import ClimateSettings
from profiler.budget import Radio
from profiler.errors import ModelValidityWarning
from profiler.io.sites import read_sites
from profiler.link import Settings, Site, analyse_link
from profiler.screening import screen
from profiler.terrain import ElevationModel


RADIO = Radio(6.0, tx_power_dbm=30, gain_a_dbi=45, gain_b_dbi=45, loss_a_db=1, loss_b_db=1)


@pytest.fixture
def wide(raster_factory):
    """Flat 50 m ground, 0.02-degree cells over 4 x 4 degrees around (45, 10)."""
    arr = np.full((200, 200), 50.0, dtype="float32")
    return ElevationModel([raster_factory("wide.tif", arr, transform=from_origin(8.0, 47.0, 0.02, 0.02))])


@pytest.mark.filterwarnings("ignore::profiler.errors.ModelValidityWarning")
def test_link_of_300_km_reports_clearance_and_budget_without_availability(wide):
    a, b = Site("west", 45.0, 8.2, 30), Site("east", 45.0, 12.0, 30)
    rec = analyse_link(wide, a, b, RADIO, Settings(spacing_m=2000.0)).record(0)
    assert rec["distance_km"] == pytest.approx(300, abs=2)
    assert math.isfinite(rec["clearance"]["worst_f1_fraction"]) and math.isfinite(rec["budget"]["fade_margin_db"])
    # 30 m masts on a 300 km path are far below the bulge: obstructed, so no availability (P.530-17 2.3, 2.4).
    assert rec["meets_criterion"] is False
    assert rec["availability"]["estimated"] is False and "clearance criterion" in rec["availability"]["reason"]


@pytest.mark.filterwarnings("ignore::profiler.errors.ModelValidityWarning")
def test_clear_200_km_link_with_extreme_dn1_keeps_rain_and_drops_multipath(raster_factory):
    # Two 1400 m summits with 400 m masts: antennas 1800 m up clear the bulge of a
    # 200 km path at k = 2/3 (about 1.2 km at mid-path) over 50 m plains.
    arr = np.full((200, 200), 50.0, dtype="float32")
    arr[:, 20:31] = 1400.0
    arr[:, 147:158] = 1400.0
    wide = ElevationModel([raster_factory("summits.tif", arr, transform=from_origin(8.0, 47.0, 0.02, 0.02))])
    a, b = Site("west", 45.0, 8.5, 400), Site("east", 45.0, 11.04, 400)
    climate = ClimateSettings(dn1_n_per_km=-2000.0)
    rec = analyse_link(wide, a, b, RADIO, Settings(spacing_m=2000.0, climate=climate)).record(0)
    assert rec["meets_criterion"] is True
    av = rec["availability"]
    assert av["estimated"] is True
    assert av["multipath"]["estimated"] is False and "too large" in av["multipath"]["reason"]
    assert av["multipath"]["worst_month_pct"] is None and av["multipath"]["average_year_pct"] is None
    assert av["rain"]["attenuation_001_db"] > 0
    assert any("multipath not estimated" in n for n in av["assumptions"])


def _flat_sites(path):
    """Three invented sites on flat ground, 100 m masts: S0-S1 8 km, S0-S2 40 km apart."""
    rows = ["name,lat,lon,antenna_agl_m", "S0,45.0,9.0,100", "S1,45.0,9.1017,100", "S2,45.0,9.5085,100"]
    path.write_text("\n".join(rows) + "\n")
    return path


def test_screening_with_a_pair_outside_the_multipath_method_completes_and_marks_it(tmp_path, raster_factory):
    import geopandas as gpd

    sites, bad = read_sites(_flat_sites(tmp_path / "sites.csv"))
    assert not bad
    # dN1 = -2000 N-units/km gives p0 above 1e5 % on the 40 km pair (ITU-R P.530-17 eq. 7),
    # outside section 2.3.2; the 8 km pair stays inside it.
    settings = Settings(climate=ClimateSettings(dn1_n_per_km=-2000.0))
    flat = raster_factory("flat.tif", np.full((100, 200), 50.0, dtype="float32"),
                          transform=from_origin(8.5, 45.5, 0.01, 0.01))
    with ElevationModel([flat]) as model, warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        summary = screen(sites, model, Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23), settings,
                         tmp_path / "r.gpkg", workers=1, chunk_pairs=2)
    assert summary.pairs == 3
    links = gpd.read_file(tmp_path / "r.gpkg", layer="links").set_index(["site_a", "site_b"])
    assert len(links) == 3 and (links["verdict"] != "error").all() and links["meets_criterion"].all()
    long, short = links.loc[("S0", "S2")], links.loc[("S0", "S1")]
    assert "multipath not estimated: the occurrence factor p0" in long["availability_note"]
    assert math.isnan(long["multipath_min_per_year"]) and math.isnan(long["multipath_worst_month_min"])
    assert math.isfinite(long["fade_margin_db"]) and math.isfinite(long["worst_f1_fraction"])
    assert bool(long["meets_availability"]) is True  # rain (availability) still estimated
    assert math.isfinite(short["multipath_min_per_year"]) and "multipath" not in short["availability_note"]
