"""Reading tables of site pairs (profiler.io.pairs.read_pair_table)."""

from __future__ import annotations

import math

import pytest

from profiler.errors import DataFileError, InputError
from profiler.io.pairs import parse_row_spec, read_pair_table, select_pairs


def _write(tmp_path, text, name="pairs.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_reads_canonical_columns_and_ranks_by_fade_margin(tmp_path):
    p = _write(tmp_path, (
        "name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m,fade_margin_db\n"
        "A,-30.1,-20.1,10,B,-30.2,-20.2,12,3.5\n"
        "C,-30.3,-20.3,15,D,-30.4,-20.4,20,17.0\n"
        "E,-30.5,-20.5,15,F,-30.6,-20.6,20,\n"
        "G,-30.7,-20.7,15,H,-30.8,-20.8,20,9.25\n"
    ))
    table = read_pair_table(p)
    assert table.ranked and len(table.rows) == 4
    r = table.rows[0]
    assert (r.name_a, r.lat_a, r.lon_a, r.agl_a_m, r.name_b, r.agl_b_m) == ("A", -30.1, -20.1, 10.0, "B", 12.0)
    assert r.name == "A - B" and r.problem is None
    best = select_pairs(table, best=3)
    assert [x.row for x in best] == [2, 4, 1]  # 17.0, 9.25, 3.5; the row without a margin last
    assert [x.row for x in select_pairs(table, rows=[3, 1])] == [3, 1]
    assert [x.row for x in select_pairs(table, rows=[1, 2, 4], best=1)] == [2]


def test_tolerates_aliases_case_semicolons_and_a_bom(tmp_path):
    p = _write(tmp_path, (
        "\ufeffLink ID;Site A;A Lat;A Lon;Height A (m);Site B;Latitude B;Lng B;Mast B m;Design fade margin dB\n"
        "L7;North;10.5;20.5;30;South;10.4;20.6;25;4\n"
    ))
    table = read_pair_table(p)
    r = table.rows[0]
    assert (r.name, r.name_a, r.lat_a, r.lon_a, r.agl_a_m) == ("L7", "North", 10.5, 20.5, 30.0)
    assert (r.name_b, r.lat_b, r.lon_b, r.agl_b_m, r.fade_margin_db) == ("South", 10.4, 20.6, 25.0, 4.0)


def test_bad_rows_are_kept_with_a_sentence(tmp_path):
    p = _write(tmp_path, (
        "name_a,lat_a,lon_a,name_b,lat_b,lon_b\n"
        "A,north,-20.1,B,-30.2,-20.2\n"
        "C,-30.3,,D,-30.4,-20.4\n"
        "E,-30.5,-20.5,F,-30.6,-20.6\n"
    ))
    rows = read_pair_table(p).rows
    assert rows[0].problem == "row 1: lat_a 'north' is not a number"
    assert rows[1].problem == "row 2: lon_a is empty"
    assert rows[2].problem is None and rows[2].agl_a_m is None
    assert not read_pair_table(p).ranked
    # Without a fade-margin column, best keeps file order but puts bad rows last.
    assert [r.row for r in select_pairs(read_pair_table(p), best=2)] == [3, 1]


def test_missing_columns_name_what_was_found(tmp_path):
    p = _write(tmp_path, "site,lat,lon\nX,1,2\n")
    with pytest.raises(InputError, match=r"no column for lat_a, lon_a, lat_b, lon_b; columns found: site, lat, lon"):
        read_pair_table(p)
    with pytest.raises(InputError, match="no rows"):
        read_pair_table(_write(tmp_path, "lat_a,lon_a,lat_b,lon_b\n", "empty.csv"))
    with pytest.raises(InputError, match="empty file"):
        read_pair_table(_write(tmp_path, "", "blank.csv"))
    with pytest.raises(DataFileError, match="not found"):
        read_pair_table(tmp_path / "nope.csv")


def test_geopackage_lines_give_the_ends(tmp_path):
    import geopandas as gpd
    from shapely.geometry import LineString

    frame = gpd.GeoDataFrame(
        {"name_a": ["P"], "name_b": ["Q"], "agl_a_m": [12.0], "agl_b_m": [8.0], "fade_margin_db": [6.5]},
        geometry=[LineString([(500_000, 5_000_000), (503_000, 5_004_000)])], crs="EPSG:32633",
    )
    path = tmp_path / "pairs.gpkg"
    frame.to_file(path, layer="ranked", driver="GPKG")
    table = read_pair_table(path)
    r = table.rows[0]
    from pyproj import Transformer

    lon_a, lat_a = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True).transform(500_000, 5_000_000)
    assert (r.lat_a, r.lon_a) == (pytest.approx(lat_a), pytest.approx(lon_a))
    assert r.fade_margin_db == 6.5 and r.agl_b_m == 8.0 and r.problem is None
    assert read_pair_table(path, layer="ranked").rows[0].name == "P - Q"
    with pytest.raises(DataFileError, match="cannot read"):
        read_pair_table(path, layer="missing")


def test_row_spec():
    assert parse_row_spec("1,3,5-7") == [1, 3, 5, 6, 7]
    assert parse_row_spec(" 2 , 2") == [2]
    for bad in ("a", "3-1", "0", ","):
        with pytest.raises(InputError):
            parse_row_spec(bad)


def test_selecting_absent_rows_says_how_many_there_are(tmp_path):
    p = _write(tmp_path, "lat_a,lon_a,lat_b,lon_b\n1,2,3,4\n")
    with pytest.raises(InputError, match="no row 5; the table has rows 1 to 1"):
        select_pairs(read_pair_table(p), rows=[5])
    with pytest.raises(InputError, match="--best must be 1 or more"):
        select_pairs(read_pair_table(p), best=0)
    assert math.isnan(read_pair_table(_write(tmp_path, "lat_a,lon_a,lat_b,lon_b\n1,,3,4\n", "h.csv")).rows[0].lon_a)


def test_screening_result_reads_its_links_layer(tmp_path):
    # A screening GeoPackage holds 'sites' (points) and 'links'; without --layer the links are read.
    import warnings

    import geopandas as gpd
    from shapely.geometry import LineString, Point

    path = tmp_path / "result.gpkg"
    gpd.GeoDataFrame({"name": ["P"]}, geometry=[Point(10, 45)], crs="EPSG:4326").to_file(path, layer="sites")
    gpd.GeoDataFrame(
        {"site_a": ["P"], "site_b": ["Q"], "agl_a_m": [10.0], "agl_b_m": [9.0], "fade_margin_db": [3.0]},
        geometry=[LineString([(10, 45), (10.1, 45.1)])], crs="EPSG:4326",
    ).to_file(path, layer="links")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        table = read_pair_table(path)
    assert len(table.rows) == 1 and table.rows[0].agl_b_m == 9.0


def test_huge_row_selection_is_refused_before_any_allocation():
    from profiler.io.pairs import parse_row_spec

    with pytest.raises(InputError, match="at most 100,000"):
        parse_row_spec("1-999999999")
    assert parse_row_spec("1-3,7") == [1, 2, 3, 7]


def test_the_two_pair_readers_have_distinct_names_and_the_old_name_warns():
    import profiler.io.pairs as pairs_mod
    import profiler.io.sites as sites_mod

    assert pairs_mod.read_pair_table is not sites_mod.read_name_pairs
    for mod, new in ((pairs_mod, pairs_mod.read_pair_table), (sites_mod, sites_mod.read_name_pairs)):
        with pytest.warns(DeprecationWarning, match=new.__name__):
            assert mod.read_pairs is new
