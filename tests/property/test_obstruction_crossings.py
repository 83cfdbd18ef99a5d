"""Property: any footprint crossing a path raises exactly the crossed stretch, by exactly its height."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import shapely
from geographiclib.geodesic import Geodesic
from hypothesis import example, given, settings
from hypothesis import strategies as st

from profiler.budget import Radio
from profiler.link import Settings, Site, analyse_link
from profiler.obstructions import LayerSpec, ObstructionLayer, Surroundings
from profiler.terrain import ElevationModel

from tests.synthetic_urban import X0_M, Y0_M, flat_dtm, site_lonlat, utm_to_lonlat

A_XY, B_XY = (150.0, 1200.0), (2850.0, 1900.0)
_MODEL: list = []


def _model(tmp_dir: Path) -> ElevationModel:
    if not _MODEL:
        _MODEL.append(ElevationModel([flat_dtm(tmp_dir / "flat.tif")]))
    return _MODEL[0]


def _layer(poly_xy, height_m: float) -> ObstructionLayer:
    ring = shapely.get_coordinates(poly_xy)
    lon, lat = utm_to_lonlat(X0_M + ring[:, 0], Y0_M + ring[:, 1])
    return ObstructionLayer(
        spec=LayerSpec("memory"), crs_name="WGS 84", geometry=np.array([shapely.Polygon(np.column_stack([lon, lat]))]),
        height_m=np.array([height_m]), top_m=np.array([np.nan]), feature_labels=("box",),
        height_field="height_m", top_field=None,
    )


@settings(max_examples=30, deadline=None)
@given(
    t=st.floats(0.05, 0.95),
    depth_m=st.floats(0.05, 120.0),
    angle_deg=st.floats(-60.0, 60.0),
    height_m=st.floats(0.5, 80.0),
    spacing_m=st.sampled_from([5.0, 25.0, 100.0]),
)
@example(t=0.6171875, depth_m=0.0625, angle_deg=0.0, height_m=1.0, spacing_m=5.0)  # once found failing
def test_crossed_stretch(tmp_path_factory, t, depth_m, angle_deg, height_m, spacing_m):
    model = _model(tmp_path_factory.getbasetemp())
    cx = A_XY[0] + t * (B_XY[0] - A_XY[0])
    cy = A_XY[1] + t * (B_XY[1] - A_XY[1])
    box = shapely.affinity.rotate(shapely.box(cx - depth_m / 2, cy - 150, cx + depth_m / 2, cy + 150), angle_deg)
    a = Site("A", *site_lonlat(*A_XY), 10.0)
    b = Site("B", *site_lonlat(*B_XY), 10.0)
    batch = analyse_link(model, a, b, Radio(5.8), Settings(spacing_m=spacing_m),
                         surroundings=Surroundings((_layer(box, height_m),)))
    p = batch.profiles
    n = int(p.n_samples[0])
    d, clutter = p.distance_m[0, :n], p.clutter_m[0, :n]
    # Independent: shapely in UTM, distances by geographiclib.
    xy = shapely.get_coordinates(shapely.intersection(shapely.LineString([A_XY, B_XY]), box))
    lat_a, lon_a = site_lonlat(*A_XY)
    dist = [Geodesic.WGS84.Inverse(lat_a, lon_a, *site_lonlat(x, y))["s12"] for x, y in xy]
    d0, d1 = min(dist), max(dist)
    # The two projections (UTM here, a local frame in the engine) agree to about a centimetre,
    # so samples within 2 cm of a footprint edge may fall either way.
    tol = 0.02
    raised = clutter > 0
    assert raised.sum() >= 1
    np.testing.assert_allclose(clutter[raised], height_m)
    assert np.all(raised[(d >= d0 + tol) & (d <= d1 - tol)])
    assert not np.any(raised[(d < d0 - tol) | (d > d1 + tol)])
    assert abs(d[raised].min() - d0) < tol and abs(d[raised].max() - d1) < tol
