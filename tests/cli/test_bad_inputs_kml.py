"""Bad-input corpus: KML/KMZ outputs, --csv-geometry and the run description files (harness in tests/cli/bad_input.py).

Each case: non-zero exit, one line on stderr naming the problem, no
traceback, every input unchanged, and no output file left behind.
"""

from __future__ import annotations

import shutil

import pytest

from tests._screening_data import DEMO_DEM, DEMO_SITES
from tests.cli.bad_input import assert_refused
from tests.conftest import EXAMPLES

RADIO = ["--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi", "23"]
LINK_FILE = EXAMPLES / "demo-1-clear.toml"
UNWRITABLE = "/proc"  # the kernel refuses new files there, even for root


def _screen(sites, out, *extra):
    return ["screen", str(sites), "--dem", str(DEMO_DEM), *RADIO, "--workers", "1", "--out", str(out), *extra]


@pytest.fixture
def sites(tmp_path):
    path = tmp_path / "sites.csv"
    shutil.copy(DEMO_SITES, path)
    return path


def test_screen_kml_on_the_pairs_file(tmp_path, sites):
    pairs = tmp_path / "pairs.kml"
    pairs.write_text("a,b\nTallis Farm,Wexby Grange\n")
    assert_refused(_screen(sites, pairs, "--pairs", pairs), ["would overwrite the input", "pairs.kml"],
                   inputs=[sites, pairs])


def test_screen_kml_whose_run_description_is_an_input(tmp_path, sites):
    # r.kml writes r.kml.run.json beside it: here that name is the sites file
    named = tmp_path / "r.kml.run.json"
    shutil.copy(DEMO_SITES, named)
    assert_refused(_screen(named, tmp_path / "r.kml"), ["would overwrite the input", "run description"],
                   inputs=[named])


def test_screen_kmz_into_a_missing_folder(tmp_path, sites):
    out = tmp_path / "nowhere" / "r.kmz"
    assert_refused(_screen(sites, out), ["does not exist", "nowhere"], inputs=[sites])
    assert not out.parent.exists()


def test_screen_kml_unwritable(sites):
    assert_refused(_screen(sites, f"{UNWRITABLE}/r.kml"), ["cannot write"], inputs=[sites])


def test_screen_unknown_csv_geometry(tmp_path, sites):
    out = tmp_path / "r.csv"
    assert_refused(_screen(sites, out, "--csv-geometry", "geojson"), ["--csv-geometry", "unknown", "wkt"],
                   inputs=[sites])
    assert not out.exists()


@pytest.mark.parametrize("ext", [".gpkg", ".geojson", ".kml"])
def test_screen_csv_geometry_with_an_output_that_is_not_csv(tmp_path, sites, ext):
    out = tmp_path / f"r{ext}"
    assert_refused(_screen(sites, out, "--csv-geometry", "wkt"), ["--csv-geometry", "csv output only"],
                   inputs=[sites])
    assert not out.exists()


def test_screen_existing_run_description_is_kept_without_overwrite(tmp_path, sites):
    old = tmp_path / "r.csv.run.json"
    old.write_text("{}")
    assert_refused(_screen(sites, tmp_path / "r.csv"), ["r.csv.run.json exists", "--overwrite"],
                   inputs=[sites, old])
    assert not (tmp_path / "r.csv").exists()


def test_link_kml_into_a_missing_folder(tmp_path):
    out = tmp_path / "missing" / "link.kml"
    assert_refused(["link", str(LINK_FILE), "--kml", str(out)], ["--kml", "does not exist", "missing"],
                   inputs=[LINK_FILE, DEMO_DEM])


def test_link_kml_unknown_extension(tmp_path):
    out = tmp_path / "link.xml"
    assert_refused(["link", str(LINK_FILE), "--kml", str(out)], ["--kml", "unknown extension", ".kml or .kmz"],
                   inputs=[LINK_FILE])
    assert not out.exists()


def test_link_kml_unwritable():
    assert_refused(["link", str(LINK_FILE), "--kml", f"{UNWRITABLE}/link.kml"], ["--kml", "cannot write"],
                   inputs=[LINK_FILE])


def test_link_kml_on_the_link_file(tmp_path):
    job = tmp_path / "job.kml"
    shutil.copy(LINK_FILE, job)
    text = job.read_text().replace('"../data/demo/terrain.tif"', f'"{DEMO_DEM}"')
    job.write_text(text)
    assert_refused(["link", str(job), "--dem", str(DEMO_DEM), "--kml", str(job)],
                   ["--kml", "would overwrite the input", "job.kml"], inputs=[job])


def test_link_kml_min_margin_not_a_number(tmp_path):
    out = tmp_path / "l.kml"
    assert_refused(["link", str(LINK_FILE), "--kml", str(out), "--min-margin-db", "nan"], ["min-margin-db"],
                   inputs=[LINK_FILE])
    assert not out.exists()


def test_sheet_kml_into_a_missing_folder(tmp_path):
    out = tmp_path / "gone" / "s.kmz"
    assert_refused(["sheet", str(LINK_FILE), "-o", str(tmp_path / "s.pdf"), "--kml", str(out)],
                   ["--kml", "does not exist"], inputs=[LINK_FILE])
    assert not (tmp_path / "s.pdf").exists()


def test_sheet_kml_that_is_a_folder(tmp_path):
    (tmp_path / "s.kml").mkdir()
    assert_refused(["sheet", str(LINK_FILE), "-o", str(tmp_path / "s.pdf"), "--kml", str(tmp_path / "s.kml")],
                   ["--kml", "is a folder"], inputs=[LINK_FILE])
