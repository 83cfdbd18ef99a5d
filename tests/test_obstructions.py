"""Obstruction layers and surface models: clutter along paths (profiler.obstructions)."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from geographiclib.geodesic import Geodesic

from profiler.budget import Radio
from profiler.errors import DataError, DataFileError, InputError
from profiler.link import Settings, Site, analyse_link
from profiler.obstructions import (
    LayerSpec,
    Surroundings,
    parse_layer_spec,
    read_obstruction_layer,
)
from profiler.terrain import ElevationModel

from tests.synthetic_urban import CRS, X0_M, Y0_M, flat_dtm, site_lonlat, write_layer, write_raster

# Path from (200, 1500) to (2800, 1700) m in the test area: 2.6 km, slightly oblique.
A_XY, B_XY = (200.0, 1500.0), (2800.0, 1700.0)


@pytest.fixture(scope="module")
def dtm(tmp_path_factory):
    path = flat_dtm(tmp_path_factory.mktemp("dtm") / "flat.tif")
    with ElevationModel([path]) as model:
        yield model


def _sites(agl_a=10.0, agl_b=10.0):
    la, lo = site_lonlat(*A_XY)
    lb, lob = site_lonlat(*B_XY)
    return Site("A", la, lo, agl_a), Site("B", lb, lob, agl_b)


def _run(model, surroundings=None, spacing_m=10.0, **kw):
    a, b = _sites(**kw)
    return analyse_link(model, a, b, Radio(5.8), Settings(spacing_m=spacing_m), surroundings=surroundings)


def _layer(tmp_path, geoms_xy, heights=None, tops=None, name="b.gpkg", crs=CRS, kind="building", **extra):
    """Write polygons given in test-area metres; heights above ground and/or absolute tops."""
    geoms = [shapely.affinity.translate(g, X0_M, Y0_M) for g in geoms_xy]
    cols = {}
    if heights is not None:
        cols["height_m"] = heights
    if tops is not None:
        cols["top_m"] = tops
    cols.update(extra)
    if crs != CRS:
        import geopandas as gpd

        gdf = gpd.GeoDataFrame(cols, geometry=geoms, crs=CRS).to_crs(crs)
        gdf.to_file(tmp_path / name)
    else:
        write_layer(tmp_path / name, geoms, **cols)
    return read_obstruction_layer(LayerSpec(str(tmp_path / name), kind=kind))


def _independent_crossing_m(poly_xy):
    """Entry and exit distances from site a: shapely in UTM, then geographiclib geodesic distances."""
    line = shapely.LineString([A_XY, B_XY])
    inter = shapely.intersection(line, poly_xy)
    xy = shapely.get_coordinates(inter)
    lat_a, lon_a = site_lonlat(*A_XY)
    d = []
    for x, y in xy:
        lat, lon = site_lonlat(x, y)
        d.append(Geodesic.WGS84.Inverse(lat_a, lon_a, lat, lon)["s12"])
    return min(d), max(d)


def test_building_across_flat_path_rises_by_its_height_over_exactly_the_crossed_stretch(dtm, tmp_path):
    house = shapely.box(1000, 1500, 1037, 1700)  # 37 m deep across the path
    batch = _run(dtm, Surroundings((_layer(tmp_path, [house], heights=[18.5]),)))
    p = batch.profiles
    n = int(p.n_samples[0])
    d, clutter, kind = p.distance_m[0, :n], p.clutter_m[0, :n], p.clutter_kind[0, :n]
    d0, d1 = _independent_crossing_m(house)
    # Entry and exit are samples of the profile (inserted), within a centimetre of the independent answer.
    assert np.min(np.abs(d - d0)) < 0.01 and np.min(np.abs(d - d1)) < 0.01
    inside = (d >= d0 - 0.01) & (d <= d1 + 0.01)
    assert inside.sum() >= 4
    np.testing.assert_allclose(clutter[inside], 18.5)
    np.testing.assert_allclose(clutter[~inside], 0.0)
    np.testing.assert_allclose(p.surface_m[0, :n][inside], 118.5)
    assert set(kind[inside]) == {1} and set(kind[~inside]) == {0}
    assert np.all(np.diff(d) > 0)
    crossed = batch.record(0)["clutter"]["crossed"]
    assert len(crossed) == 1 and crossed[0]["height_m"] == 18.5
    assert crossed[0]["from_km"] * 1000 == pytest.approx(d0, abs=0.01)


def test_building_narrower_than_the_sample_spacing_is_found(dtm, tmp_path):
    mast_room = shapely.box(1500.2, 1550, 1500.7, 1700)  # 0.5 m deep, samples every 25 m
    batch = _run(dtm, Surroundings((_layer(tmp_path, [mast_room], heights=[30.0]),)), spacing_m=25.0)
    p = batch.profiles
    n = int(p.n_samples[0])
    assert p.clutter_m[0, :n].max() == pytest.approx(30.0)
    d0, d1 = _independent_crossing_m(mast_room)
    hit = p.distance_m[0, :n][p.clutter_m[0, :n] > 0]
    assert hit.min() == pytest.approx(d0, abs=0.01) and hit.max() == pytest.approx(d1, abs=0.01)
    # Without the exact crossing a 25 m grid would very likely step over it: the grid alone misses it here.
    plain = _run(dtm, spacing_m=25.0).profiles
    grid = plain.distance_m[0, : int(plain.n_samples[0])]
    assert not np.any((grid >= d0) & (grid <= d1))


def test_building_beside_the_path_changes_nothing(dtm, tmp_path):
    beside = shapely.box(1200, 1700, 1300, 1800)  # 80 m north of the path there
    plain = _run(dtm)
    with_layer = _run(dtm, Surroundings((_layer(tmp_path, [beside], heights=[60.0]),)))
    np.testing.assert_array_equal(plain.profiles.distance_m, with_layer.profiles.distance_m)
    assert not with_layer.profiles.clutter_m.any()
    assert with_layer.record(0)["clutter"]["crossed"] == []
    assert plain.design.clearance.worst_f1_fraction[0] == with_layer.design.clearance.worst_f1_fraction[0]


def test_absolute_top_overlap_and_tree_allowance(dtm, tmp_path):
    tower = shapely.box(800, 1500, 820, 1700)  # top 142.5 m over ground 100 m
    low = shapely.box(790, 1500, 830, 1700)  # 10 m high, overlapping the tower
    buildings = _layer(tmp_path, [tower, low], heights=[np.nan, 10.0], tops=[142.5, np.nan])
    stand = shapely.box(2000, 1500, 2100, 1800)
    trees = _layer(tmp_path, [stand], heights=[14.0], name="t.gpkg", kind="trees")
    batch = _run(dtm, Surroundings((buildings, trees), tree_allowance_m=2.5))
    p = batch.profiles
    n = int(p.n_samples[0])
    d, clutter, kind = p.distance_m[0, :n], p.clutter_m[0, :n], p.clutter_kind[0, :n]
    t0, t1 = _independent_crossing_m(tower)
    l0, l1 = _independent_crossing_m(low)
    s0, s1 = _independent_crossing_m(stand)
    in_tower = (d >= t0 - 0.01) & (d <= t1 + 0.01)
    in_low = (d >= l0 - 0.01) & (d <= l1 + 0.01) & ~in_tower
    in_stand = (d >= s0 - 0.01) & (d <= s1 + 0.01)
    np.testing.assert_allclose(clutter[in_tower], 42.5)
    np.testing.assert_allclose(clutter[in_low], 10.0)
    np.testing.assert_allclose(clutter[in_stand], 16.5)
    assert set(kind[in_stand]) == {2}
    trees_rec = [c for c in batch.record(0)["clutter"]["crossed"] if c["kind"] == "trees"][0]
    assert trees_rec["height_m"] == 14.0 and trees_rec["allowance_m"] == 2.5


def test_layer_in_another_crs_gives_the_same_crossing(dtm, tmp_path):
    house = shapely.box(1400, 1500, 1430, 1700)
    utm = _run(dtm, Surroundings((_layer(tmp_path, [house], heights=[12.0]),)))
    wgs = _run(dtm, Surroundings((_layer(tmp_path, [house], heights=[12.0], name="w.gpkg", crs="EPSG:4326"),)))
    a = utm.record(0)["clutter"]["crossed"][0]
    b = wgs.record(0)["clutter"]["crossed"][0]
    assert b["from_km"] == pytest.approx(a["from_km"], abs=1e-5)
    assert b["to_km"] == pytest.approx(a["to_km"], abs=1e-5)


def test_surface_model_minus_terrain_clipped_at_zero(tmp_path):
    # Terrain: a plane rising 1 m per cell eastwards.  Surface: the same plus a 7 m block,
    # and a patch 3 m *below* the terrain (must give no clutter, not negative clutter).
    cols = np.arange(300)[None, :] * 1.0
    ground = np.broadcast_to(100.0 + cols, (300, 300)).copy()
    surface = ground.copy()
    surface[130:170, 100:140] += 7.0  # x 1000-1400 m, y 1300-1700 m
    surface[130:170, 200:220] -= 3.0  # x 2000-2200 m
    dtm = write_raster(tmp_path / "dtm.tif", ground)
    dsm = write_raster(tmp_path / "dsm.tif", surface)
    with ElevationModel([dtm]) as model, ElevationModel([dsm]) as dsm_model:
        batch = _run(model, Surroundings(surface=dsm_model))
        p = batch.profiles
        n = int(p.n_samples[0])
        d = p.distance_m[0, :n]
        lon, lat = p.lon_deg[0, :n], p.lat_deg[0, :n]
    from pyproj import Transformer

    x, _ = Transformer.from_crs("EPSG:4326", CRS, always_xy=True).transform(lon, lat)
    x = x - X0_M
    clutter = p.clutter_m[0, :n]
    block = (x > 1010) & (x < 1390)  # a full cell inside the block: bilinear gives exactly 7
    np.testing.assert_allclose(clutter[block], 7.0, atol=1e-4)
    assert set(p.clutter_kind[0, :n][block]) == {3}
    below = (x > 1990) & (x < 2210)
    np.testing.assert_allclose(clutter[below], 0.0)
    elsewhere = (x < 985) | ((x > 1415) & (x < 1985)) | (x > 2215)
    np.testing.assert_allclose(clutter[elsewhere], 0.0, atol=1e-4)
    assert clutter.min() >= 0.0 and d.size > 100


def test_surface_model_partial_cover_is_warned(dtm, tmp_path):
    small = write_raster(tmp_path / "dsm.tif", np.full((50, 50), 105.0))  # covers x, y < 500 m only
    with ElevationModel([small]) as dsm:
        record = _run(dtm, Surroundings(surface=dsm)).record(0)
    assert any("surface model covers" in w for w in record["warnings"])


def test_surface_spacing_follows_the_finer_raster(dtm, tmp_path):
    fine = write_raster(tmp_path / "fine.tif", np.full((600, 600), 100.0), cell_m=2.0)
    with ElevationModel([fine]) as dsm:
        batch = _run(dtm, Surroundings(surface=dsm), spacing_m=None)
    assert batch.profiles.spacing_m[0] == pytest.approx(1.0, rel=0.01)


# --- bad input ---------------------------------------------------------------


def test_layer_without_height_attribute_is_refused(tmp_path):
    write_layer(tmp_path / "x.gpkg", [shapely.box(X0_M, Y0_M, X0_M + 10, Y0_M + 10)], storeys=[3])
    with pytest.raises(DataError, match=r"no height attribute.*height_m.*--height-field.*storeys"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "x.gpkg")))
    with pytest.raises(InputError, match="no attribute 'levels'"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "x.gpkg"), height_field="levels"))


def test_named_height_field_is_used(tmp_path):
    write_layer(tmp_path / "x.gpkg", [shapely.box(X0_M, Y0_M, X0_M + 10, Y0_M + 10)], HOEHE=[7.5])
    layer = read_obstruction_layer(LayerSpec(str(tmp_path / "x.gpkg"), height_field="hoehe"))
    assert layer.height_m.tolist() == [7.5] and layer.height_field == "HOEHE"


def test_layer_without_crs_is_refused(tmp_path):
    import geopandas as gpd

    # A Shapefile without its .prj (GeoJSON always means WGS84, so it cannot lack a CRS).
    with pytest.warns(UserWarning):
        gpd.GeoDataFrame({"height_m": [5.0]}, geometry=[shapely.box(0, 0, 1, 1)]).to_file(tmp_path / "x.shp")
    with pytest.raises(DataError, match="no coordinate reference system"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "x.shp")))


def test_invalid_geometry_is_refused_naming_the_feature(tmp_path):
    bowtie = shapely.Polygon([(X0_M, Y0_M), (X0_M + 10, Y0_M + 10), (X0_M + 10, Y0_M), (X0_M, Y0_M + 10)])
    write_layer(tmp_path / "x.gpkg", [shapely.box(X0_M, Y0_M, X0_M + 5, Y0_M + 5), bowtie],
                height_m=[5.0, 6.0], name=["ok", "Bowtie Hall"])
    with pytest.raises(DataError, match=r"Bowtie Hall.*invalid polygon.*Self-intersection"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "x.gpkg")))


@pytest.mark.parametrize(
    "values, message",
    [
        (["tall"], "is not a number"),
        ([-3.0], "negative height"),
        ([None], "has no height"),
        ([1500.0], "name the attribute with top_field instead"),
    ],
)
def test_bad_heights_are_refused(tmp_path, values, message):
    write_layer(tmp_path / "x.gpkg", [shapely.box(X0_M, Y0_M, X0_M + 10, Y0_M + 10)], height_m=values)
    with pytest.raises(DataError, match=message):
        read_obstruction_layer(LayerSpec(str(tmp_path / "x.gpkg")))


def test_points_and_missing_files_and_layer_choice(tmp_path):
    write_layer(tmp_path / "p.gpkg", [shapely.Point(X0_M, Y0_M)], height_m=[5.0])
    with pytest.raises(DataError, match="must hold polygons"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "p.gpkg")))
    with pytest.raises(DataFileError, match="not found"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "nothing.gpkg")))
    box = [shapely.box(X0_M, Y0_M, X0_M + 10, Y0_M + 10)]
    write_layer(tmp_path / "two.gpkg", box, layer="houses", height_m=[5.0])
    write_layer(tmp_path / "two.gpkg", box, layer="woods", height_m=[20.0])
    with pytest.raises(InputError, match=r"several layers \(houses, woods\).*#LAYER"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "two.gpkg")))
    with pytest.raises(InputError, match="no layer 'barns'"):
        read_obstruction_layer(LayerSpec(str(tmp_path / "two.gpkg"), layer="barns"))
    woods = read_obstruction_layer(parse_layer_spec(f"trees={tmp_path / 'two.gpkg'}#woods"))
    assert woods.kind == "trees" and woods.height_m.tolist() == [20.0]


def test_parse_layer_spec():
    assert parse_layer_spec("a.gpkg") == LayerSpec("a.gpkg", "building", None)
    assert parse_layer_spec("trees=a.gpkg#stands") == LayerSpec("a.gpkg", "trees", "stands")
    assert parse_layer_spec("buildings=dir/a=b.shp").path == "dir/a=b.shp"
    with pytest.raises(InputError, match="unknown obstruction kind 'x'; known kinds: building"):
        parse_layer_spec("x=a.gpkg")  # no such file: an unknown kind, named as such
    with pytest.raises(InputError):
        parse_layer_spec("  ")
    with pytest.raises(InputError, match="tree allowance"):
        Surroundings(tree_allowance_m=-1.0)


def test_surface_in_another_vertical_datum_is_refused(tmp_path):
    from pyproj import CRS as ProjCRS

    egm96 = ProjCRS("EPSG:32727+5773").to_wkt()
    egm08 = ProjCRS("EPSG:32727+3855").to_wkt()
    dtm = flat_dtm(tmp_path / "dtm.tif", crs=egm96)
    dsm = flat_dtm(tmp_path / "dsm.tif", crs=egm08)
    with ElevationModel([dtm]) as model, ElevationModel([dsm]) as surface:
        with pytest.raises(DataError, match="one vertical datum"):
            _run(model, Surroundings(surface=surface))


def test_clutter_kinds_have_one_definition():
    from profiler.clutter import ClutterKind
    from profiler.obstructions import KIND_CODES
    from profiler.profile import CLUTTER_KINDS
    from profiler.sheets.content import CLUTTER_KINDS as LEGEND

    assert CLUTTER_KINDS == {0: "none", 1: "building", 2: "trees", 3: "surface model"}
    assert KIND_CODES == {"building": 1, "trees": 2, "surface model": 3}
    assert LEGEND == {1: "buildings", 2: "trees", 3: "surface model"}
    assert all(ClutterKind(code).label == word for code, word in CLUTTER_KINDS.items())
