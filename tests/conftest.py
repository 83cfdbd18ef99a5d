"""Shared fixtures: small synthetic rasters, real open terrain, CLI runners."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[1]
DEMO_DEM = REPO / "data" / "demo" / "terrain.tif"
EXAMPLES = REPO / "examples"


@pytest.fixture(scope="session")
def repo_root() -> Path:
    return REPO


@pytest.fixture(scope="session")
def demo_dem() -> Path:
    return DEMO_DEM


def write_raster(
    path: Path,
    array: np.ndarray,
    *,
    crs: str | None = "EPSG:4326",
    transform=None,
    nodata: float | None = None,
    unit: str | None = None,
    driver: str = "GTiff",
) -> Path:
    """Write a single-band raster; ``transform`` defaults to 0.001-degree cells at (10, 46)."""
    import rasterio
    from rasterio.transform import from_origin

    if transform is None:
        transform = from_origin(10.0, 46.0, 0.001, 0.001)
    profile = dict(
        driver=driver, width=array.shape[1], height=array.shape[0], count=1,
        dtype=str(array.dtype), transform=transform,
    )
    if crs is not None:
        profile["crs"] = crs
    if nodata is not None:
        profile["nodata"] = nodata
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(array, 1)
        if unit:
            dst.set_band_unit(1, unit)
    return path


@pytest.fixture
def raster_factory(tmp_path):
    """Call with (name, array, **kwargs) to write a raster into a temp folder."""
    def make(name: str, array: np.ndarray, **kwargs) -> Path:
        return write_raster(tmp_path / name, array, **kwargs)

    return make


@pytest.fixture(scope="session")
def jacksboro(tmp_path_factory) -> dict:
    """matplotlib's sample USGS 3-arc-second DEM (Jacksboro fault, Tennessee) as GeoTIFF.

    Source: matplotlib sample data ``jacksboro_fault_dem.npz`` (int16 metres,
    lon -84.41375..-84.0779, lat 36.44625..36.7329; row 0 is the northern edge,
    as drawn by matplotlib's own hillshade example).
    """
    import matplotlib.cbook as cbook
    from rasterio.transform import from_origin

    npz = np.load(cbook.get_sample_data("jacksboro_fault_dem.npz", asfileobj=False))
    elevation = npz["elevation"]
    north = float(max(npz["ymin"], npz["ymax"]))
    west = float(npz["xmin"])
    dx, dy = float(npz["dx"]), float(npz["dy"])
    path = tmp_path_factory.mktemp("jacksboro") / "jacksboro.tif"
    write_raster(path, elevation, crs="EPSG:4326", transform=from_origin(west, north, dx, dy))
    return {"path": path, "elevation": elevation, "west": west, "north": north, "dx": dx, "dy": dy}


def run_cli(*args: str, cwd: Path | None = None, check: bool = False) -> subprocess.CompletedProcess:
    """Run the real command in a subprocess (``python -m profiler``) against this checkout."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    proc = subprocess.run(
        [sys.executable, "-m", "profiler", *args],
        cwd=cwd or REPO, env=env, capture_output=True, text=True, timeout=300,
    )
    if check and proc.returncode != 0:
        raise AssertionError(f"terrahop {' '.join(args)} failed:\n{proc.stdout}\n{proc.stderr}")
    return proc


@pytest.fixture
def cli():
    """Run the command line in-process with click's runner; returns the Result."""
    from click.testing import CliRunner

    from profiler.cli.main import cli as group

    runner = CliRunner()

    def invoke(*args: str):
        return runner.invoke(group, list(args), catch_exceptions=False)

    return invoke
