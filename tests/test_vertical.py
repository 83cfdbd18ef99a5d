"""Vertical datums: ellipsoidal (GNSS) heights to the rasters' datum, or a clear refusal."""

from __future__ import annotations

import pytest
from pyproj import CRS

from profiler.budget import Radio
from profiler.errors import DataError, InputError
from profiler.link import Settings, Site, analyse_link
from profiler.mounts import Mount
from profiler.terrain import ElevationModel
from profiler.vertical import ellipsoidal_to_raster_datum, raster_vertical_crs

from tests.synthetic_urban import flat_dtm, site_lonlat


def _grid_available(vertical: str) -> bool:
    try:
        ellipsoidal_to_raster_datum(0.0, 0.0, 0.0, CRS(vertical))
    except DataError:
        return False
    return True


def _link(model, mount):
    a = Site("A", *site_lonlat(200.0, 1500.0), 10.0)
    b = Site("B", *site_lonlat(2800.0, 1700.0), 10.0)
    return analyse_link(model, a, b, Radio(5.8), Settings(spacing_m=50.0), mount_a=mount)


def test_unknown_raster_datum_is_refused(tmp_path):
    """Always runs: without a stated datum an ellipsoidal height is refused, never mixed in."""
    with ElevationModel([flat_dtm(tmp_path / "flat.tif")]) as model:
        with pytest.raises(InputError, match=r"do not state their vertical datum.*with vertical_crs \("):
            _link(model, Mount("ellipsoid", 130.0))
        with pytest.raises(InputError, match="not a vertical CRS"):
            raster_vertical_crs(model, "EPSG:32727")
        with pytest.raises(InputError, match="not known to PROJ"):
            raster_vertical_crs(model, "EPSG:999999")
        assert raster_vertical_crs(model, "EPSG:5773").name == "EGM96 height"


def test_stated_datum_wins_and_a_contradiction_is_refused(tmp_path):
    dtm = flat_dtm(tmp_path / "flat.tif", crs=CRS("EPSG:32727+5773").to_wkt())
    with ElevationModel([dtm]) as model:
        assert raster_vertical_crs(model).name == "EGM96 height"
        with pytest.raises(InputError, match="state their heights are EGM96 height"):
            raster_vertical_crs(model, "EPSG:3855")


def test_missing_geoid_grid_is_refused():
    """PROJ's ballpark fallback (N = 0) must never be used."""
    if _grid_available("EPSG:3855"):
        pytest.skip("the EGM2008 grid is installed here; the refusal cannot be shown with it")
    with pytest.raises(DataError, match=r"lacks the geoid grid .*egm08"):
        ellipsoidal_to_raster_datum(-20.9, -30.5, 100.0, CRS("EPSG:3855"))


#: Geoid undulation of the test grid, m.
N_TEST_M = 25.0


@pytest.fixture
def constant_geoid(tmp_path):
    """An EGM96-named geoid grid of constant undulation written by the test, on PROJ's search path.

    GTX layout (NOAA VDatum, from memory): big-endian header of four doubles
    (south-west latitude, longitude, latitude and longitude steps, degrees) and
    two int32 (rows, columns), then float32 undulations row by row from the south.
    PROJ takes it for EGM96 by its former file name egm96_15.gtx.
    """
    import struct

    import numpy as np
    import pyproj.datadir

    rows, cols = 13, 25  # 15-degree steps over the globe
    header = struct.pack(">4d2i", -90.0, -180.0, 15.0, 15.0, rows, cols)
    (tmp_path / "egm96_15.gtx").write_bytes(header + np.full((rows, cols), N_TEST_M, dtype=">f4").tobytes())
    if _grid_available("EPSG:5773"):
        pytest.skip("a real EGM96 grid is installed and PROJ would take it before the test's grid")
    before = pyproj.datadir.get_data_dir()
    pyproj.datadir.append_data_dir(str(tmp_path))
    try:
        yield N_TEST_M
    finally:
        pyproj.datadir.set_data_dir(before)


def test_undulation_and_site_conversion_use_the_grid(tmp_path, constant_geoid):
    """H = h - N, N the geoid undulation read from the grid (common practice for geoid heights)."""
    conv = ellipsoidal_to_raster_datum(0.0, 0.0, 100.0, CRS("EPSG:5773"))
    assert conv.undulation_m == pytest.approx(constant_geoid, abs=1e-6)
    assert conv.height_m == pytest.approx(100.0 - constant_geoid, abs=1e-6)
    dtm = flat_dtm(tmp_path / "flat.tif", crs=CRS("EPSG:32727+5773").to_wkt())
    with ElevationModel([dtm]) as model:
        record = _link(model, Mount("ellipsoid", 130.0)).record(0)
    a = record["sites"]["a"]
    assert a["antenna_reference"] == "ellipsoid" and a["geoid_vertical_crs"] == "EGM96 height"
    assert a["geoid_undulation_m"] == pytest.approx(constant_geoid, abs=1e-6)
    assert a["antenna_amsl_m"] == pytest.approx(130.0 - constant_geoid, abs=1e-6)
    assert a["antenna_agl_m"] == pytest.approx(130.0 - constant_geoid - 100.0, abs=1e-6)
    assert record["inputs"]["vertical_datum"] == "EGM96 height"


def test_planner_stated_datum_is_reported(tmp_path, constant_geoid):
    with ElevationModel([flat_dtm(tmp_path / "flat.tif")]) as model:
        record = _link(model, Mount("ellipsoid", 130.0, vertical_crs="EPSG:5773")).record(0)
    assert record["inputs"]["vertical_datum"] == "EGM96 height (stated by the planner; the rasters do not say)"
    assert record["sites"]["a"]["antenna_amsl_m"] == pytest.approx(130.0 - constant_geoid, abs=1e-6)


@pytest.mark.skipif(not _grid_available("EPSG:5773"), reason="the real EGM96 grid is not installed (Debian: proj-data)")
def test_real_egm96_undulation_at_the_origin():
    # EGM96 geoid undulation at 0 N, 0 E is about +17.16 m (from memory; NGA EGM96 tables).
    conv = ellipsoidal_to_raster_datum(0.0, 0.0, 100.0, CRS("EPSG:5773"))
    assert conv.undulation_m == pytest.approx(17.16, abs=0.05)


def test_datum_is_a_value_none_when_unknown():
    from profiler.vertical import UNSTATED, DatumSource, datum_of_record, name_datum, raster_datum

    unknown = name_datum(UNSTATED)
    assert unknown.name is None and unknown.source is DatumSource.UNKNOWN and not unknown.known
    assert raster_datum(UNSTATED) is None and raster_datum("EGM96 height") == "EGM96 height"
    planner = datum_of_record({"inputs": {"vertical_datum": "EGM96 height (stated by the planner; the rasters "
                                                            "do not say)", "vertical_datum_sea_level": True}})
    assert planner.name == "EGM96 height" and planner.source is DatumSource.PLANNER
    assert planner.record() == "EGM96 height (stated by the planner; the rasters do not say)"
    assert datum_of_record({"inputs": {"vertical_datum": UNSTATED}}).name is None
