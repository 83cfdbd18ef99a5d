"""Bad-input corpus: basic link arguments (harness in tests/cli/bad_input.py)."""

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL]


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--freq-ghz", "0"], ["freq_ghz"]),
        (["--freq-ghz", "5.8", "--agl-a", "-5"], ["antenna height", "site a"]),
        (["--freq-ghz", "5.8", "--k", "four"], ["fraction like 4/3"]),
    ],
)
def test_link_bad_values(extra, words):
    assert_refused(LINK + extra, words, inputs=[DEMO_DEM])


def test_subprocess_mode_missing_raster(tmp_path):
    assert_refused(["link", "--dem", str(tmp_path / "none.tif"), "--site-a", ORRIN, "--site-b", BRACKWELL,
                    "--freq-ghz", "5"], ["not found"], subprocess=True)
