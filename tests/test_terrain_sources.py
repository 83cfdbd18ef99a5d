"""Fetching open elevation tiles over real HTTP from a local server (tests/terrain_server.py).

No mocked client: profiler.terrain_sources talks to a stdlib server on
127.0.0.1 that serves generated tiles in each dataset's layout and injects
faults (404, 500, cut body, slow answer, not a raster).
"""

from __future__ import annotations

import os
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest
import rasterio

from profiler.errors import DataError, DataFileError, InputError
from profiler.terrain import ElevationModel
from profiler.terrain_sources import DATASETS, TerrainRequest, dataset, ensure_area, ensure_bbox
from profiler.terrain_sources.area import SeaTileWarning, bbox_around
from profiler.terrain_sources.datasets import tile_origins
from tests.terrain_server import TEST_ROWS, copernicus_tiles, tile_server, write_hgt_tile  # noqa: F401

REPO = Path(__file__).resolve().parents[1]
COP = dataset("copernicus-30")
N45E007 = COP.tile_path(45, 7)


def test_tile_names_follow_each_layout():
    assert COP.tile_path(45, 7) == ("Copernicus_DSM_COG_10_N45_00_E007_00_DEM/"
                                    "Copernicus_DSM_COG_10_N45_00_E007_00_DEM.tif")
    assert dataset("copernicus-90").tile_path(-34, -71) == ("Copernicus_DSM_COG_30_S34_00_W071_00_DEM/"
                                                            "Copernicus_DSM_COG_30_S34_00_W071_00_DEM.tif")
    assert dataset("srtm-1").tile_path(-34, -71) == "S34/S34W071.hgt.gz"
    assert dataset("SRTM-1").vertical_datum == "EGM96" and COP.vertical_datum == "EGM2008"
    assert COP.surface_model and not dataset("srtm-1").surface_model


def test_cli_source_names_equal_the_datasets():
    from profiler.cli.terrain import SOURCE_NAMES

    assert tuple(DATASETS) == SOURCE_NAMES


def test_unknown_source_names_the_known_ones():
    with pytest.raises(InputError, match="copernicus-30, copernicus-90, srtm-1"):
        dataset("aster")


def test_tiles_of_a_box_and_a_margin():
    assert tile_origins((7.2, 45.1, 7.9, 45.9)) == [(45, 7)]
    assert tile_origins((-71.5, -34.5, -70.5, -33.5)) == [(-35, -72), (-35, -71), (-34, -72), (-34, -71)]
    w, s, e, n = bbox_around([45.5], [7.5], 5.0)
    assert n - 45.5 == pytest.approx(5000 / 111_320) and e - 7.5 > n - 45.5  # degrees of longitude are shorter


def test_fetch_gives_the_served_heights_and_a_second_run_asks_nothing(tile_server, tmp_path):
    served = copernicus_tiles(tile_server.root, [(45, 7), (45, 8)])
    request = TerrainRequest("copernicus-30", tile_server.url)
    first = ensure_bbox(request, (7.5, 45.2, 8.5, 45.8))
    assert [t.status for t in first.tiles] == ["downloaded", "downloaded"]
    assert len(tile_server.hits) == 2
    lon, lat = np.array([7.31, 7.77, 7.02, 7.995]), np.array([45.4, 45.61, 45.33, 45.002])
    with ElevationModel([first.vrt]) as via_vrt:
        z_vrt, _ = via_vrt.sample(lon, lat)
        z_vrt_east, _ = via_vrt.sample(lon + 1, lat)
        assert via_vrt.describe()[0]["vertical_datum"] == "EGM2008 height"
    with ElevationModel([str(served[0])]) as direct:
        z_direct, _ = direct.sample(lon, lat)
    with ElevationModel([str(served[1])]) as direct_east:
        z_direct_east, _ = direct_east.sample(lon + 1, lat)
    # The VRT's grid starts where the first tile does: the same cells and weights, bit for bit.
    assert np.array_equal(z_vrt, z_direct)
    # In the second tile the pixel coordinates are counted from the VRT's origin a degree away:
    # the same cells, weights equal to rounding (about 1e-13 m).
    np.testing.assert_allclose(z_vrt_east, z_direct_east, rtol=0, atol=1e-9)
    second = ensure_bbox(request, (7.5, 45.2, 8.5, 45.8))
    assert [t.status for t in second.tiles] == ["cached", "cached"]
    assert len(tile_server.hits) == 2  # no request
    assert [t.sha256 for t in second.tiles] == [t.sha256 for t in first.tiles]
    prov = second.provenance()
    assert prov["vertical_datum"] == "EGM2008 (EPSG:3855)" and prov["tiles"][0]["tile"] == "N45E007"


def test_a_500_then_a_cut_body_resume_with_range(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    tile_server.faults[N45E007] = ["500", "cut"]
    fetched = ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    ranges = tile_server.hits_of(N45E007)
    assert ranges[:2] == [None, None] and ranges[2] is not None and ranges[2].startswith("bytes=")
    assert int(ranges[2][6:-1]) > 0
    assert Path(fetched.tiles[0].path).read_bytes() == (tile_server.root / N45E007).read_bytes()


def test_a_slow_answer_times_out_and_is_tried_again(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    tile_server.faults[N45E007] = ["slow"]
    fetched = ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    assert len(tile_server.hits_of(N45E007)) == 2 and fetched.tiles[0].status == "downloaded"


def test_lasting_failures_give_one_error_naming_the_tile(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    tile_server.faults[N45E007] = ["500"] * 10
    with pytest.raises(DataError, match=r"N45E007 .* after 5 tries \(last: HTTP 500"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    assert not any(p.suffix == ".tif" for p in (Path(os.environ["TERRAHOP_CACHE"])).rglob("*.tif"))


def test_a_file_that_is_not_a_raster_is_refused_and_not_kept(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    tile_server.faults[N45E007] = ["junk"]
    with pytest.raises(DataError, match="N45E007 .* not a raster"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    cache = Path(os.environ["TERRAHOP_CACHE"])
    assert not list(cache.rglob("*.tif")) and not list(cache.rglob("*.part"))


def test_a_tile_of_the_wrong_size_is_refused(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)], rows=120)
    with pytest.raises(DataError, match="120 x 120 cells, not the 300 x 300"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))


def test_open_sea_is_0m_remembered_and_warned(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    request = TerrainRequest("copernicus-30", tile_server.url)
    with pytest.warns(SeaTileWarning, match="N45E008 .*open sea.* 0 m above EGM2008"):
        fetched = ensure_bbox(request, (7.5, 45.2, 8.5, 45.8))
    assert [t.status for t in fetched.tiles] == ["downloaded", "sea"]
    with ElevationModel([fetched.vrt]) as model:
        z, ok = model.sample(np.array([8.3, 8.9]), np.array([45.5, 45.1]))
    assert ok.all() and np.array_equal(z, [0.0, 0.0])
    assert "open sea" in fetched.provenance()["tiles"][1]["note"]
    hits = len(tile_server.hits)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SeaTileWarning)
        again = ensure_bbox(request, (7.5, 45.2, 8.5, 45.8))
    assert len(tile_server.hits) == hits and again.tiles[1].status == "sea"


def test_offline_uses_only_the_cache(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    with pytest.raises(DataError, match=r"--offline: copernicus-30 tile N45E007 not in the cache; .*"
                                        r"terrahop terrain fetch copernicus-30 --bbox 7,45,8,46"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url, offline=True), (7.2, 45.2, 7.8, 45.8))
    assert tile_server.hits == []
    ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    tile_server.stop()
    fetched = ensure_bbox(TerrainRequest("copernicus-30", "http://127.0.0.1:9", offline=True),
                          (7.2, 45.2, 7.8, 45.8))
    assert fetched.tiles[0].status == "cached"


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes anywhere")
def test_an_unwritable_cache_is_a_clear_error(tile_server, tmp_path, monkeypatch):
    locked = tmp_path / "locked"
    locked.mkdir(mode=0o500)
    monkeypatch.setenv("TERRAHOP_CACHE", str(locked / "cache"))
    with pytest.raises(DataFileError, match="cannot write the terrain cache folder .*TERRAHOP_CACHE"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))


def test_a_cache_that_is_a_file_is_a_clear_error(tile_server, tmp_path, monkeypatch):
    blocker = tmp_path / "blocker"
    blocker.write_text("not a folder")
    monkeypatch.setenv("TERRAHOP_CACHE", str(blocker))
    with pytest.raises(DataFileError, match="cannot write the terrain cache folder .*TERRAHOP_CACHE"):
        ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))


def test_file_url_folder_works_and_a_missing_file_is_sea(tmp_path, monkeypatch):
    monkeypatch.setenv("TERRAHOP_CACHE", str(tmp_path / "cache"))
    monkeypatch.setenv("TERRAHOP_TILE_ROWS", str(TEST_ROWS))
    copernicus_tiles(tmp_path / "mirror", [(45, 7)])
    with pytest.warns(SeaTileWarning):
        fetched = ensure_bbox(TerrainRequest("copernicus-30", (tmp_path / "mirror").as_uri()),
                              (7.5, 45.2, 8.5, 45.8))
    assert [t.status for t in fetched.tiles] == ["downloaded", "sea"]


def test_url_from_the_environment(tile_server, monkeypatch):
    copernicus_tiles(tile_server.root, [(45, 7)])
    monkeypatch.setenv("TERRAHOP_TERRAIN_URL", tile_server.url)
    fetched = ensure_area(TerrainRequest("copernicus-30"), [45.5], [7.5], 1.0)
    assert fetched.base_url == tile_server.url and fetched.tiles[0].status == "downloaded"


def test_srtm_hgt_tiles_are_decompressed_checked_and_egm96(tile_server):
    d = dataset("srtm-1")
    write_hgt_tile(tile_server.root / d.tile_path(45, 7), 45, 7)
    fetched = ensure_bbox(TerrainRequest("srtm-1", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    path = Path(fetched.tiles[0].path)
    assert path.name == "N45E007.hgt" and path.stat().st_size == 3601 * 3601 * 2
    raw = np.fromfile(path, dtype=">i2").reshape(3601, 3601)
    with rasterio.open(fetched.vrt) as vrt:
        assert vrt.crs.to_string() in ("EPSG:9705", "EPSG:4326+5773") or "EGM96" in vrt.crs.to_wkt()
        assert np.array_equal(vrt.read(1), raw)


FETCH_ONE = """
import sys
from profiler.terrain_sources import TerrainRequest, ensure_bbox
f = ensure_bbox(TerrainRequest("copernicus-30", sys.argv[1]), (7.2, 45.2, 7.8, 45.8))
print(f.tiles[0].status)
"""


def test_two_processes_fetching_one_tile_leave_one_good_file(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    tile_server.faults[N45E007] = ["slow"]  # the first download holds the lock while the other waits
    tile_server.slow_s = 0.5
    env = dict(os.environ, PYTHONPATH=str(REPO), TERRAHOP_FETCH_TIMEOUT_S="5")
    procs = [subprocess.Popen([sys.executable, "-c", FETCH_ONE, tile_server.url], env=env,
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(2)]
    outs = [p.communicate(timeout=120) for p in procs]
    assert all(p.returncode == 0 for p in procs), outs
    assert sorted(o[0].strip() for o in outs) == ["cached", "downloaded"]
    assert len(tile_server.hits_of(N45E007)) == 1
    cache = Path(os.environ["TERRAHOP_CACHE"])
    tiles = list(cache.rglob("*.tif"))
    assert len(tiles) == 1 and tiles[0].read_bytes() == (tile_server.root / N45E007).read_bytes()
    assert not list(cache.rglob("*.part"))


def test_a_part_left_by_a_killed_run_is_resumed(tile_server):
    copernicus_tiles(tile_server.root, [(45, 7)])
    body = (tile_server.root / N45E007).read_bytes()
    cache = Path(os.environ["TERRAHOP_CACHE"]) / "terrain" / "copernicus-30"
    part = cache / Path(N45E007).parent / (Path(N45E007).name + ".part")
    part.parent.mkdir(parents=True)
    part.write_bytes(body[:1000])
    fetched = ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    assert tile_server.hits_of(N45E007) == ["bytes=1000-"]
    assert Path(fetched.tiles[0].path).read_bytes() == body and not part.exists()
    import hashlib

    assert fetched.tiles[0].sha256 == hashlib.sha256(body).hexdigest()


def test_a_partial_mirror_does_not_mark_the_sources_tiles_as_sea(tile_server, tmp_path):
    copernicus_tiles(tile_server.root, [(45, 7)])
    (tmp_path / "empty-mirror").mkdir()
    with pytest.warns(SeaTileWarning):
        from_mirror = ensure_bbox(TerrainRequest("copernicus-30", str(tmp_path / "empty-mirror")),
                                  (7.2, 45.2, 7.8, 45.8))
    assert from_mirror.tiles[0].status == "sea" and from_mirror.base_url.startswith("file://")
    from_source = ensure_bbox(TerrainRequest("copernicus-30", tile_server.url), (7.2, 45.2, 7.8, 45.8))
    assert from_source.tiles[0].status == "downloaded"


@pytest.mark.parametrize("url, words", [("/no/such/folder", "nor an existing folder"),
                                        ("gopher://x", "not gopher"), ("http://[bad", "not a URL")])
def test_bad_base_urls(url, words):
    with pytest.raises(InputError, match=words):
        TerrainRequest("srtm-1", url).base_url()
