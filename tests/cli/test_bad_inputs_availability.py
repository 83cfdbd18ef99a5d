"""Bad-input corpus: climate and availability inputs of link and screen (harness in tests/cli/bad_input.py).

Ranges: ITU-R P.530-17 section 2.4.1 rain method for 0.001-1 % of the year (targets
99-99.999 %); R0.01 below about 250 mm/h on earth (ITU-R P.837 maps, from memory);
dN1 of about -850 to 0 N-units/km (ITU-R P.453 maps, from memory).
"""

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM, EXAMPLES

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "18"]
DEMO_18 = EXAMPLES / "demo-6-availability-18ghz.toml"
SITES = DEMO_DEM.parent / "sites.csv"


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--target-availability-pct", "99.9999"], ["between 99 and 99.999"]),
        (["--target-availability-pct", "95"], ["between 99 and 99.999"]),
        (["--target-availability-pct", "100"], ["target_availability_pct"]),
        (["--target-availability-pct", "nan"], ["target_availability_pct"]),
        (["--rain-rate-mm-h", "-5"], ["rain_rate_mm_h"]),
        (["--rain-rate-mm-h", "400"], ["rain_rate_mm_h", "300"]),
        (["--rain-rate-mm-h", "inf"], ["rain_rate_mm_h"]),
        (["--dn1", "-5000"], ["dn1_n_per_km"]),
        (["--terrain-roughness-m", "-1"], ["terrain_roughness_m"]),
        (["--pressure-hpa", "0"], ["pressure_hpa"]),
        (["--temperature-c", "-300"], ["temperature_c"]),
        (["--water-vapour-g-m3", "-1"], ["water_vapour_g_m3"]),
    ],
)
def test_link_bad_climate_values(extra, words):
    assert_refused(LINK + extra, words, inputs=[DEMO_DEM])


@pytest.mark.parametrize(
    "old, new, words",
    [
        ("rain_rate_mm_h = 42", "rain_rate_mm_h = -1", ["rain_rate_mm_h"]),
        ("target_availability_pct = 99.99", "target_availability_pct = 99.99999", ["between 99 and 99.999"]),
    ],
)
def test_link_file_bad_climate_values(tmp_path, old, new, words):
    text = DEMO_18.read_text().replace("../data/demo/terrain.tif", str(DEMO_DEM))
    assert old in text
    bad = tmp_path / "bad.toml"
    bad.write_text(text.replace(old, new))
    assert_refused(["link", str(bad)], words, inputs=[bad, DEMO_DEM])


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--target-availability-pct", "99.9999"], ["between 99 and 99.999"]),
        (["--rain-rate-mm-h", "-5"], ["rain_rate_mm_h"]),
    ],
)
def test_screen_bad_climate_values(tmp_path, extra, words):
    out = tmp_path / "r.csv"
    assert_refused(["screen", str(SITES), "--dem", str(DEMO_DEM), "--freq-ghz", "18", "--out", str(out), *extra],
                   words, inputs=[SITES, DEMO_DEM])
    assert not out.exists()
