"""Antenna heights above ground, above a roof, as elevations (profiler.mounts)."""

from __future__ import annotations

import pytest
import shapely

from profiler.budget import Radio
from profiler.errors import InputError
from profiler.link import Settings, Site, analyse_link
from profiler.mounts import Mount
from profiler.obstructions import LayerSpec, Surroundings, read_obstruction_layer
from profiler.terrain import ElevationModel

from tests.synthetic_urban import X0_M, Y0_M, flat_dtm, site_lonlat, write_layer


@pytest.fixture(scope="module")
def town(tmp_path_factory):
    """Flat ground at 100 m; a 14 m library around site a; an 8 m hall elsewhere; a tower with a top."""
    d = tmp_path_factory.mktemp("town")
    dtm = flat_dtm(d / "flat.tif")
    boxes = [shapely.box(150, 1450, 250, 1550), shapely.box(2700, 1650, 2900, 1750), shapely.box(1000, 0, 1010, 10)]
    write_layer(
        d / "b.gpkg", [shapely.affinity.translate(b, X0_M, Y0_M) for b in boxes],
        name=["Library", "Hall", "Tower"], height_m=[14.0, 8.0, None], top_m=[None, None, 160.0],
    )
    layer = read_obstruction_layer(LayerSpec(str(d / "b.gpkg")))
    with ElevationModel([dtm]) as model:
        yield model, Surroundings((layer,))


def _link(model, surroundings, mount_a=None, mount_b=None, a_xy=(200.0, 1500.0), b_xy=(2800.0, 1700.0)):
    a = Site("A", *site_lonlat(*a_xy), 10.0)
    b = Site("B", *site_lonlat(*b_xy), 10.0)
    return analyse_link(model, a, b, Radio(5.8), Settings(spacing_m=20.0), surroundings=surroundings,
                        mount_a=mount_a, mount_b=mount_b)


def test_antenna_above_the_roof(town):
    model, surroundings = town
    record = _link(model, surroundings, Mount("roof", 3.0), Mount("roof", 2.0)).record(0)
    a, b = record["sites"]["a"], record["sites"]["b"]
    assert a["antenna_reference"] == "roof" and a["antenna_above_roof_m"] == 3.0
    assert a["ground_m"] == pytest.approx(100.0)
    assert a["roof_m"] == pytest.approx(114.0) and a["building"]["feature"].startswith("Library")
    assert a["antenna_agl_m"] == pytest.approx(17.0) and a["antenna_amsl_m"] == pytest.approx(117.0)
    assert b["roof_m"] == pytest.approx(108.0) and b["antenna_amsl_m"] == pytest.approx(110.0)


def test_roof_from_an_absolute_top(town):
    model, surroundings = town
    record = _link(model, surroundings, Mount("roof", 1.0), a_xy=(1005.0, 5.0)).record(0)
    a = record["sites"]["a"]
    assert a["roof_m"] == pytest.approx(160.0) and a["building"]["height_m"] == pytest.approx(60.0)
    assert a["antenna_amsl_m"] == pytest.approx(161.0)


def test_elevation_and_ground_mounts(town):
    model, surroundings = town
    record = _link(model, surroundings, Mount("elevation", 131.5), Mount("ground", 12.0)).record(0)
    assert record["sites"]["a"]["antenna_agl_m"] == pytest.approx(31.5)
    assert record["sites"]["a"]["antenna_reference"] == "elevation"
    assert record["sites"]["b"]["antenna_amsl_m"] == pytest.approx(112.0)
    with pytest.raises(InputError, match="below the ground"):
        _link(model, surroundings, Mount("elevation", 90.0))


def test_ground_mount_inside_a_taller_building_is_warned(town):
    model, surroundings = town
    record = _link(model, surroundings, Mount("ground", 10.0)).record(0)
    assert any("Library" in w and "above the roof" in w for w in record["warnings"])
    assert record["meets_criterion"] is False  # its own roof blocks the antenna


def test_site_not_inside_any_building_is_refused(town):
    model, surroundings = town
    with pytest.raises(InputError, match=r"site a 'A' .* is not inside any building"):
        _link(model, surroundings, Mount("roof", 3.0), a_xy=(600.0, 1500.0))


def test_roof_mount_needs_a_building_layer(town):
    model, _ = town
    with pytest.raises(InputError, match="needs a building layer"):
        _link(model, None, Mount("roof", 3.0))


@pytest.mark.parametrize("mount, message", [
    (Mount("attic", 3.0), "unknown antenna height reference"),
    (Mount("roof", -1.0), "between 0 and 1000 m"),
    (Mount("ground", float("nan")), "finite"),
])
def test_bad_mounts(town, mount, message):
    model, surroundings = town
    with pytest.raises(InputError, match=message):
        _link(model, surroundings, mount)
