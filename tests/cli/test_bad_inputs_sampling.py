"""Bad-input corpus: sample spacing and sample caps (harness in tests/cli/bad_input.py).

Spacing under 1 cm (or not a finite number) is refused on every command that
takes --spacing-m or a link file's sample_spacing_m; a path that would need
more samples than the per-path cap is refused with the spacing that fits.
"""

import shutil

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, REPO

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
SALTMARSH = "-30.498105,-20.791585"  # 19 km from Orrin
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "5.8"]


@pytest.mark.parametrize("spacing", ["1e-9", "1e-4", "0.005", "0", "-25", "nan", "inf", "-inf"])
def test_link_spacing_under_one_centimetre_or_not_finite(spacing):
    assert_refused(LINK + ["--spacing-m", spacing], ["sample spacing", "1 cm"], inputs=[DEMO_DEM])


def test_link_path_over_the_sample_cap_names_a_spacing_that_fits():
    args = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", SALTMARSH, "--freq-ghz", "5.8",
            "--spacing-m", "0.01"]
    assert_refused(args, ["1,000,000 per path", "spacing of at least"], inputs=[DEMO_DEM])


def test_link_spacing_refused_in_a_subprocess_without_allocating():
    # 1e-9 m over 6 km would be six trillion samples: one line, quickly, from the real command.
    assert_refused(LINK + ["--spacing-m", "1e-9"], ["1 cm"], inputs=[DEMO_DEM], subprocess=True)


@pytest.fixture
def link_file(tmp_path):
    def make(spacing_line: str):
        text = (REPO / "examples" / "demo-1-clear.toml").read_text(encoding="utf-8")
        shutil.copy(DEMO_DEM, tmp_path / "terrain.tif")
        text = text.replace("../data/demo/terrain.tif", "terrain.tif")
        text = text.replace("[analysis]", "[analysis]\n" + spacing_line)
        path = tmp_path / "link.toml"
        path.write_text(text, encoding="utf-8")
        return path

    return make


@pytest.mark.parametrize("line", ["sample_spacing_m = 1e-6", "sample_spacing_m = -3", "sample_spacing_m = 0.0"])
def test_link_file_spacing_under_one_centimetre(link_file, line):
    path = link_file(line)
    assert_refused(["link", str(path)], ["sample spacing", "1 cm"], inputs=[path, path.parent / "terrain.tif"])


def test_sheet_spacing_under_one_centimetre(link_file, tmp_path):
    path = link_file("")
    assert_refused(["sheet", str(path), "-o", str(tmp_path / "s.pdf"), "--spacing-m", "1e-5"],
                   ["sample spacing", "1 cm"], inputs=[path])
    assert not (tmp_path / "s.pdf").exists()


def test_heights_spacing_under_one_centimetre(link_file):
    path = link_file("")
    assert_refused(["heights", str(path), "--spacing-m", "0"], ["sample spacing", "1 cm"], inputs=[path])


@pytest.mark.parametrize("spacing", ["1e-4", "nan"])
def test_screen_spacing_under_one_centimetre(tmp_path, spacing):
    sites = tmp_path / "sites.csv"
    shutil.copy(REPO / "data" / "demo" / "sites.csv", sites)
    out = tmp_path / "r.gpkg"
    assert_refused(["screen", str(sites), "--dem", str(DEMO_DEM), "--freq-ghz", "5.8", "--out", str(out),
                    "--workers", "1", "--spacing-m", spacing], ["sample spacing", "1 cm"], inputs=[sites, DEMO_DEM])
    assert not out.exists()
