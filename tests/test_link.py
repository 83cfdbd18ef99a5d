import numpy as np
import pytest
from rasterio.transform import from_origin

from profiler.budget import Radio
from profiler.errors import DataError, InputError
from profiler.link import Settings, Site, analyse_link, analyse_links
from profiler.losses.free_space import free_space_loss_db
from profiler.terrain import ElevationModel

RADIO = Radio(freq_ghz=5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)


@pytest.fixture
def ridge(raster_factory):
    """Flat 100 m ground with a north-south ridge of 200 m at longitude 10.05 (0.0005-degree cells)."""
    arr = np.full((200, 200), 100.0, dtype="float32")
    arr[:, 98:102] = 300.0
    return ElevationModel([raster_factory("ridge.tif", arr, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))])


def test_clear_path_has_free_space_loss_only(ridge):
    a = Site("west", 46.0, 10.01, 10)
    b = Site("west2", 46.02, 10.02, 10)
    r = analyse_link(ridge, a, b, RADIO).record(0)
    assert r["clearance"]["line_of_sight"]
    assert r["loss_db"]["diffraction"] == 0.0
    # gases per ITU-R P.676-12 Annex 1 add about 0.009 dB/km at 5.8 GHz
    assert 0.0 < r["loss_db"]["gases"] < 0.01 * r["distance_km"]
    assert r["loss_db"]["total"] == pytest.approx(free_space_loss_db(r["distance_km"] * 1000, 5.8) + r["loss_db"]["gases"])
    assert r["sites"]["a"]["ground_m"] == pytest.approx(100.0)
    assert r["sites"]["a"]["antenna_amsl_m"] == pytest.approx(110.0)


def test_ridge_blocks(ridge):
    a = Site("west", 46.02, 10.01, 10)
    b = Site("east", 46.02, 10.09, 10)
    r = analyse_link(ridge, a, b, RADIO).record(0)
    assert not r["clearance"]["line_of_sight"]
    assert r["loss_db"]["diffraction"] > 20
    assert not r["meets_criterion"]
    assert r["clearance"]["worst_distance_km"] == pytest.approx(r["distance_km"] / 2, abs=0.1)
    assert r["worst_case"]["k"] == pytest.approx(2 / 3)


def test_batch_equals_single(ridge):
    a = [Site("a1", 46.02, 10.01, 10), Site("a2", 46.0, 10.01, 30)]
    b = [Site("b1", 46.02, 10.09, 10), Site("b2", 46.03, 10.03, 5)]
    batch = analyse_links(ridge, a, b, RADIO)
    for i in range(2):
        single = analyse_link(ridge, a[i], b[i], RADIO).record(0)
        rec = batch.record(i)
        for key in ("distance_km", "loss_db", "budget", "clearance", "worst_case"):
            assert rec[key] == single[key]


def test_record_has_design_keys(ridge):
    r = analyse_link(ridge, Site("a", 46.0, 10.01, 10), Site("b", 46.02, 10.02, 10), RADIO).record(0)
    for key in ("distance_km", "azimuth_a_to_b_deg", "azimuth_b_to_a_deg", "sites", "k", "clearance",
                "loss_db", "budget", "worst_case", "meets_criterion", "criterion", "inputs", "provenance"):
        assert key in r
    assert set(r["clearance"]) >= {"worst_f1_fraction", "worst_clearance_m", "worst_distance_km", "line_of_sight"}
    assert set(r["loss_db"]) >= {"free_space", "diffraction", "gases", "total"}
    assert set(r["budget"]) >= {"eirp_dbm", "rx_level_dbm", "noise_floor_dbm", "snr_db", "fade_margin_db"}
    assert set(r["worst_case"]) >= {"k", "clearance", "loss_db", "budget"}
    assert set(r["provenance"]) >= {"elevation_sources", "software_version", "computed_at"}
    assert r["inputs"]["radio"]["freq_ghz"] == 5.8
    assert r["inputs"]["k"] == pytest.approx(4 / 3)


def test_site_outside_raster(ridge):
    with pytest.raises(DataError, match="site b .* outside"):
        analyse_link(ridge, Site("a", 46.0, 10.01, 10), Site("far", 47.0, 11.0, 10), RADIO)


def test_batch_keeps_good_rows_when_one_is_bad(ridge):
    batch = analyse_links(ridge, [Site("a", 46.0, 10.01, 10), Site("a", 46.0, 10.01, 10)],
                          [Site("far", 47.0, 11.0, 10), Site("b", 46.02, 10.02, 10)], RADIO)
    assert batch.problems[0] is not None and batch.problems[1] is None
    assert "error" in batch.record(0)
    assert batch.record(1)["clearance"]["line_of_sight"]


def test_nodata_on_path_names_distance(raster_factory):
    arr = np.full((100, 100), 50.0, dtype="float32")
    arr[:, 50] = -9999
    m = ElevationModel([raster_factory("h.tif", arr, nodata=-9999.0, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))])
    a, b = Site("a", 46.02, 10.01, 10), Site("b", 46.02, 10.04, 10)
    with pytest.raises(DataError, match=r"nodata\) at 1\.[0-9]+ km from site a"):
        analyse_link(m, a, b, RADIO)
    m2 = ElevationModel([m.sources[0].path], nodata_fill_m=50.0)
    assert analyse_link(m2, a, b, RADIO).record(0)["clearance"]["line_of_sight"]


@pytest.mark.parametrize(
    "site, word",
    [(Site("a", 95.0, 10.0, 10), "latitude"), (Site("a", 46.0, 10.0, -1), "antenna height"),
     (Site("a", float("nan"), 10.0, 10), "finite")],
)
def test_bad_sites(ridge, site, word):
    with pytest.raises(InputError, match=word):
        analyse_link(ridge, site, Site("b", 46.02, 10.02, 10), RADIO)


def test_same_site_twice(ridge):
    with pytest.raises(InputError, match="same position"):
        analyse_link(ridge, Site("a", 46.0, 10.01, 10), Site("b", 46.0, 10.01, 10), RADIO)


@pytest.mark.parametrize("settings", [Settings(k=0), Settings(k_worst=-1), Settings(spacing_m=0.0)])
def test_bad_settings(ridge, settings):
    with pytest.raises(InputError):
        analyse_link(ridge, Site("a", 46.0, 10.01, 10), Site("b", 46.02, 10.02, 10), RADIO, settings)


def test_default_spacing_is_half_the_finest_cell_on_the_path(ridge):
    batch = analyse_link(ridge, Site("a", 46.0, 10.01, 10), Site("b", 46.02, 10.02, 10), RADIO)
    # Geographic cells shrink northwards: the finest cell on this path is at site b, not a.
    cell = min(ridge.cell_size_m(10.01, 46.0), ridge.cell_size_m(10.02, 46.02))
    assert cell < ridge.cell_size_m(10.01, 46.0)
    assert batch.profiles.spacing_m[0] == pytest.approx(cell / 2)
    steps = np.diff(batch.profiles.distance_m[0, : batch.profiles.n_samples[0]])
    assert steps.max() <= cell / 2 + 1e-9


def test_gases_once_per_frequency_give_the_per_path_numbers():
    """gaseous_loss_db computes gamma once per distinct frequency: same bits as A = gamma d per path
    (ITU-R P.676-12 Annex 1 section 2.1 via gaseous_path_attenuation_db)."""
    from types import SimpleNamespace

    from profiler.link import gaseous_loss_db
    from profiler.losses.atmosphere import gaseous_path_attenuation_db

    rng = np.random.default_rng(4)
    length = rng.uniform(100.0, 60_000.0, 300)
    profiles = SimpleNamespace(length_m=length)
    for freq in (np.full(300, 5.8), rng.choice([2.4, 11.0, 23.0, 0.5, 1500.0], 300), rng.uniform(1.0, 90.0, 300)):
        got = gaseous_loss_db(profiles, freq)
        use = (freq >= 1.0) & (freq <= 1000.0)
        ref = np.zeros(300)
        ref[use] = gaseous_path_attenuation_db(length[use], freq[use])
        assert np.array_equal(got, ref)
        assert np.all(got[~use] == 0.0) and np.all(got[use] > 0.0)


def test_site_columns_give_the_numbers_of_site_objects(ridge):
    """Batch callers may pass SiteColumns (arrays) instead of one Site per link: same records."""
    from profiler.link import SiteColumns

    a = [Site("a1", 46.02, 10.01, 10), Site("a2", 46.0, 10.01, 30), Site("a3", 46.04, 10.02, 3)]
    b = [Site("b1", 46.02, 10.09, 10), Site("b2", 46.03, 10.03, 5), Site("b3", 46.01, 10.08, 12)]

    def columns(sites):
        return SiteColumns(np.array([s.name for s in sites], dtype=object), np.array([s.lat_deg for s in sites]),
                           np.array([s.lon_deg for s in sites]), np.array([s.antenna_agl_m for s in sites]))

    ref = analyse_links(ridge, a, b, RADIO)
    got = analyse_links(ridge, columns(a), columns(b), RADIO)
    assert list(columns(a)) == a and columns(b)[1:] == b[1:]
    for i in range(3):
        rec, want = got.record(i), ref.record(i)
        for key in ("sites", "distance_km", "loss_db", "budget", "clearance", "worst_case", "availability"):
            assert rec[key] == want[key]


def test_longitudes_in_0_360_are_folded_by_validate():
    from profiler.link import Site

    assert Site("b", 46.0, 350.0, 10.0).validate().lon_deg == pytest.approx(-10.0)
    assert Site("b", 90.0, 45.0, 10.0).validate().lon_deg == 0.0
    same = Site("c", 46.0, 10.0, 10.0)
    assert same.validate() is same  # in range: unchanged


def test_to_dataframe_has_one_row_per_link_with_the_record_figures(ridge):
    a = [Site("a", 46.0, 10.01, 10), Site("a", 46.02, 10.01, 10)]
    b = [Site("far", 47.0, 11.0, 10), Site("b", 46.02, 10.09, 10)]
    batch = analyse_links(ridge, a, b, RADIO)
    df = batch.to_dataframe()
    assert list(df["name"]) == list(batch.names) and len(df) == 2
    assert "outside" in df["error"][0] and df["error"].isna()[1]
    assert np.isnan(df["fade_margin_db"][0]) and not df["meets_criterion"][0]
    r = batch.record(1)
    assert df["distance_km"][1] == r["distance_km"]
    assert df["fade_margin_db"][1] == r["budget"]["fade_margin_db"]
    assert df["diffraction_loss_db"][1] == r["loss_db"]["diffraction"]
    assert df["worst_f1_fraction_worst_k"][1] == r["worst_case"]["clearance"]["worst_f1_fraction"]
    assert bool(df["meets_criterion"][1]) == r["meets_criterion"]


def test_repr_is_one_short_line(ridge):
    batch = analyse_links(ridge, [Site("a", 46.0, 10.01, 10)] * 3, [Site("b", 46.02, 10.02, 10)] * 3, RADIO)
    text = repr(batch)
    assert "\n" not in text and len(text) < 200
    assert "3 links" in text and "3 meet the criterion" in text and "0 not profiled" in text


def test_nodata_error_names_the_argument_and_the_cli_its_flag(raster_factory):
    from profiler.cli.options import flag_form

    arr = np.full((100, 100), 50.0, dtype="float32")
    arr[:, 50] = -9999
    m = ElevationModel([raster_factory("h.tif", arr, nodata=-9999.0, transform=from_origin(10.0, 46.05, 0.0005, 0.0005))])
    with pytest.raises(DataError) as info:
        analyse_link(m, Site("a", 46.02, 10.01, 10), Site("b", 46.02, 10.04, 10), RADIO)
    assert info.value.parameter == "nodata_fill_m"
    assert "pass nodata_fill_m=HEIGHT" in str(info.value) and "--" not in str(info.value)
    assert "pass --nodata-fill-m HEIGHT" in info.value.render(flag_form)
    batch = analyse_links(m, [Site("a", 46.02, 10.01, 10)], [Site("b", 46.02, 10.04, 10)], RADIO)
    assert "pass --nodata-fill-m HEIGHT" in batch.record(0)["error"]  # the record keeps its wording
