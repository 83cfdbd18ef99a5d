import numpy as np
import pytest
from rasterio.transform import from_origin

from profiler.errors import DataError, DataFileError, InputError
from profiler.terrain import ElevationModel


def _plane(rows=50, cols=60):
    r, c = np.mgrid[0:rows, 0:cols]
    return (100.0 + 2.0 * c + 3.0 * r).astype("float32")


def test_bilinear_is_exact_on_a_plane(raster_factory):
    # A plane is reproduced exactly by bilinear interpolation between cell centres.
    path = raster_factory("plane.tif", _plane())
    m = ElevationModel([path])
    col = np.array([0.5, 10.25, 33.7, 59.5])
    row = np.array([0.5, 5.5, 20.1, 49.5])
    lon = 10.0 + col * 0.001
    lat = 46.0 - row * 0.001
    z, covered = m.sample(lon, lat)
    assert covered.all()
    assert z == pytest.approx(100.0 + 2.0 * (col - 0.5) + 3.0 * (row - 0.5), abs=1e-6)


def test_projected_raster_and_feet(raster_factory):
    # UTM 32N raster in feet; the same point read through pyproj.
    from pyproj import Transformer

    arr = np.full((20, 20), 1000.0, dtype="float32")
    path = raster_factory("utm_ft.tif", arr, crs="EPSG:32632", transform=from_origin(400_000, 5_000_000, 30, 30))
    lon, lat = Transformer.from_crs("EPSG:32632", "EPSG:4326", always_xy=True).transform(400_300, 4_999_700)
    z, _ = ElevationModel([path], vertical_unit="ft").sample([lon], [lat])
    assert z[0] == pytest.approx(304.8)
    z, _ = ElevationModel([path]).sample([lon], [lat])
    assert z[0] == pytest.approx(1000.0)


def test_band_unit_metadata_in_feet(raster_factory):
    path = raster_factory("ft.tif", np.full((5, 5), 100.0, dtype="float32"), unit="ft")
    z, _ = ElevationModel([path]).sample([10.0025], [45.9975])
    assert z[0] == pytest.approx(30.48)


def test_several_tiles_act_as_one_surface(raster_factory):
    west = raster_factory("w.tif", np.full((10, 10), 1.0, dtype="float32"), transform=from_origin(10.0, 46.0, 0.001, 0.001))
    east = raster_factory("e.tif", np.full((10, 10), 2.0, dtype="float32"), transform=from_origin(10.01, 46.0, 0.001, 0.001))
    m = ElevationModel([west, east])
    z, covered = m.sample([10.005, 10.015, 10.05], [45.995, 45.995, 45.995])
    assert z[:2].tolist() == [1.0, 2.0]
    assert covered.tolist() == [True, True, False]
    assert np.isnan(z[2])


def test_overlap_first_wins_but_nodata_falls_through(raster_factory):
    a = np.full((10, 10), 5.0, dtype="float32")
    a[:, :5] = -9999.0
    first = raster_factory("a.tif", a, nodata=-9999.0)
    second = raster_factory("b.tif", np.full((10, 10), 7.0, dtype="float32"))
    z, _ = ElevationModel([first, second]).sample([10.0085, 10.0015], [45.995, 45.995])
    assert z.tolist() == [5.0, 7.0]


def test_nodata_is_nan_unless_filled(raster_factory):
    a = np.full((10, 10), 5.0, dtype="float32")
    a[4:6, 4:6] = -32768.0
    path = raster_factory("hole.tif", a, nodata=-32768.0)
    z, covered = ElevationModel([path]).sample([10.005], [45.995])
    assert covered[0] and np.isnan(z[0])
    z, _ = ElevationModel([path], nodata_fill_m=0.0).sample([10.005], [45.995])
    assert z[0] == 0.0


def test_only_the_needed_window_is_read(raster_factory, monkeypatch):
    path = raster_factory("big.tif", _plane(400, 400))
    m = ElevationModel([path])
    shapes = []
    original = m._read

    def spy(s, r0, c0, nr, nc):
        shapes.append((nr, nc))
        return original(s, r0, c0, nr, nc)

    monkeypatch.setattr(m, "_read", spy)
    m.sample(np.array([10.1, 10.102]), np.array([45.9, 45.901]))
    assert shapes and max(nr * nc for nr, nc in shapes) <= 16


def test_cell_size_m(raster_factory):
    path = raster_factory("c.tif", _plane())
    size = ElevationModel([path]).cell_size_m(10.02, 45.98)
    # 0.001 degree of longitude at 46 N is about 77 m, of latitude about 111 m.
    assert size == pytest.approx(77.4, abs=0.5)


def test_missing_file():
    with pytest.raises(DataFileError, match="not found"):
        ElevationModel(["/nonexistent/x.tif"])


def test_not_a_raster(tmp_path):
    p = tmp_path / "notes.tif"
    p.write_text("this is not a raster")
    with pytest.raises(DataFileError, match="cannot read"):
        ElevationModel([p])


def test_raster_without_crs(raster_factory):
    path = raster_factory("nocrs.tif", _plane(), crs=None)
    with pytest.raises(DataError, match="no coordinate reference system"):
        ElevationModel([path])


def test_no_raster_and_bad_unit(raster_factory):
    with pytest.raises(InputError):
        ElevationModel([])
    path = raster_factory("p.tif", _plane())
    with pytest.raises(InputError, match="unknown vertical unit"):
        ElevationModel([path], vertical_unit="furlong")


def test_model_pickles_without_open_handles(raster_factory):
    import pickle

    path = raster_factory("p.tif", _plane())
    m = ElevationModel([path])
    m.sample([10.01], [45.99])
    m2 = pickle.loads(pickle.dumps(m))
    assert m2.sample([10.01], [45.99])[0][0] == pytest.approx(m.sample([10.01], [45.99])[0][0])


def test_vrt_mosaic_of_two_tiles(raster_factory, tmp_path):
    west = raster_factory("w.tif", np.full((10, 10), 1.0, dtype="float32"), transform=from_origin(10.0, 46.0, 0.001, 0.001))
    east = raster_factory("e.tif", np.full((10, 10), 2.0, dtype="float32"), transform=from_origin(10.01, 46.0, 0.001, 0.001))
    srs = "EPSG:4326"
    sources = "".join(
        f"""<SimpleSource><SourceFilename relativeToVRT="1">{p.name}</SourceFilename><SourceBand>1</SourceBand>
        <SrcRect xOff="0" yOff="0" xSize="10" ySize="10"/><DstRect xOff="{off}" yOff="0" xSize="10" ySize="10"/></SimpleSource>"""
        for p, off in ((west, 0), (east, 10))
    )
    vrt = tmp_path / "mosaic.vrt"
    vrt.write_text(
        f"""<VRTDataset rasterXSize="20" rasterYSize="10"><SRS>{srs}</SRS>
        <GeoTransform>10.0, 0.001, 0, 46.0, 0, -0.001</GeoTransform>
        <VRTRasterBand dataType="Float32" band="1">{sources}</VRTRasterBand></VRTDataset>"""
    )
    z, covered = ElevationModel([vrt]).sample([10.005, 10.015], [45.995, 45.995])
    assert covered.all() and z.tolist() == [1.0, 2.0]


def test_other_gdal_format_ascii_grid(tmp_path):
    # Esri ASCII grid with a .prj: any format GDAL reads is accepted.
    import rasterio

    arr = np.arange(25, dtype="float32").reshape(5, 5)
    path = tmp_path / "grid.asc"
    with rasterio.open(path, "w", driver="AAIGrid", width=5, height=5, count=1, dtype="float32",
                       crs="EPSG:4326", transform=from_origin(10.0, 46.0, 0.01, 0.01)) as dst:
        dst.write(arr, 1)
    z, _ = ElevationModel([path]).sample([10.025], [45.975])
    assert z[0] == pytest.approx(12.0)


def test_unknown_band_unit_tag_is_refused_not_read_as_metres(raster_factory):
    path = raster_factory("cm.tif", np.full((5, 5), 31000.0, dtype="float32"), unit="cm")
    with pytest.raises(DataError, match=r"band unit 'cm' is not one terrahop knows \(known: m, metre"):
        ElevationModel([path])
    # Saying the unit explicitly overrides the tag.
    z, _ = ElevationModel([path], vertical_unit="m").sample([10.002], [45.998])
    assert z[0] == pytest.approx(31000.0)


def test_different_stated_vertical_datums_are_refused(raster_factory):
    a = raster_factory("egm96.tif", np.full((5, 5), 1.0, dtype="float32"), crs="EPSG:4326+5773")
    b = raster_factory("egm08.tif", np.full((5, 5), 1.0, dtype="float32"), crs="EPSG:4326+3855")
    c = raster_factory("plain.tif", np.full((5, 5), 1.0, dtype="float32"))
    with pytest.raises(DataError, match="different vertical datums.*convert the rasters to one datum"):
        ElevationModel([a, b])
    assert len(ElevationModel([a, a]).sources) == 2  # the same datum twice is fine
    assert len(ElevationModel([a, c]).sources) == 2  # a raster that states none is as before


def test_longitudes_past_180_find_the_tile_across_the_dateline(raster_factory):
    """A point at 180.07 (0..360 convention) lies on a tile stored as -180..-179.8."""
    east = raster_factory("east.tif", np.arange(200 * 200, dtype="float32").reshape(200, 200),
                          transform=from_origin(-180.0, 10.1, 0.001, 0.001))
    model = ElevationModel([east])
    z_wrapped, covered = model.sample([180.0705], [10.0505])
    z_plain, _ = model.sample([-179.9295], [10.0505])
    assert covered[0] and np.isfinite(z_wrapped[0])
    assert z_wrapped[0] == pytest.approx(z_plain[0], abs=1e-6)
    assert model.covers([180.07], [10.05])[0]
    assert np.isfinite(model.cell_sizes_m([180.07], [10.05])[0])
    # A tile stored in the 0..360 convention is found from -179.93 as well.
    wide = raster_factory("wide.tif", np.full((200, 200), 7.0, dtype="float32"),
                          transform=from_origin(180.0, 10.1, 0.001, 0.001))
    z, covered = ElevationModel([wide]).sample([-179.93], [10.05])
    assert covered[0] and z[0] == pytest.approx(7.0)
