"""Bad-input corpus: the climate source (--climate, [climate] source) on every command that takes it."""

from __future__ import annotations

import sys

import pytest

from tests.cli.bad_input import assert_refused
from tests.conftest import DEMO_DEM

ORRIN = "-30.426077,-20.973967"
BRACKWELL = "-30.403493,-20.916715"
LINK = ["link", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "11"]
HEIGHTS = ["heights", "--dem", str(DEMO_DEM), "--site-a", ORRIN, "--site-b", BRACKWELL, "--freq-ghz", "11"]


def _link_file(tmp_path, climate: str):
    path = tmp_path / "link.toml"
    path.write_text(
        f'[terrain]\nrasters = ["{DEMO_DEM}"]\n'
        "[site_a]\nlat = -30.426077\nlon = -20.973967\n"
        "[site_b]\nlat = -30.403493\nlon = -20.916715\n"
        "[radio]\nfreq_ghz = 11\n"
        f"[climate]\n{climate}\n"
    )
    return path


@pytest.mark.parametrize(
    "extra, words",
    [
        (["--climate", "foo"], ["--climate", "default, itu", "foo"]),
        (["--climate", ""], ["--climate", "default, itu"]),
        (["--climate", "itu-r"], ["--climate", "itu-r"]),
        (["--climate", "itu", "--rain-rate-mm-h", "-3"], ["--rain-rate-mm-h", "between 0 and 300"]),
        (["--climate", "itu", "--terrain-roughness-m", "nan"], ["terrain_roughness_m"]),
        (["--climate", "itu", "--dn1", "5000"], ["--dn1", "between -2000 and 200"]),
    ],
)
def test_link_bad_climate_flags(extra, words):
    assert_refused(LINK + extra, words, inputs=[DEMO_DEM])


def test_heights_bad_climate_source():
    assert_refused(HEIGHTS + ["--climate", "maps"], ["--climate", "maps"], inputs=[DEMO_DEM])


@pytest.mark.parametrize(
    "climate, words",
    [
        ("source = 5", ["[climate] source", "text", "5"]),
        ('source = "p837"', ["[climate] source", "default, itu", "p837"]),
        ("source = true", ["[climate] source", "text"]),
        ('source = ["itu"]', ["[climate] source", "text"]),
        ('sources = "itu"', ["unknown key", "sources"]),
    ],
)
def test_link_file_bad_climate_source(tmp_path, climate, words):
    path = _link_file(tmp_path, climate)
    assert_refused(["link", str(path)], words, inputs=[path, DEMO_DEM])


def test_screen_bad_climate_source(tmp_path):
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon\nA,-30.426077,-20.973967\nB,-30.403493,-20.916715\n")
    out = tmp_path / "out.gpkg"
    assert_refused(["screen", str(sites), "--dem", str(DEMO_DEM), "--freq-ghz", "11", "--out", str(out),
                    "--climate", "foo"], ["--climate", "foo"], inputs=[sites, DEMO_DEM])
    assert not out.exists()


def test_climate_itu_without_the_extra_names_it(monkeypatch):
    for name in [m for m in sys.modules if m == "itur" or m.startswith("itur.")]:
        monkeypatch.delitem(sys.modules, name)
    monkeypatch.setitem(sys.modules, "itur", None)  # as if itur were not installed
    assert_refused(LINK + ["--climate", "itu"], ["pip install 'terrahop[climate]'", "--climate itu"],
                   inputs=[DEMO_DEM])
