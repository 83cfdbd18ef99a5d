"""Bad-input corpus: the confidence options (harness in tests/cli/bad_input.py)."""

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES, REPO

GRAZING = str(EXAMPLES / "demo-2-grazing.toml")
SITES = REPO / "data" / "demo" / "sites.csv"
BAD = [
    (["--dem-error-m", "-1"], ["--dem-error-m", "between 0 and 100"]),
    (["--dem-error-m", "abc"], ["--dem-error-m", "must be a number"]),
    (["--dem-error-m", "nan"], ["--dem-error-m"]),
    (["--dem-error-corr-m", "0"], ["--dem-error-corr-m", "above 0"]),
    (["--dem-error-corr-m", "-5"], ["--dem-error-corr-m"]),
    (["--draws", "10"], ["--draws", "100", "5/95"]),
    (["--draws", "many"], ["--draws", "whole number"]),
    (["--draws", "1e9"], ["--draws"]),
    (["--antenna-error-m", "-0.1"], ["--antenna-error-m"]),
    (["--seed", "-3"], ["--seed", "whole number"]),
]


@pytest.mark.parametrize("extra, words", BAD)
def test_link_refuses(extra, words, tmp_path):
    assert_refused(["link", GRAZING, *extra], words, inputs=[GRAZING, DEMO_DEM])


@pytest.mark.parametrize("extra, words", BAD[:4])
def test_heights_refuses(extra, words):
    assert_refused(["heights", GRAZING, "--confidence", "0.9", *extra], words, inputs=[GRAZING, DEMO_DEM])


@pytest.mark.parametrize("level", ["0", "1", "1.5", "-0.2", "ninety"])
def test_heights_refuses_confidence_outside_0_1(level):
    assert_refused(["heights", GRAZING, "--confidence", level], ["--confidence"], inputs=[GRAZING, DEMO_DEM])


@pytest.mark.parametrize("extra, words", BAD[:6])
def test_screen_refuses(extra, words, tmp_path):
    out = tmp_path / "s.csv"
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", out, *extra], words,
                   inputs=[SITES, DEMO_DEM])
    assert not out.exists()


def test_screen_rank_by_p_meets_needs_confidence(tmp_path):
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "s.csv",
                    "--rank-by", "p_meets"], ["--rank-by p_meets", "--draws"], inputs=[SITES, DEMO_DEM])


def test_screen_rank_by_unknown(tmp_path):
    assert_refused(["screen", SITES, "--dem", DEMO_DEM, "--freq-ghz", "5.8", "-o", tmp_path / "s.csv",
                    "--rank-by", "margin"], ["--rank-by", "fade_margin_db"], inputs=[SITES, DEMO_DEM])


@pytest.mark.parametrize("line, words", [
    ("dem_error_corr_m = 0", ["[confidence] dem_error_corr_m", "above 0"]),
    ("draws = 50", ["[confidence] draws", "100"]),
    ("dem_error_m = true", ["[confidence] dem_error_m", "number"]),
    ("seed = -1", ["[confidence] seed"]),
    ("sigma = 2", ["unknown key", "[confidence]", "sigma"]),
])
def test_link_file_confidence_table_refused(line, words, tmp_path):
    text = (EXAMPLES / "demo-2-grazing.toml").read_text().replace("../data/demo/terrain.tif", str(DEMO_DEM))
    f = tmp_path / "link.toml"
    f.write_text(text + f"\n[confidence]\n{line}\n")
    assert_refused(["link", f], words, inputs=[f, DEMO_DEM])


def test_link_too_many_draws_for_the_path():
    assert_refused(["link", GRAZING, "--draws", "100000", "--spacing-m", "2"], ["--draws N", "coarser --spacing-m"],
                   inputs=[GRAZING, DEMO_DEM])
