"""Climate from the ITU-R maps (--climate itu) and terrain roughness sa from the elevation data.

R0.01: ITU-R P.837-7; dN1: ITU-R P.453-13 (lowest 65 m, not exceeded 1 % of an
average year), both read through the itur 0.4.0 package; sa: ITU-R P.530-17
section 2.3.1 (110 km x 110 km at 30 arc-seconds).
"""

from __future__ import annotations

import math
import sys
import warnings

import numpy as np
import pytest
from pyproj import Geod
from rasterio.transform import from_origin

from profiler.budget import Radio
from profiler.climate import (ORIGIN_DEFAULT_UNCOVERED, ORIGIN_GIVEN, ORIGIN_P453, ORIGIN_P837, ORIGIN_TERRAIN,
                              ClimateSettings)
from profiler.climate_maps import (MISSING_EXTRA, ClimateSourceWarning, climate_for_paths, itu_dn1_n_per_km,
                                   itu_rain_rate_mm_h, path_centres, terrain_roughness_m)
from profiler.errors import InputError
from profiler.io.sites import read_sites
from profiler.link import Settings, Site, analyse_link
from profiler.screening import screen
from profiler.terrain import ElevationModel

itur = pytest.importorskip("itur")
from itur.models import itu453, itu837  # noqa: E402

#: Synthetic surface: 30-arc-second cells over 44.5-46.5 N, 6.5-9.5 E (cell centres on the global grid).
WEST, NORTH, STEP = 6.5, 46.5, 1.0 / 120.0
RADIO = Radio(11.0, tx_power_dbm=20, gain_a_dbi=38, gain_b_dbi=38)


@pytest.fixture
def surface(raster_factory):
    rng = np.random.default_rng(13)
    rows, cols = 240, 360
    ys, xs = np.mgrid[0:rows, 0:cols]
    arr = (100.0 + 40.0 * rng.random((rows, cols)) + 0.2 * xs - 0.1 * ys).astype("float32")
    path = raster_factory("surface.tif", arr, transform=from_origin(WEST, NORTH, STEP, STEP))
    return path, arr.astype(float)


def _expected_sa(arr: np.ndarray, lat_c: float, lon_c: float) -> float:
    """numpy standard deviation over the cells whose centres lie in the 110 km square (written apart)."""
    geod = Geod(ellps="WGS84")
    north = geod.fwd(lon_c, lat_c, 0.0, 55_000.0)[1]
    south = geod.fwd(lon_c, lat_c, 180.0, 55_000.0)[1]
    a, f = 6378137.0, 1 / 298.257223563
    e2 = f * (2 - f)
    n_radius = a / math.sqrt(1 - e2 * math.sin(math.radians(lat_c)) ** 2)
    half_lon = math.degrees(55_000.0 / (n_radius * math.cos(math.radians(lat_c))))
    centre_lat = NORTH - (np.arange(arr.shape[0]) + 0.5) * STEP
    centre_lon = WEST + (np.arange(arr.shape[1]) + 0.5) * STEP
    rows = (centre_lat >= south) & (centre_lat <= north)
    cols = (centre_lon >= lon_c - half_lon) & (centre_lon <= lon_c + half_lon)
    window = arr[rows][:, cols]
    assert 100 < window.shape[0] < 140 and 150 < window.shape[1] < 200  # about 110 km at 30"
    return float(np.std(window))


# --- reference: the maps through itur ------------------------------------------------------------

@pytest.mark.parametrize("lat, lon", [(45.5, 8.0), (-30.41, -20.95), (1.35, 103.8), (60.2, -150.0)])
def test_rain_rate_and_dn1_equal_itur_at_the_point(lat, lon):
    # ITU-R P.837-7 Annex 1 (R0.01) and ITU-R P.453-13 section 2.2 (dN1, lowest 65 m, 1 %), as itur 0.4.0 reads them.
    assert itu_rain_rate_mm_h(lat, lon)[0] == pytest.approx(float(itu837.rainfall_rate(lat, lon, 0.01).value),
                                                            rel=1e-12)
    assert itu_dn1_n_per_km(lat, lon)[0] == pytest.approx(float(itu453.DN65(lat, lon, 1).value), rel=1e-12)


def test_map_look_ups_are_vectorised():
    lat, lon = np.array([45.5, 1.35, -33.9]), np.array([8.0, 103.8, 151.2])
    rain, dn1 = itu_rain_rate_mm_h(lat, lon), itu_dn1_n_per_km(lat, lon)
    assert rain.shape == dn1.shape == (3,)
    assert rain[1] > 80.0 > rain[0]  # Singapore's tropical rain against northern Italy's
    assert np.all(dn1 < 0.0)


def test_link_with_itu_climate_uses_the_maps_at_the_path_centre(surface):
    path, _ = surface
    a, b = Site("A", 45.45, 7.95, 60.0), Site("B", 45.55, 8.08, 60.0)
    lat_c, lon_c = Geod(ellps="WGS84").npts(a.lon_deg, a.lat_deg, b.lon_deg, b.lat_deg, 1)[0][::-1]
    with ElevationModel([path]) as model:
        rec = analyse_link(model, a, b, RADIO, Settings(climate=ClimateSettings(source="itu"))).record(0)
    clim = rec["inputs"]["climate"]
    assert clim["rain_rate_mm_h"] == pytest.approx(float(itu837.rainfall_rate(lat_c, lon_c, 0.01).value), rel=1e-6)
    assert clim["dn1_n_per_km"] == pytest.approx(float(itu453.DN65(lat_c, lon_c, 1).value), rel=1e-6)
    assert clim["sources"]["rain_rate_mm_h"] == ORIGIN_P837
    assert clim["sources"]["dn1_n_per_km"] == ORIGIN_P453
    assert clim["sources"]["terrain_roughness_m"] == ORIGIN_TERRAIN
    assert clim["sources"]["target_availability_pct"] == "default"
    av = rec["availability"]
    assert av["rain"]["rain_rate_mm_h"] == clim["rain_rate_mm_h"]
    assert av["multipath"]["dn1_n_per_km"] == clim["dn1_n_per_km"]
    assert any("ITU-R P.837-7 map" in line for line in av["assumptions"])


# --- sa from the elevation data ------------------------------------------------------------------

@pytest.mark.parametrize("lat_c, lon_c", [(45.5, 8.0), (45.31, 7.42), (45.77, 8.61)])
def test_sa_equals_the_numpy_standard_deviation_over_the_window(surface, lat_c, lon_c):
    path, arr = surface
    with ElevationModel([path]) as model:
        sa, covered = terrain_roughness_m(model, [lat_c], [lon_c])
    assert covered[0]
    assert sa[0] == pytest.approx(_expected_sa(arr, lat_c, lon_c), rel=1e-9)


def test_sa_of_many_paths_at_once_equals_each_alone(surface):
    path, _ = surface
    lat = np.array([45.5, 45.31, 45.77, 45.52, 45.1])
    lon = np.array([8.0, 7.42, 8.61, 7.2, 8.3])
    with ElevationModel([path]) as model:
        together, _ = terrain_roughness_m(model, lat, lon)
        alone = [terrain_roughness_m(model, [la], [lo])[0][0] for la, lo in zip(lat, lon)]
    np.testing.assert_allclose(together, alone, rtol=1e-12)


def test_sa_outside_the_rasters_falls_back_to_the_default_with_a_warning(surface):
    path, _ = surface
    with ElevationModel([path]) as model:
        sa, covered = terrain_roughness_m(model, [45.5, 46.3], [8.0, 8.0])  # the second square runs past 46.5 N
        assert covered.tolist() == [True, False] and math.isnan(sa[1])
        with pytest.warns(ClimateSourceWarning, match="do not cover the 110 km x 110 km area around 1 of 2"):
            values = climate_for_paths(ClimateSettings(source="itu"), model, [45.45, 46.25], [7.95, 7.95],
                                       [45.55, 46.35], [8.05, 8.05])
    assert values.terrain_roughness_m[1] == 40.0 and values.sa_origin(1) == ORIGIN_DEFAULT_UNCOVERED
    assert values.sa_origin(0) == ORIGIN_TERRAIN and values.terrain_roughness_m[0] != 40.0


# --- precedence: given > itu > default --------------------------------------------------------------

def test_given_values_win_over_the_maps_and_the_terrain(surface):
    path, _ = surface
    settings = ClimateSettings(rain_rate_mm_h=33.0, terrain_roughness_m=12.0, source="itu",
                               given=frozenset({"rain_rate_mm_h", "terrain_roughness_m"}))
    with ElevationModel([path]) as model:
        values = climate_for_paths(settings, model, [45.45], [7.95], [45.55], [8.05])
    lat_c, lon_c = path_centres([45.45], [7.95], [45.55], [8.05])
    assert values.rain_rate_mm_h[0] == 33.0 and values.rain_origin == ORIGIN_GIVEN
    assert values.terrain_roughness_m[0] == 12.0 and values.sa_origin(0) == ORIGIN_GIVEN
    assert values.dn1_n_per_km[0] == pytest.approx(float(itu453.DN65(lat_c[0], lon_c[0], 1).value))
    assert values.dn1_origin == ORIGIN_P453


def test_default_source_keeps_the_defaults_and_the_old_inputs():
    settings = ClimateSettings()
    assert settings.source == "default"
    assert "sources" not in settings.as_dict() and "source" not in settings.as_dict()


def test_resolve_climate_takes_flag_over_link_file():
    from profiler.jobs import resolve_climate

    assert resolve_climate({"source": "itu"}, {}).source == "itu"
    assert resolve_climate({"source": "itu"}, {"climate": "default"}).source == "default"
    assert resolve_climate({}, {"climate": "ITU"}).source == "itu"
    with pytest.raises(InputError, match="must be one of default, itu"):
        resolve_climate({"source": "maps"}, {})


# --- the optional extra ----------------------------------------------------------------------------

def test_missing_itur_gives_one_line_naming_the_extra(monkeypatch):
    for name in [m for m in sys.modules if m == "itur" or m.startswith("itur.")]:
        monkeypatch.delitem(sys.modules, name)
    monkeypatch.setitem(sys.modules, "itur", None)  # import itur now raises ImportError
    with pytest.raises(InputError) as info:
        itu_rain_rate_mm_h(45.0, 8.0)
    assert str(info.value) == MISSING_EXTRA
    assert "pip install 'terrahop[climate]'" in str(info.value) and "\n" not in str(info.value)


def test_cli_import_does_not_load_itur():
    import subprocess

    code = "import sys, profiler.cli.main, profiler.climate_maps; print('itur' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


# --- screening: one look-up per pair ---------------------------------------------------------------

def test_screening_with_itu_climate_gives_each_pair_its_own_values(tmp_path, surface):
    import geopandas as gpd

    path, _ = surface
    rows = ["name,lat,lon,antenna_agl_m", "S0,45.40,7.60,150", "S1,45.48,7.72,150", "S2,45.70,8.40,150",
            "S3,45.62,8.52,150"]
    (tmp_path / "sites.csv").write_text("\n".join(rows) + "\n")
    sites, bad = read_sites(tmp_path / "sites.csv")
    assert not bad
    settings = Settings(climate=ClimateSettings(source="itu"))
    with ElevationModel([path]) as model, warnings.catch_warnings():
        warnings.simplefilter("ignore")
        screen(sites, model, RADIO, settings, tmp_path / "r.gpkg", workers=1, chunk_pairs=4)
        links = gpd.read_file(tmp_path / "r.gpkg", layer="links").set_index(["site_a", "site_b"])
        checked = 0
        for (name_a, name_b), row in links.iterrows():
            ia, ib = list(sites.names).index(name_a), list(sites.names).index(name_b)
            a = Site(name_a, float(sites.lat_deg[ia]), float(sites.lon_deg[ia]), 150.0)
            b = Site(name_b, float(sites.lat_deg[ib]), float(sites.lon_deg[ib]), 150.0)
            rec = analyse_link(model, a, b, RADIO, settings).record(0)
            if not rec["availability"]["estimated"]:
                continue
            mp = rec["availability"]["multipath"]["average_year_min"]
            assert row["multipath_min_per_year"] == pytest.approx(mp, rel=1e-9)
            rain = rec["availability"]["rain"]["outage_min_per_year"]
            if rain is None:
                assert math.isnan(row["rain_outage_min_per_year"])
            else:
                assert row["rain_outage_min_per_year"] == pytest.approx(rain, rel=1e-9)
            checked += 1
    assert checked >= 4
    # Pairs far apart get different maps' values, so the per-pair figures differ from one shared climate.
    near, far = links.loc[("S0", "S1")], links.loc[("S2", "S3")]
    assert near["multipath_min_per_year"] != far["multipath_min_per_year"]


def test_link_file_climate_source_is_read(tmp_path, surface):
    from profiler.jobs import resolve_link_job

    path, _ = surface
    link = tmp_path / "l.toml"
    link.write_text(f'[terrain]\nrasters = ["{path}"]\n[site_a]\nlat = 45.45\nlon = 7.95\n'
                    '[site_b]\nlat = 45.55\nlon = 8.05\n[radio]\nfreq_ghz = 11\n'
                    '[climate]\nsource = "itu"\ndn1_n_per_km = -300\n')
    job = resolve_link_job(str(link))
    assert job.settings.climate.source == "itu"
    with ElevationModel([path]) as model:
        rec = analyse_link(model, job.site_a, job.site_b, RADIO, job.settings).record(0)
    assert rec["inputs"]["climate"]["dn1_n_per_km"] == -300.0
    assert rec["inputs"]["climate"]["sources"]["dn1_n_per_km"] == ORIGIN_GIVEN
    assert rec["inputs"]["climate"]["sources"]["rain_rate_mm_h"] == ORIGIN_P837
