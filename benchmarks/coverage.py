"""Benchmark of terrahop coverage: a 20 km radius at about 30 m on a synthetic 1-degree tile.

Prints, in one run (single process, compiled kernels warmed first):

* the coverage run itself (plan + every block; about 1.3 million cells);
* (a) the link engine (profiler.link.analyse_links, Bullington, no method comparison, no availability) on
  a random sample of the same cells in batches, its time per cell extrapolated to every cell;
* (b) the bare bilinear gather of the radials' samples (ElevationModel.sample on their precomputed
  positions, in the same blocks);
* the ratios (targets: coverage >= 20x faster than (a), <= 3x the cost of (b)) and the peak resident
  memory of the process (resource.getrusage; target under 1 GiB).

The tile: 1 x 1 degree at 1 arc-second (3600 x 3600 cells, about 31 m at its latitude), fractal relief
(sums of random sine waves, 50-600 m).  Run: ``python benchmarks/coverage.py [--link-cells N]``.
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import tempfile
import time
from pathlib import Path

# This file's folder leaves the import path: its name would hide the `coverage` package numba looks for.
sys.path[:] = [p for p in sys.path if os.path.abspath(p or ".") != os.path.dirname(os.path.abspath(__file__))]

import numpy as np  # noqa: E402


def make_tile(path: Path, lat0: float = 0.0, lon0: float = 30.0, n: int = 3600) -> Path:
    import rasterio
    import rasterio.windows
    from rasterio.transform import from_origin

    rng = np.random.default_rng(2026)
    waves = [(2.0 ** rng.uniform(1.0, 8.0), rng.uniform(0, np.pi), rng.uniform(0, 6.3)) for _ in range(24)]
    with rasterio.open(path, "w", driver="GTiff", width=n, height=n, count=1, dtype="float32", crs="EPSG:4326",
                       transform=from_origin(lon0, lat0 + 1.0, 1.0 / n, 1.0 / n), tiled=True) as dst:
        for r0 in range(0, n, 400):  # in row blocks: the tile's making must not set the peak memory
            rows = min(400, n - r0)
            y, x = np.mgrid[r0:r0 + rows, 0:n].astype(np.float32) / n
            z = np.full((rows, n), 300.0, dtype=np.float32)
            for k, theta, phase in waves:
                z += (250.0 / k ** 0.9 * np.sin(2 * np.pi * k * (np.cos(theta) * x + np.sin(theta) * y) + phase)
                      ).astype(np.float32)
            dst.write(np.clip(z, 0.0, None), 1, window=rasterio.windows.Window(0, r0, n, rows))
    return path


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--link-cells", type=int, default=600, help="cells analysed by the link engine for (a)")
    ap.add_argument("--radius-km", type=float, default=20.0)
    args = ap.parse_args()

    from profiler.budget import Radio
    from profiler.coverage.engine import CoverageSettings, Hub, plan_coverage
    from profiler.coverage.run import run_coverage
    from profiler.kernels import TWINS
    from profiler.link import analyse_links
    from profiler.link_types import Settings, Site
    from profiler.terrain import ElevationModel

    for name in ("coverage_sweep", "coverage_lattice", "coverage_order", "affine_gather", "diffraction_reductions",
                 "clearance_reductions"):
        t = TWINS[name]
        for a in t.warm_args((np.float32, np.float64)):
            t.compiled()(*a)

    with tempfile.TemporaryDirectory() as tmp:
        tile = make_tile(Path(tmp) / "tile.tif")
        model = ElevationModel([tile])
        model.preload()
        hub = Hub("bench hub", 0.5, 30.5, 30.0)
        radio = Radio(5.8, 23.0, 16.0, 16.0, bandwidth_mhz=20.0)
        s = CoverageSettings(radius_m=args.radius_km * 1000.0, rx_agl_m=6.0, radio=radio, method="bullington")
        t0 = time.perf_counter()
        plan = plan_coverage(model, hub, s)
        t_plan = time.perf_counter() - t0
        result, _ = run_coverage(model, plan, str(Path(tmp) / "c.tif"), stage=False, workers=1)
        t_cov = time.perf_counter() - t0
        n_cells = int(np.isfinite(result.bands["fade_margin_db"]).sum())

        # (b) the bare gather of the radials' samples, block by block as the run reads them.
        dist = np.arange(plan.n_samples) * plan.spacing_m
        t_gather = 0.0
        for b in range(plan.n_blocks):
            r0, r1 = plan.block_radials(b)
            theta = np.arange(r0, r1) * (2.0 * np.pi / plan.n_radials)
            lon, lat = plan.to_lonlat((np.sin(theta)[:, None] * dist).ravel(), (np.cos(theta)[:, None] * dist).ravel())
            t1 = time.perf_counter()
            model.sample(lon, lat)
            t_gather += time.perf_counter() - t1

        # (a) the link engine on a random sample of the cells, in batches of 200.
        rng = np.random.default_rng(1)
        pick = rng.choice(plan.cell_d.size, args.link_cells, replace=False)
        settings = Settings(diffraction_method="bullington", compare_methods=False)
        t1 = time.perf_counter()
        for start in range(0, pick.size, 200):
            idx = pick[start:start + 200]
            sites_b = [Site(f"c{i}", float(plan.cell_lat[i]), float(plan.cell_lon[i]), 6.0) for i in idx]
            sites_a = [Site(hub.name, hub.lat_deg, hub.lon_deg, hub.agl_m)] * len(idx)
            analyse_links(model, sites_a, sites_b, radio, settings, estimate_availability=False)
        per_cell = (time.perf_counter() - t1) / pick.size
        t_link = per_cell * n_cells
        peak_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0

    print(f"tile 3600 x 3600 cells (1 arc-second), radius {args.radius_km:g} km, {plan.n_radials} radials x "
          f"{plan.n_samples} samples ({plan.spacing_m:.2f} m apart), {n_cells} cells evaluated")
    print(f"coverage            {t_cov:8.2f} s  (plan {t_plan:.2f} s)  {t_cov / n_cells * 1e6:.2f} us/cell")
    print(f"(a) link engine     {t_link:8.1f} s  extrapolated from {pick.size} cells "
          f"({per_cell * 1e3:.3f} ms/cell)  -> coverage is {t_link / t_cov:.0f}x faster (target >= 20x)")
    print(f"(b) bare gather     {t_gather:8.2f} s  -> coverage costs {t_cov / t_gather:.2f}x the gather "
          f"(target <= 3x)")
    print(f"peak resident memory {peak_mib:.0f} MiB (target < 1024 MiB)")


if __name__ == "__main__":
    main()
