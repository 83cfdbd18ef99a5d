"""Bad-input corpus: sites files that are not what `screen` needs (harness in tests/cli/bad_input.py)."""

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM

TOWN = DEMO_DEM.parent / "town.gpkg"
SITES = DEMO_DEM.parent / "sites.csv"


def test_polygon_layer_as_sites_names_the_geometry(tmp_path):
    # The demo town's buildings have no names and are polygons: every row is skipped with its reason.
    assert_refused(["screen", TOWN, "--layer", "buildings", "--dem", DEMO_DEM, "--freq-ghz", "5.8",
                    "-o", tmp_path / "r.csv"], ["fewer than two usable sites", "polygon, not a point"],
                   inputs=[TOWN, DEMO_DEM])


def test_layer_option_on_a_csv_is_refused(tmp_path):
    assert_refused(["screen", SITES, "--layer", "foo", "--dem", DEMO_DEM, "--freq-ghz", "5.8",
                    "-o", tmp_path / "r.csv"], ["csv table has no layers", "--layer 'foo'"], inputs=[SITES])
