"""Fetching terrain tiles against a plain copy of the same bytes over the same loopback.

Serves 16 generated Copernicus-like tiles (4 x 4 degrees, copernicus-90 layout,
1200 x 1200 float32 cells each, its real size) from the local test server on
127.0.0.1 and times, in one run:

- the plain copy: the 16 files read over HTTP with urllib into a folder, 4 at
  once (the same parallelism as terrahop), nothing checked;
- ``terrahop terrain fetch`` as Python (``ensure_bbox``) into an empty cache:
  temporary names, raster checks (size and bounds), SHA-256, renames, the VRT.

Prints both times and their ratio (issue 13 target: within 1.5x).  Each is the
best of ``--repeat`` runs, each into a fresh folder.

Run from the repository root: python benchmarks/terrain_fetch.py [--rows 1200] [--repeat 5]
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time
import urllib.request
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run from a checkout without installing

from profiler.terrain_sources import TerrainRequest, dataset, ensure_bbox  # noqa: E402
from tests.terrain_server import TileServer, write_cog_tile  # noqa: E402

ORIGINS = [(45 + i, 6 + j) for i in range(4) for j in range(4)]


def plain_copy(url: str, paths: list[str], into: Path) -> None:
    """Read each path over HTTP into ``into``, 4 at once, no checks."""
    def one(p: str) -> None:
        with urllib.request.urlopen(f"{url}/{p}", timeout=60) as r, open(into / Path(p).name, "wb") as fh:
            shutil.copyfileobj(r, fh, 1 << 20)

    with ThreadPoolExecutor(max_workers=4) as pool:
        list(pool.map(one, paths))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1200, help="rows of a tile (copernicus-90: 1200)")
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    d = dataset("copernicus-90")
    work = Path(tempfile.mkdtemp(prefix="terrahop-bench-"))
    os.environ["TERRAHOP_TILE_ROWS"] = str(args.rows)
    try:
        paths = [d.tile_path(la, lo) for la, lo in ORIGINS]
        for (la, lo), p in zip(ORIGINS, paths):
            write_cog_tile(work / "www" / p, la, lo, args.rows)
        size_mb = sum((work / "www" / p).stat().st_size for p in paths) / 1e6
        server = TileServer(work / "www").start()
        copy_s, fetch_s = [], []
        for k in range(args.repeat):
            into = work / f"copy{k}"
            into.mkdir()
            t0 = time.perf_counter()
            plain_copy(server.url, paths, into)
            copy_s.append(time.perf_counter() - t0)
            os.environ["TERRAHOP_CACHE"] = str(work / f"cache{k}")
            t0 = time.perf_counter()
            fetched = ensure_bbox(TerrainRequest(d.name, server.url), (6.0, 45.0, 10.0, 49.0))
            fetch_s.append(time.perf_counter() - t0)
            assert [t.status for t in fetched.tiles] == ["downloaded"] * 16
        server.stop()
        best_copy, best_fetch = min(copy_s), min(fetch_s)
        print(f"16 tiles, {args.rows} rows each, {size_mb:.1f} MB over 127.0.0.1 (best of {args.repeat})")
        print(f"plain copy        {best_copy:8.3f} s")
        print(f"terrain fetch     {best_fetch:8.3f} s   (checks, SHA-256, renames, VRT)")
        print(f"ratio             {best_fetch / best_copy:8.2f} x   (target <= 1.5)")
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
