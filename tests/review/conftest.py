import pytest

from tests.review.fixtures import screen_demo, with_run_table, without_run_table


@pytest.fixture(scope="session")
def demo_screened(tmp_path_factory):
    """The demo screening result as `terrahop screen` writes it (with its run table)."""
    return screen_demo(tmp_path_factory.mktemp("review-own") / "demo.gpkg")


@pytest.fixture(scope="session")
def demo_result(demo_screened, tmp_path_factory):
    """The demo screening result without its run table (the page is not told the terrain)."""
    return without_run_table(demo_screened, tmp_path_factory.mktemp("review") / "demo.gpkg")


@pytest.fixture(scope="session")
def demo_result_with_run(demo_result, tmp_path_factory):
    """The demo screening result with a run description naming the demo terrain."""
    return with_run_table(demo_result, tmp_path_factory.mktemp("review-run") / "demo-run.gpkg")
