"""Cost of obstruction layers and a surface model in link analysis (prints figures, no pass/fail).

Analyses N random links across the invented demo town three ways: bare
terrain (the baseline of this run), with the building and tree layers
(exact crossings, inserted samples) and with the 2 m surface model.

Run:  python benchmarks/obstructions.py [N]
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from profiler.budget import Radio  # noqa: E402
from profiler.link import Settings, Site, analyse_links  # noqa: E402
from profiler.obstructions import LayerSpec, Surroundings, read_obstruction_layer  # noqa: E402
from profiler.terrain import ElevationModel  # noqa: E402


def main(n: int = 200) -> None:
    from pyproj import Transformer

    demo = REPO / "data" / "demo"
    rng = np.random.default_rng(1)
    x = 514_700 + rng.uniform(0, 1800, (n, 2))
    y = 6_621_300 + rng.uniform(0, 1200, (n, 2))
    lon, lat = Transformer.from_crs("EPSG:32727", "EPSG:4326", always_xy=True).transform(x, y)
    a = [Site(f"a{i}", lat[i, 0], lon[i, 0], 10.0) for i in range(n)]
    b = [Site(f"b{i}", lat[i, 1], lon[i, 1], 10.0) for i in range(n)]
    t0 = time.perf_counter()
    layers = (
        read_obstruction_layer(LayerSpec(str(demo / "town.gpkg"), "building", "buildings")),
        read_obstruction_layer(LayerSpec(str(demo / "town.gpkg"), "trees", "trees")),
    )
    read_s = time.perf_counter() - t0
    settings = Settings(spacing_m=2.0)
    with ElevationModel([demo / "terrain.tif"]) as model, ElevationModel([demo / "town-surface.tif"]) as dsm:
        model.preload()
        dsm.preload()
        runs = {}
        for label, sur in (("bare terrain", None), ("buildings + trees", Surroundings(layers)),
                           ("surface model", Surroundings(surface=dsm))):
            analyse_links(model, a[:2], b[:2], Radio(5.8), settings, surroundings=sur)  # warm up
            t0 = time.perf_counter()
            batch = analyse_links(model, a, b, Radio(5.8), settings, surroundings=sur)
            runs[label] = (time.perf_counter() - t0, int(batch.profiles.n_samples.sum()))
    base = runs["bare terrain"][0]
    print(f"{n} links across the demo town, 2 m spacing; reading {sum(map(len, layers))} polygons: {read_s:.2f} s")
    for label, (sec, samples) in runs.items():
        print(f"  {label:<18} {sec:6.3f} s  {n / sec:8.0f} links/s  {samples:8d} samples  x{sec / base:5.2f} of bare terrain")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 200)
