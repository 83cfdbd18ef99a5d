"""The Python face of the package: ``import profiler`` is light, its names are the real ones, its guide runs."""

from __future__ import annotations

import doctest
import importlib
import json
import os
import subprocess
import sys

import pytest

import profiler

from .conftest import REPO

HEAVY = ("numpy", "pandas", "geopandas", "rasterio", "pyproj", "shapely", "matplotlib", "scipy", "numba",
         "dask", "pyarrow", "pyogrio", "click", "rich")


def _in_fresh_interpreter(code: str) -> str:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                          cwd=str(REPO), env=env).stdout.strip()


def test_import_profiler_imports_no_heavy_package():
    code = f"import sys, profiler; print(','.join(m for m in {HEAVY!r} if m in sys.modules))"
    assert _in_fresh_interpreter(code) == ""


def test_one_name_brings_only_what_it_needs():
    # errors.py is pure Python: taking an error class must not load numpy.
    code = "import sys, profiler; profiler.InputError; print('numpy' in sys.modules)"
    assert _in_fresh_interpreter(code) == "False"


@pytest.mark.parametrize("name", sorted(set(profiler._EXPORTS)))
def test_each_name_is_the_object_at_its_own_import_path(name):
    module = importlib.import_module(profiler._EXPORTS[name])
    assert getattr(profiler, name) is getattr(module, name)
    assert name in profiler.__all__ and name in dir(profiler)


def test_the_main_names_of_the_issue_are_offered():
    wanted = {"ElevationModel", "Site", "Settings", "LinkBatch", "analyse_link", "analyse_links", "Radio",
              "ClimateSettings", "availability_for_links", "screen", "Verdict", "solve_heights", "errors"}
    assert wanted <= set(profiler.__all__)
    assert profiler.errors is importlib.import_module("profiler.errors")


def test_an_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no attribute 'not_a_name'"):
        profiler.not_a_name  # noqa: B018


def test_helpers_of_the_face_stay_out_of_dir():
    listed = dir(profiler)
    assert "importlib" not in listed and "TYPE_CHECKING" not in listed
    assert "__version__" in listed


def test_the_guide_names_every_section_and_runs_its_example():
    doc = profiler.__doc__ or ""
    for heading in ("Terrain", "One link, or many", "Availability", "Antenna heights", "Screening many sites",
                    "Errors", "Demo data"):
        assert f"\n{heading}\n" in doc
    result = doctest.testmod(profiler, verbose=False, report=True)
    assert result.attempted >= 8
    assert result.failed == 0


def test_the_guide_example_gives_the_recorded_figures_of_the_demo_link_file():
    """The guide's link is examples/demo-1-clear.toml: the API gives the golden record's figures exactly."""
    golden = json.loads((REPO / "tests" / "golden" / "links.json").read_text())["demo-1-clear"]
    with profiler.ElevationModel([profiler.demo_path("data", "demo", "terrain.tif")]) as model:
        a = profiler.Site("Orrin Water Tank", lat_deg=-30.426077, lon_deg=-20.973967, antenna_agl_m=20)
        b = profiler.Site("Brackwell Silo", lat_deg=-30.403493, lon_deg=-20.916715, antenna_agl_m=15)
        radio = profiler.Radio(freq_ghz=5.8, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)
        record = profiler.analyse_link(model, a, b, radio, profiler.Settings(k=4 / 3, k_worst=2 / 3)).record(0)
    record = json.loads(json.dumps(record))
    for key in ("distance_km", "azimuth_a_to_b_deg", "clearance", "loss_db", "budget", "worst_case",
                "meets_criterion", "criterion", "availability"):
        assert record[key] == golden[key], key
    for end in ("a", "b"):  # the link file also records how each height was given
        for key, value in record["sites"][end].items():
            assert golden["sites"][end][key] == value, (end, key)


def test_demo_path_finds_the_demo_terrain_in_a_clone():
    path = profiler.demo_path("data", "demo", "terrain.tif")
    assert path.is_file()
    assert path == REPO / "data" / "demo" / "terrain.tif"


def test_the_type_checkers_names_are_the_exported_names():
    """The ``if TYPE_CHECKING:`` imports of profiler/__init__.py list exactly the lazy names, from the same modules."""
    import ast

    tree = ast.parse((REPO / "profiler" / "__init__.py").read_text())
    block = next(node for node in tree.body
                 if isinstance(node, ast.If) and getattr(node.test, "id", "") == "TYPE_CHECKING")
    seen = {}
    for node in block.body:
        assert isinstance(node, ast.ImportFrom) and node.level == 1
        for alias in node.names:
            seen[alias.name] = f"profiler.{node.module}" if node.module else "submodule"
    assert {name: where for name, where in seen.items() if where != "submodule"} == profiler._EXPORTS
    assert {name for name, where in seen.items() if where == "submodule"} == set(profiler._SUBMODULES)
