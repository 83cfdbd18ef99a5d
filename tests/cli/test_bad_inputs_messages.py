"""Bad-input corpus: messages and plumbing (damaged rasters, VRT sources, --scheduler, skipped rows).

Harness in tests/cli/bad_input.py.  Besides the refusals, this file checks the
quiet edges: broken pipes, warnings on stderr, no numpy RuntimeWarning text.
"""

from __future__ import annotations

import socket
import subprocess as sp
import sys
import warnings

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, REPO

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
DEMO_SITES = REPO / "data" / "demo" / "sites.csv"
SITES_AB = ["--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5.8"]


@pytest.fixture(scope="module")
def damaged(tmp_path_factory):
    """A truncated GeoTIFF (header intact, tiles cut), one with its header cut, and a VRT whose source is gone."""
    import rasterio

    folder = tmp_path_factory.mktemp("damaged")
    with rasterio.open(DEMO_DEM) as src:
        profile, cells = src.profile, src.read(1)
    full = folder / "full.tif"
    with rasterio.open(full, "w", **profile) as dst:  # GDAL writes the header first in a new file
        dst.write(cells, 1)
    data = full.read_bytes()
    (folder / "cut.tif").write_bytes(data[:30000])
    tail_first = DEMO_DEM.read_bytes()
    (folder / "nohead.tif").write_bytes(tail_first[: len(tail_first) // 3])  # the demo file's header is at its end
    (folder / "text.tif").write_text("not a raster\n")
    t = profile["transform"]
    (folder / "gone.vrt").write_text(f"""<VRTDataset rasterXSize="{profile['width']}" rasterYSize="{profile['height']}">
  <SRS>EPSG:32727</SRS>
  <GeoTransform>{t.c}, {t.a}, 0, {t.f}, 0, {t.e}</GeoTransform>
  <VRTRasterBand dataType="Float32" band="1">
    <SimpleSource>
      <SourceFilename relativeToVRT="1">tiles/missing-tile.tif</SourceFilename>
      <SourceBand>1</SourceBand>
    </SimpleSource>
  </VRTRasterBand>
</VRTDataset>
""")
    (folder / "good.vrt").write_text((folder / "gone.vrt").read_text().replace("tiles/missing-tile.tif", "full.tif"))
    return folder


# --------------------------------------------------------------------------- damaged rasters

def test_link_truncated_geotiff_names_file_and_cause(damaged):
    assert_refused(["link", "--dem", damaged / "cut.tif", *SITES_AB], ["cut.tif", "damaged or truncated"],
                   inputs=[damaged])


def test_screen_truncated_geotiff_names_file_and_cause(damaged, tmp_path):
    out = assert_refused(["screen", DEMO_SITES, "--dem", damaged / "cut.tif", "--freq-ghz", "5.8",
                          "--out", tmp_path / "r.csv", "--workers", "1"],
                         ["cut.tif", "damaged or truncated"], inputs=[damaged, DEMO_SITES], subprocess=True)
    assert "Read failed" not in out.stderr


def test_screen_truncated_geotiff_with_worker_processes(damaged, tmp_path):
    """A worker that cannot read the raster reports it; the pool does not just 'break'."""
    out = assert_refused(["screen", DEMO_SITES, "--dem", damaged / "cut.tif", "--freq-ghz", "5.8",
                          "--out", tmp_path / "r.csv", "--workers", "2", "--chunk-pairs", "5"],
                         ["cut.tif", "damaged or truncated"], inputs=[damaged, DEMO_SITES], subprocess=True)
    assert "BrokenProcessPool" not in out.stderr


def test_link_geotiff_cut_before_its_header(damaged):
    assert_refused(["link", "--dem", damaged / "nohead.tif", *SITES_AB], ["nohead.tif", "damaged or truncated"],
                   inputs=[damaged])


def test_heights_truncated_geotiff(damaged):
    assert_refused(["heights", "--dem", damaged / "cut.tif", *SITES_AB], ["cut.tif", "damaged or truncated"],
                   inputs=[damaged])


def test_link_text_file_as_raster(damaged):
    assert_refused(["link", "--dem", damaged / "text.tif", *SITES_AB], ["text.tif", "not recognized"],
                   inputs=[damaged])


def test_link_vrt_with_missing_source_names_the_source(damaged):
    missing = str(damaged / "tiles" / "missing-tile.tif")
    assert_refused(["link", "--dem", damaged / "gone.vrt", *SITES_AB], ["gone.vrt", missing, "does not exist"],
                   inputs=[damaged])


def test_screen_vrt_with_missing_source_names_the_source(damaged, tmp_path):
    missing = str(damaged / "tiles" / "missing-tile.tif")
    assert_refused(["screen", DEMO_SITES, "--dem", damaged / "gone.vrt", "--freq-ghz", "5.8",
                    "--out", tmp_path / "r.csv"], ["gone.vrt", missing, "does not exist"],
                   inputs=[damaged, DEMO_SITES], subprocess=True)
    assert not (tmp_path / "r.csv").exists()


def test_vrt_whose_sources_exist_still_works(damaged):
    from tests.cli.bad_input import run_command

    out = run_command(["link", "--dem", damaged / "good.vrt", *SITES_AB, "--json"])
    assert out.exit_code == 0, out.stderr
    assert '"meets_criterion"' in out.stdout


def test_link_surface_vrt_with_missing_source(damaged):
    assert_refused(["link", "--dem", DEMO_DEM, "--surface", damaged / "gone.vrt", *SITES_AB],
                   ["gone.vrt", "missing-tile.tif"], inputs=[damaged, DEMO_DEM])


def test_sheet_truncated_geotiff(damaged, tmp_path):
    assert_refused(["sheet", "--dem", damaged / "cut.tif", *SITES_AB, "-o", tmp_path / "s.pdf"],
                   ["cut.tif", "damaged or truncated"], inputs=[damaged])
    assert not (tmp_path / "s.pdf").exists()


# --------------------------------------------------------------------------- --scheduler

@pytest.mark.parametrize("address", ["not a url", "http://host:8786", "tcp://127.0.0.1:99999", "tcp://host"])
def test_screen_garbled_scheduler_address(address, tmp_path):
    pytest.importorskip("distributed")
    assert_refused(["screen", DEMO_SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--out", tmp_path / "r.csv",
                    "--scheduler", address], ["--scheduler", "tcp://host:8786"], inputs=[DEMO_SITES])
    assert not (tmp_path / "r.csv.partial").exists()


def test_screen_scheduler_nobody_listens(tmp_path, monkeypatch):
    # In process with a 1 s bound; tests/cli/test_screen_cli.py checks the real 10 s bound in a subprocess.
    pytest.importorskip("distributed")
    import profiler.screening.executors as executors

    monkeypatch.setattr(executors, "SCHEDULER_CONNECT_TIMEOUT_S", 1.0)
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    assert_refused(["screen", DEMO_SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--out", tmp_path / "r.csv",
                    "--scheduler", f"127.0.0.1:{port}"], ["cannot connect", f"tcp://127.0.0.1:{port}"],
                   inputs=[DEMO_SITES])


# --------------------------------------------------------------------------- skipped rows

def test_screen_sites_all_rows_bad_says_why(tmp_path):
    sites = tmp_path / "decimal-comma.csv"
    sites.write_text('name,lat,lon\nA,"-30,426077","-20,973967"\nB,"-30,403493","-20,916715"\n')
    assert_refused(["screen", sites, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "--out", tmp_path / "r.csv"],
                   ["fewer than two usable sites", "2 row(s) skipped", "row 2", "'-30,426077' is not a number"],
                   inputs=[sites])


def test_sheet_pairs_all_rows_bad_says_why(tmp_path):
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m\n"
                     f"A,{ORRIN},10,B,{ORRIN},10\n")
    assert_refused(["sheet", "--pairs", pairs, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "s.pdf"],
                   ["no usable pair", "first:", "same position"], inputs=[pairs])


def test_screen_skipped_rows_on_stderr_even_with_quiet(tmp_path):
    from tests.conftest import run_cli

    sites = tmp_path / "many.csv"
    rows = [f"Bad{i},north,-20.9" for i in range(25)]
    sites.write_text("name,lat,lon\n" + f"Good1,{ORRIN}\nGood2,{BRACKWELL}\n" + "\n".join(rows) + "\n")
    proc = run_cli("screen", str(sites), "--dem", str(DEMO_DEM), "--freq-ghz", "5.8", "--out",
                   str(tmp_path / "r.csv"), "-q", "--gain-a-dbi", "23", "--gain-b-dbi", "23")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout == ""
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 21 and lines[0] == "skipped many.csv row 4 ('Bad0'): latitude 'north' is not a number"
    assert lines[-1] == "... and 5 more skipped rows"


def test_sheet_pairs_skipped_rows_capped(tmp_path):
    from tests.conftest import run_cli

    head = "name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m\n"
    good = f"A,{ORRIN},20,B,{BRACKWELL},15\n"
    bad = "".join(f"X{i},{ORRIN},10,Y{i},{ORRIN},10\n" for i in range(23))
    pairs = tmp_path / "pairs.csv"
    pairs.write_text(head + good + bad)
    proc = run_cli("sheet", "--pairs", str(pairs), "--dem", str(DEMO_DEM), "--freq-ghz", "5.8",
                   "-o", str(tmp_path / "s.svg"))
    assert proc.returncode == 0, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 21 and all(line.startswith("skipped: ") for line in lines[:20])
    assert lines[-1] == "... and 3 more skipped pairs"


# --------------------------------------------------------------------------- quiet edges

def _piped_to_head(*args: str) -> tuple[int, str]:
    """Run terrahop with stdout into a reader that closes after the first line; exit code and stderr."""
    import os

    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = sp.Popen([sys.executable, "-m", "profiler", *args], stdout=sp.PIPE, stderr=sp.PIPE, env=env, cwd=REPO)
    proc.stdout.readline()
    proc.stdout.close()  # the reader goes away, as `| head -1` does
    err = proc.stderr.read().decode()
    return proc.wait(timeout=300), err


def test_broken_pipe_ends_quietly():
    # Enough output that it cannot all sit in the pipe's buffer before the reader leaves.
    code, err = _piped_to_head("demo", "--json")
    assert err == "" and code in (0, 141), (code, err)
    code, err = _piped_to_head("demo")
    assert err == "" and code in (0, 141), (code, err)


def test_demo_and_screen_print_no_runtime_warning(tmp_path):
    from tests.conftest import run_cli

    for args in (["demo"], ["screen", str(DEMO_SITES), "--dem", str(DEMO_DEM), "--freq-ghz", "5.8",
                            "--out", str(tmp_path / "r.csv"), "--workers", "1"],
                 ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", "-30.426077,-20.97394",
                  "--freq-ghz", "5.8"]):
        proc = run_cli(*args)
        assert proc.returncode == 0, proc.stderr
        assert "RuntimeWarning" not in proc.stderr and "encountered in" not in proc.stderr, proc.stderr


def test_python_warnings_become_one_stderr_line(capsys):
    from profiler.cli.main import tool_warnings
    from profiler.errors import ModelValidityWarning

    with tool_warnings():
        warnings.warn("path of 80.0 km is longer than\n the 60 km tested", ModelValidityWarning, stacklevel=1)
        warnings.warn("divide by zero encountered in log10", RuntimeWarning, stacklevel=1)
        warnings.warn("old API", DeprecationWarning, stacklevel=1)
    captured = capsys.readouterr()
    assert captured.out == ""
    lines = captured.err.strip().splitlines()
    assert lines[0] == "warning: path of 80.0 km is longer than the 60 km tested"
    assert lines[1].startswith("warning: an internal calculation gave a non-finite value (divide by zero")
    assert "RuntimeWarning" not in captured.err and "old API" not in captured.err and len(lines) == 2


def test_multipath_curve_of_a_very_short_path_is_finite_without_numpy_warnings():
    """Tiny p0 (paths of a metre or so) once gave log10(0) in ITU-R P.530-17 section 2.3.2's shallow-fade term."""
    import numpy as np

    from profiler.losses.multipath import fade_exceedance_pct

    p0 = 1e-14
    a_t = 25.0 + 1.2 * np.log10(p0)
    depths = np.array([0.0, 0.5 * a_t, 0.999 * a_t, a_t, 1.5 * a_t])
    with np.errstate(all="raise"):
        pw = fade_exceedance_pct(depths, p0)
    assert np.all(np.isfinite(pw)) and np.all(np.diff(pw) <= 0.0)
    # Both branches meet at At (the interpolation is built to do so).
    assert pw[2] == pytest.approx(pw[3], rel=0.01)


def test_broken_pipe_elsewhere_is_still_an_error(monkeypatch, tmp_path):
    """Only a closed stdout ends quietly; a broken socket or pipe inside the work is reported."""
    import click

    from profiler.cli.options import friendly_errors

    @friendly_errors
    def work():
        raise BrokenPipeError(32, "Broken pipe")

    with open(tmp_path / "stdout.txt", "w") as healthy:
        monkeypatch.setattr(sys, "stdout", healthy)
        with pytest.raises(click.ClickException, match="BrokenPipeError"):
            work()
