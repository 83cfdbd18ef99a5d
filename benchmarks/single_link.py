"""Wall time of one `terrahop link` on a 1-degree, 1-arc-second tile, and of `terrahop --help`.

Builds a synthetic 3601 x 3601 int16 tile (tiled, deflate-compressed, like the
open DEM tiles) in a temporary folder, then times each command several times
against the bare interpreter start (`python -c pass`) measured in the same run.
Prints figures; asserts nothing.

    python3 benchmarks/single_link.py [--repeat 5]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]


def make_tile(path: Path) -> None:
    import rasterio
    from rasterio.transform import from_origin

    n = 3601
    y, x = np.mgrid[0:n, 0:n]
    z = 500 + 300 * np.sin(x / 400.0) * np.cos(y / 300.0) + np.random.default_rng(0).normal(0, 3, (n, n))
    with rasterio.open(
        path, "w", driver="GTiff", width=n, height=n, count=1, dtype="int16", crs="EPSG:4326",
        transform=from_origin(7 - 0.5 / 3600, 46 + 0.5 / 3600, 1 / 3600, 1 / 3600),
        tiled=True, blockxsize=256, blockysize=256, compress="deflate", nodata=-32768,
    ) as dst:
        dst.write(z.astype("int16"), 1)


def timed(cmd: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True, cwd=REPO)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        tile = Path(tmp) / "N45E007.tif"
        make_tile(tile)
        py = [sys.executable]
        base = timed(py + ["-c", "pass"], args.repeat)
        help_s = timed(py + ["-m", "profiler", "--help"], args.repeat)
        link_s = timed(py + ["-m", "profiler", "link", "--dem", str(tile), "--site-a", "45.1021,7.2113",
                             "--site-b", "45.1830,7.3050", "--agl-a", "30", "--agl-b", "18", "--freq-ghz", "5.8",
                             "--json"], args.repeat)
    print(f"interpreter start (baseline)        {base * 1000:7.0f} ms")
    print(f"terrahop --help                     {help_s * 1000:7.0f} ms  ({help_s / base:.1f} x baseline)")
    print(f"terrahop link, 1-degree 1\" tile     {link_s * 1000:7.0f} ms  ({link_s / base:.1f} x baseline)")


if __name__ == "__main__":
    main()
