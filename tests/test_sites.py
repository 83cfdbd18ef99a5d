"""Reading candidate sites: CSV and point layers, column choice, bad rows with row numbers."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.errors import InputError
from profiler.io.sites import read_name_pairs, read_sites

from tests._screening_data import DEMO_SITES


def test_demo_csv_reads_with_default_columns():
    sites, bad = read_sites(DEMO_SITES)
    assert bad == []
    assert len(sites) == 12
    assert sites.names[0] == "Orrin Water Tank"
    assert sites.antenna_agl_m[0] == 20.0
    assert np.all(sites.max_mast_m == 40.0)
    assert list(sites.extra.columns) == ["kind"]
    assert sites.rows[0] == 2  # header on line 1


def test_bad_rows_are_reported_with_line_numbers_and_skipped(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text(
        "name,latitude,longitude,antenna_agl_m\n"
        "A,46.1,10.1,10\n"
        "B,north,10.2,10\n"      # line 3: unparseable latitude
        "C,95,10.2,10\n"         # line 4: out of range
        "A,46.2,10.3,10\n"       # line 5: duplicate name
        ",46.2,10.3,10\n"        # line 6: no name
        "D,46.3,10.4,-2\n"       # line 7: negative height
        "E,46.4,10.5,\n"         # line 8: missing height
        "F,46.5,10.6,12\n"
    )
    sites, bad = read_sites(p)
    assert list(sites.names) == ["A", "F"]
    rows = {b.row: b.reason for b in bad}
    assert sorted(rows) == [3, 4, 5, 6, 7, 8]
    assert "'north' is not a number" in rows[3]
    assert "outside -90..90" in rows[4]
    assert "duplicate name (first on row 2)" in rows[5]
    assert "no name" in rows[6]
    assert "antenna height above ground (antenna_agl_m) must lie between 0 and 1000 m, got -2" in rows[7]
    assert "s.csv row 3" in bad[0].describe()


def test_named_columns_and_missing_columns(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("id,Y,X,h,g\nA,46.1,10.1,15,20\nB,46.2,10.2,25,23\n")
    sites, _ = read_sites(p, lat_col="Y", lon_col="X", agl_col="h", gain_col="g")
    assert list(sites.antenna_agl_m) == [15.0, 25.0]
    assert list(sites.gain_dbi) == [20.0, 23.0]
    with pytest.raises(InputError, match="which column holds the site lat"):
        read_sites(p)
    with pytest.raises(InputError, match="no column 'nope'"):
        read_sites(p, lat_col="nope", lon_col="X")


def test_point_layer_in_a_projected_crs(tmp_path):
    import geopandas as gpd
    from shapely.geometry import LineString, Point

    gdf = gpd.GeoDataFrame(
        {"name": ["P", "Q", "R"], "owner": ["x", "y", "z"]},
        geometry=[Point(510_000, 6_630_000), Point(515_000, 6_625_000), LineString([(0, 0), (1, 1)])],
        crs="EPSG:32727",
    )
    path = tmp_path / "s.gpkg"
    gdf.to_file(path, layer="candidates")
    sites, bad = read_sites(path, default_agl_m=12.0)
    assert list(sites.names) == ["P", "Q"]
    assert bad[0].row == 3 and "LineString" in bad[0].reason
    from pyproj import Transformer

    lon, lat = Transformer.from_crs("EPSG:32727", "EPSG:4326", always_xy=True).transform(510_000, 6_630_000)
    assert sites.lat_deg[0] == pytest.approx(lat, abs=1e-9)
    assert sites.lon_deg[0] == pytest.approx(lon, abs=1e-9)
    assert list(sites.antenna_agl_m) == [12.0, 12.0]
    assert list(sites.extra.columns) == ["owner"]


def test_pairs_file(tmp_path):
    p = tmp_path / "pairs.csv"
    p.write_text("a,b\nA,B\nB,A\nA,Z\nC,C\nC,A\n")
    a, b, bad = read_name_pairs(p, np.array(["A", "B", "C"], dtype=object))
    assert list(zip(a, b)) == [(0, 1), (2, 0)]
    assert [r.row for r in bad] == [3, 4, 5]
    assert "same pair as row 2" in bad[0].reason
    assert "'Z'" in bad[1].reason


def test_read_pairs_many_rows_equals_a_row_by_row_reading(tmp_path):
    """Whole-column reading keeps the row-by-row rules: unknown site, self pair, repeat (either way)."""
    rng = np.random.default_rng(1)
    names = np.array([f"s{i}" for i in range(30)])
    rows = []
    for _ in range(400):
        a, b = f"s{rng.integers(0, 35)}", f"s{rng.integers(0, 35)}"
        rows.append((a, a) if rng.random() < 0.1 else (a, b))
    path = tmp_path / "pairs.csv"
    path.write_text("a,b\n" + "".join(f" {a},{b}\n" for a, b in rows))
    index = {n: k for k, n in enumerate(names)}
    ref_a, ref_b, ref_bad, seen = [], [], [], {}
    for k, (na, nb) in enumerate(rows):
        row = k + 2
        if na not in index or nb not in index:
            ref_bad.append((row, f"site {(na if na not in index else nb)!r} is not among the usable sites"))
        elif na == nb:
            ref_bad.append((row, "pairs a site with itself"))
        elif (key := tuple(sorted((index[na], index[nb])))) in seen:
            ref_bad.append((row, f"same pair as row {seen[key]}"))
        else:
            seen[key] = row
            ref_a.append(index[na])
            ref_b.append(index[nb])
    a, b, bad = read_name_pairs(path, names)
    assert a.tolist() == ref_a and b.tolist() == ref_b
    assert [(r.row, r.reason) for r in bad] == ref_bad
    assert {r.reason.split()[0] for r in bad} == {"site", "pairs", "same"}


def test_semicolon_file_with_decimal_commas_and_blank_optional_cells(tmp_path):
    p = tmp_path / "semi.csv"
    p.write_text("name;lat;lon;antenna_agl_m;gain_dbi;max_mast_m\n"
                 "A;46,1;10,1;12,5;23;40\n"
                 "B;46,2;10,2;15;;\n"        # blank gain and mast limit: not given, row kept
                 "C;46,3;10,3;abc;20;30\n")  # garbage height: skipped with its reason
    sites, bad = read_sites(p)
    assert list(sites.names) == ["A", "B"]
    assert sites.lat_deg.tolist() == [46.1, 46.2] and sites.antenna_agl_m.tolist() == [12.5, 15.0]
    assert np.isnan(sites.gain_dbi[1]) and np.isnan(sites.max_mast_m[1])
    assert [b.row for b in bad] == [4] and "'abc' is not a number" in bad[0].reason


def test_tab_separated_txt_is_sniffed(tmp_path):
    p = tmp_path / "tabs.txt"
    p.write_text("name\tlat\tlon\nA\t46.1\t10.1\nB\t46.2\t10.2\n")
    sites, bad = read_sites(p)
    assert list(sites.names) == ["A", "B"] and not bad


def test_truncated_column_is_reported_not_defaulted(tmp_path):
    p = tmp_path / "cut.csv"
    p.write_text("name,lat,lon,antenna_ag\nA,46.1,10.1,25\nB,46.2,10.2,30\n")
    with pytest.raises(InputError, match="'antenna_ag' looks like one.*agl_col=antenna_ag"):
        read_sites(p)
    sites, _ = read_sites(p, agl_col="antenna_ag")
    assert sites.antenna_agl_m.tolist() == [25.0, 30.0]


def test_columns_say_where_each_role_came_from(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("site,latitude,longitude\nA,46.1,10.1\nB,46.2,10.2\n")
    sites, _ = read_sites(p)
    text = sites.describe_columns()
    assert "name from 'site'" in text and "latitude from 'latitude'" in text
    assert "antenna height from default 10 m for every site (no height column)" in text
    sites, _ = read_sites(p, default_agl_m=7.0)
    assert "--agl-m 7 m for every site" in sites.describe_columns()
    with pytest.raises(InputError, match="default_agl_m: antenna height") as info:
        read_sites(p, default_agl_m=-5.0)
    assert info.value.parameter == "default_agl_m"


def test_longitudes_in_0_360_are_folded_and_heights_bounded(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("name,lat,lon,antenna_agl_m\nA,46.1,350.5,10\nB,46.2,10.2,5000\nC,46.3,361,10\n")
    sites, bad = read_sites(p)
    assert list(sites.names) == ["A"] and sites.lon_deg[0] == pytest.approx(-9.5)
    reasons = {b.row: b.reason for b in bad}
    assert "between 0 and 1000" in reasons[3] and "longitude 361" in reasons[4]


def test_near_match_with_an_explicit_default_height_uses_the_default(tmp_path):
    p = tmp_path / "cut.csv"
    p.write_text("name,lat,lon,antenna_ag\nA,46.1,10.1,25\nB,46.2,10.2,30\n")
    sites, _ = read_sites(p, default_agl_m=12.0)
    assert sites.antenna_agl_m.tolist() == [12.0, 12.0]
    assert "--agl-m 12 m for every site" in sites.describe_columns()


def test_decimal_commas_in_a_comma_separated_file_get_a_hint(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("name,lat,lon\nA,46,1,10,1\nB,46.2,10.2\n")
    with pytest.raises(InputError, match="line 2 has 5 cells but the header has 3; numbers with decimal commas"):
        read_sites(p)


def test_shapefile_cut_column_names_are_reported(tmp_path):
    """A Shapefile keeps 10 characters of a field name: antenna_agl_m becomes antenna_ag."""
    import warnings

    gpd = pytest.importorskip("geopandas")
    from shapely.geometry import Point

    frame = gpd.GeoDataFrame({"name": ["A", "B"], "antenna_agl_m": [25.0, 30.0]},
                             geometry=[Point(10.1, 46.1), Point(10.2, 46.2)], crs="EPSG:4326")
    path = tmp_path / "sites.shp"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the writer warns that it cuts the name
        frame.to_file(path)
    with pytest.raises(InputError, match="'antenna_ag' looks like one"):
        read_sites(path)
