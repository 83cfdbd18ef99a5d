"""Link lines of the vector outputs: cut at the antimeridian, unwrapped for the GeoPackage, none for error rows."""

from __future__ import annotations

import numpy as np
import shapely

from profiler.io.geolines import geodesic_parts, line_geometries


def test_line_across_the_antimeridian_is_cut_at_plus_minus_180():
    (parts,) = geodesic_parts(179.8, -17.0, -179.7, -17.2)
    assert len(parts) == 2
    first, second = parts
    assert first[0].tolist() == [179.8, -17.0] and second[-1].tolist() == [-179.7, -17.2]
    assert first[-1, 0] == 180.0 and second[0, 0] == -180.0
    assert first[-1, 1] == second[0, 1]  # one latitude at the cut
    assert (first[:, 0] > 179).all() and (second[:, 0] < -179).all()
    # westward too
    (parts,) = geodesic_parts(-179.7, -17.2, 179.8, -17.0)
    assert [p[0, 0] for p in parts] == [-179.7, 180.0] and parts[0][-1, 0] == -180.0


def test_geometries_split_unwrapped_and_missing():
    lon_a, lat_a = np.array([179.8, 10.0, 5.0]), np.array([-17.0, 45.0, 45.0])
    lon_b, lat_b = np.array([-179.7, 10.2, 5.0]), np.array([-17.2, 45.1, 45.0])
    drawn = np.array([True, True, False])
    geoms = line_geometries(lon_a, lat_a, lon_b, lat_b, drawn)
    assert geoms[0].geom_type == "MultiLineString" and geoms[1].geom_type == "LineString" and geoms[2] is None
    flat = line_geometries(lon_a, lat_a, lon_b, lat_b, drawn, unwrap=True)
    assert flat[0].geom_type == "LineString"
    xy = shapely.get_coordinates(flat[0])
    assert xy[0, 0] == 179.8 and xy[-1, 0] == 360.0 - 179.7  # runs on past 180
    assert np.all(np.abs(np.diff(xy[:, 0])) < 0.02)
    assert flat[1].equals_exact(geoms[1], 0) and flat[2] is None
