"""Test data for screening: invented sites on the invented demo terrain."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
DEMO_DEM = REPO / "data" / "demo" / "terrain.tif"
DEMO_SITES = REPO / "data" / "demo" / "sites.csv"


def random_sites_csv(path: Path, n: int, seed: int = 7, extra_rows: list[list[str]] | None = None) -> Path:
    """Write ``n`` invented sites inside the demo raster (UTM 27S) as a CSV with a 'kind' column."""
    from pyproj import Transformer

    rng = np.random.default_rng(seed)
    x = rng.uniform(501_000, 523_000, n)
    y = rng.uniform(6_621_000, 6_637_000, n)
    lon, lat = Transformer.from_crs("EPSG:32727", "EPSG:4326", always_xy=True).transform(x, y)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "lat", "lon", "antenna_agl_m", "max_mast_m", "kind"])
        for k in range(n):
            w.writerow([f"S{k:03d}", f"{lat[k]:.6f}", f"{lon[k]:.6f}", str(10 + k % 4 * 5), "40", f"kind{k % 3}"])
        for row in extra_rows or []:
            w.writerow(row)
    return path


def lose_worker_after(monkeypatch, chunks: int):
    """Make screening's chunk evaluation fail ("worker lost") after ``chunks`` chunks; returns the real one."""
    from profiler import screening

    real = screening.evaluate_chunk
    calls = {"n": 0}

    def failing(model, task, *rest):
        calls["n"] += 1
        if calls["n"] > chunks:
            raise RuntimeError("worker lost")
        return real(model, task, *rest)

    monkeypatch.setattr(screening.executors, "evaluate_chunk", failing)
    return real
