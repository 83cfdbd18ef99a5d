"""Bad-input corpus: `terrahop screen` outputs (inputs never overwritten, existing results, staging, live runs).

Harness in tests/cli/bad_input.py: exit code, one line on stderr, no
traceback, every listed file unchanged.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys

import pytest

from tests._screening_data import DEMO_DEM, DEMO_SITES, REPO
from tests.cli.bad_input import assert_refused

RADIO = ["--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi", "23"]


def _screen(sites, out, *extra, dem=DEMO_DEM):
    return ["screen", str(sites), "--dem", str(dem), *RADIO, "--workers", "1", "--chunk-pairs", "9", "--out",
            str(out), *extra]


@pytest.fixture
def sites(tmp_path):
    path = tmp_path / "sites.csv"
    shutil.copy(DEMO_SITES, path)
    return path


# --------------------------------------------------------------------------- outputs that are inputs

def test_out_is_the_sites_file(sites):
    assert_refused(_screen(sites, sites), ["would overwrite the input", "sites.csv"], inputs=[sites])


def test_sites_file_is_named_like_the_results_sites_file(tmp_path):
    sites = tmp_path / "r-sites.csv"
    shutil.copy(DEMO_SITES, sites)
    assert_refused(_screen(sites, tmp_path / "r.csv"), ["would overwrite the input", "r-sites.csv"],
                   inputs=[sites])


def test_sites_geojson_named_like_the_results_sites_file(tmp_path, sites):
    layer = tmp_path / "towers-sites.geojson"
    layer.write_text(_geojson_of(sites))
    assert_refused(_screen(layer, tmp_path / "towers.geojson"), ["would overwrite", "towers-sites.geojson"],
                   inputs=[layer])


def _geojson_of(csv_path):
    import pandas as pd

    rows = pd.read_csv(csv_path)
    feats = [{"type": "Feature", "geometry": {"type": "Point", "coordinates": [r.lon, r.lat]},
              "properties": {"name": r["name"], "antenna_agl_m": float(r.antenna_agl_m)}}
             for _, r in rows.iterrows()]
    return json.dumps({"type": "FeatureCollection", "features": feats})


def test_out_is_the_pairs_file(tmp_path, sites):
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b\nOrrin Water Tank,Brackwell Silo\n")
    assert_refused(_screen(sites, pairs, "--pairs", pairs), ["would overwrite the input", "pairs.csv"],
                   inputs=[sites, pairs])


def test_out_is_a_raster(tmp_path, sites):
    dem = tmp_path / "dem.gpkg"
    shutil.copy(DEMO_DEM, dem)
    assert_refused(_screen(sites, dem, dem=dem), ["would overwrite the input", "dem.gpkg"], inputs=[sites, dem])


def test_sites_file_inside_the_staging_folder(tmp_path):
    folder = tmp_path / "r.csv.partial"
    folder.mkdir()
    sites = folder / "sites.csv"
    shutil.copy(DEMO_SITES, sites)
    assert_refused(_screen(sites, tmp_path / "r.csv"), ["would overwrite the input", "staging folder"],
                   inputs=[folder])


def test_sites_file_named_like_the_lock(tmp_path):
    sites = tmp_path / "r.csv.lock"
    shutil.copy(DEMO_SITES, sites)
    assert_refused(_screen(sites, tmp_path / "r.csv"), ["would overwrite the input", "lock file"], inputs=[sites])


def test_out_is_a_symbolic_link_to_the_sites_file(tmp_path, sites):
    link = tmp_path / "result.csv"
    link.symlink_to(sites)
    assert_refused(_screen(sites, link), ["would overwrite the input"], inputs=[sites])


def test_out_is_a_hard_link_to_the_sites_file(tmp_path, sites):
    link = tmp_path / "result.csv"
    os.link(sites, link)
    assert_refused(_screen(sites, link), ["would overwrite the input"], inputs=[sites])


def test_out_spelled_another_way_is_still_the_sites_file(tmp_path, sites):
    (tmp_path / "sub").mkdir()
    assert_refused(_screen(sites, tmp_path / "sub" / ".." / "sites.csv"), ["would overwrite the input"],
                   inputs=[sites])


# --------------------------------------------------------------------------- existing results

def test_an_existing_result_is_kept_without_overwrite(tmp_path, sites):
    out = tmp_path / "r.csv"
    out.write_text("an earlier result\n")
    (tmp_path / "r-sites.csv").write_text("its sites\n")
    assert_refused(_screen(sites, out), ["exists", "--overwrite"], inputs=[sites, out, tmp_path / "r-sites.csv"])


def test_an_existing_sites_companion_is_kept_without_overwrite(tmp_path, sites):
    companion = tmp_path / "r-sites.geojson"
    companion.write_text("{}")
    assert_refused(_screen(sites, tmp_path / "r.geojson"), ["r-sites.geojson exists", "--overwrite"],
                   inputs=[sites, companion])


# --------------------------------------------------------------------------- interrupted runs

@pytest.fixture
def interrupted(tmp_path, sites, monkeypatch):
    """An in-process run stopped after 3 chunks: (command, output, staging folder)."""
    from click.testing import CliRunner

    from profiler import screening
    from profiler.cli.main import cli

    real = screening.evaluate_chunk
    calls = {"n": 0}

    def stopping(model, task):
        calls["n"] += 1
        if calls["n"] > 3:
            raise KeyboardInterrupt
        return real(model, task)

    monkeypatch.setattr(screening.executors, "evaluate_chunk", stopping)
    out = tmp_path / "r.csv"
    args = _screen(sites, out)
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 130, result.output
    monkeypatch.setattr(screening.executors, "evaluate_chunk", real)
    staging = tmp_path / "r.csv.partial"
    assert json.loads((staging / "progress.json").read_text())["rows"] == 27
    return args, out, staging


def test_garbage_progress_file_on_resume(interrupted, sites):
    args, _, staging = interrupted
    (staging / "progress.json").write_text("\x00\x00garbage{")
    assert_refused(args + ["--resume"], ["damaged", "progress.json", "--restart"], inputs=[sites, staging])


def test_progress_file_with_wrong_types_on_resume(interrupted, sites):
    args, _, staging = interrupted
    (staging / "progress.json").write_text('{"rows": -4, "chunks": "x"}')
    assert_refused(args + ["--resume"], ["damaged", "--restart"], inputs=[sites, staging])


def test_garbage_manifest_on_resume(interrupted, sites):
    args, _, staging = interrupted
    (staging / "manifest.json").write_text("[]")
    assert_refused(args + ["--resume"], ["damaged", "manifest.json", "--restart"], inputs=[sites, staging])


def test_a_changed_byte_in_a_staged_column_on_resume(interrupted, sites):
    args, _, staging = interrupted
    col = staging / "columns" / "rx_level_dbm.bin"
    data = bytearray(col.read_bytes())
    data[100] ^= 0x01
    col.write_bytes(bytes(data))
    assert_refused(args + ["--resume"], ["damaged", "rx_level_dbm", "checksum", "--restart"],
                   inputs=[sites, staging])


def test_a_truncated_staged_column_on_resume(interrupted, sites):
    args, _, staging = interrupted
    with open(staging / "columns" / "distance_km.bin", "r+b") as fh:
        fh.truncate(16)
    assert_refused(args + ["--resume"], ["damaged", "distance_km", "shorter", "--restart"], inputs=[sites, staging])


def test_a_damaged_finish_marker_on_resume(interrupted, sites):
    args, _, staging = interrupted
    (staging / "finish.json").write_text("not json")
    assert_refused(args + ["--resume"], ["damaged", "finish.json", "--restart"], inputs=[sites, staging])


def test_a_leftover_run_without_resume_gets_the_hint(interrupted, sites):
    args, _, staging = interrupted
    assert_refused(args, ["interrupted run", "--resume", "--restart"], inputs=[sites, staging])


def test_resume_with_other_settings(interrupted, sites):
    args, _, staging = interrupted
    other = [a if a != "5.8" else "5.9" for a in args]
    assert_refused(other + ["--resume"], ["different inputs", "--restart"], inputs=[sites, staging])


# --------------------------------------------------------------------------- a live run

_HOLD = ("import sys; from profiler.io.stage import RunLock; RunLock(sys.argv[1], 'r').acquire(); "
         "print('held', flush=True); sys.stdin.read()")


@pytest.fixture
def live_lock(tmp_path):
    """A process holding the lock of tmp_path/r.csv (as a running screen does); yields its PID."""
    proc = subprocess.Popen([sys.executable, "-c", _HOLD, str(tmp_path / "r.csv.lock")], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, text=True, env=dict(os.environ, PYTHONPATH=str(REPO)))
    assert proc.stdout.readline().strip() == "held"
    yield proc.pid
    proc.stdin.close()
    proc.wait(timeout=30)


@pytest.mark.parametrize("flags", [[], ["--resume"], ["--restart"], ["--overwrite"]])
def test_a_live_run_on_the_same_output(tmp_path, sites, live_lock, flags):
    out = assert_refused(_screen(sites, tmp_path / "r.csv", *flags), ["in progress", f"PID {live_lock}"],
                         inputs=[sites, tmp_path / "r.csv.lock"])
    assert "--resume" not in out.stderr
    assert not (tmp_path / "r.csv.partial").exists()


# --------------------------------------------------------------------------- a staging path that is not ours

@pytest.mark.parametrize("flags", [[], ["--restart"], ["--resume"]])
def test_a_file_where_the_staging_folder_goes_is_left_alone(tmp_path, sites, flags):
    mine = tmp_path / "r.csv.partial"
    mine.write_text("a planner's own notes\n")
    assert_refused(_screen(sites, tmp_path / "r.csv", *flags), ["not a terrahop staging folder"],
                   inputs=[sites, mine])


def test_a_folder_of_other_files_where_the_staging_folder_goes_is_left_alone(tmp_path, sites):
    mine = tmp_path / "r.csv.partial"
    mine.mkdir()
    (mine / "survey.txt").write_text("tower survey\n")
    assert_refused(_screen(sites, tmp_path / "r.csv", "--restart"), ["not a terrahop staging folder"],
                   inputs=[sites, mine])
    assert (mine / "survey.txt").exists()


def test_out_is_a_source_of_a_vrt(tmp_path, sites):
    import rasterio
    from xml.sax.saxutils import escape

    tile = tmp_path / "tile.gpkg"  # a GeoTIFF under another name: GDAL opens it by its content
    shutil.copy(DEMO_DEM, tile)
    vrt = tmp_path / "dem.vrt"
    with rasterio.open(tile) as ds:
        gt = ", ".join(repr(v) for v in ds.transform.to_gdal())
        kind = {"float32": "Float32", "float64": "Float64", "int16": "Int16", "int32": "Int32",
                "uint16": "UInt16"}[ds.dtypes[0]]
        nodata = "" if ds.nodata is None else f"<NoDataValue>{ds.nodata!r}</NoDataValue>"
        vrt.write_text(
            f'<VRTDataset rasterXSize="{ds.width}" rasterYSize="{ds.height}">'
            f"<SRS>{escape(ds.crs.to_wkt())}</SRS><GeoTransform>{gt}</GeoTransform>"
            f'<VRTRasterBand dataType="{kind}" band="1">{nodata}<SimpleSource>'
            '<SourceFilename relativeToVRT="1">tile.gpkg</SourceFilename><SourceBand>1</SourceBand>'
            "</SimpleSource></VRTRasterBand></VRTDataset>"
        )
    with rasterio.open(vrt) as ds:
        assert any(f.endswith("tile.gpkg") for f in ds.files)
    assert_refused(_screen(sites, tile, dem=vrt), ["would overwrite the input", "tile.gpkg"],
                   inputs=[sites, tile, vrt])
