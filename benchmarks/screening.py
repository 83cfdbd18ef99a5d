"""Throughput of `terrahop screen` against a straightforward baseline, measured in one run.

Builds a synthetic 1-degree elevation tile at 1 arc-second (3601 x 3601 int16,
256 x 256 tiles, deflate: laid out like open DEM tiles; the terrain is
invented) and random site pairs 5-40 km long, then prints:

  * end-to-end pairs/s and samples/s of screening (sites and pairs files read,
    all cores, GeoPackage written) at 30 m spacing, pairs drawn among a pool
    of n/5 sites (each site in about ten candidate pairs);
  * the same for a baseline: per pair, points from pyproj and elevations from
    rasterio's ``sample()``, in a Python loop;
  * the bare bilinear numpy gather over the same points (a preloaded array,
    pixel coordinates given): the floor the pipeline is compared with;
  * peak memory (all processes) of screening N pairs streamed to a GeoPackage.

Run:  python benchmarks/screening.py [--quick] [--memory-pairs N] [--pairs N]
"""

from __future__ import annotations

import argparse
import csv
import os
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

SPACING_M = 30.0
LON0, LAT0 = 10.0, 46.0  # the tile covers 10..11 E, 46..47 N (an invented surface)


def make_tile(path: Path, n: int = 3601) -> None:
    """Invented terrain: smooth hills plus seeded noise, int16 metres, tiled and compressed."""
    import rasterio
    from rasterio.transform import from_origin

    rng = np.random.default_rng(1)
    y, x = np.mgrid[0:n, 0:n].astype(np.float32) / n
    z = 600 + 300 * np.sin(6 * x) * np.cos(5 * y) + 150 * np.sin(23 * x + 3 * y) + 40 * np.sin(70 * y + 40 * x)
    z += rng.normal(0, 3, z.shape).astype(np.float32)
    res = 1.0 / 3600.0
    transform = from_origin(LON0 - res / 2, LAT0 + 1 + res / 2, res, res)
    with rasterio.open(path, "w", driver="GTiff", width=n, height=n, count=1, dtype="int16",
                       crs="EPSG:4326", transform=transform, tiled=True, blockxsize=256,
                       blockysize=256, compress="deflate", nodata=-32768) as dst:
        dst.write(z.astype(np.int16), 1)


def random_pairs(n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """A pool of n/5 sites inside the tile and ``n`` distinct pairs of them 5-40 km apart.

    Returns ``(lat, lon, a, b)``: site positions and the pairs' site indices.
    """
    from profiler.geodesy import WGS84

    rng = np.random.default_rng(seed)
    n_sites = max(n // 5, 50)
    lat = rng.uniform(LAT0 + 0.01, LAT0 + 0.99, n_sites)
    lon = rng.uniform(LON0 + 0.01, LON0 + 0.99, n_sites)
    keys = np.zeros(0, dtype=np.int64)
    while keys.size < n:
        a = rng.integers(0, n_sites, 4 * n)
        b = rng.integers(0, n_sites, 4 * n)
        a, b = np.minimum(a, b), np.maximum(a, b)
        ok = a < b
        a, b = a[ok], b[ok]
        _, _, dist = WGS84.inv(lon[a], lat[a], lon[b], lat[b])
        ok = (dist >= 5_000) & (dist <= 40_000)
        new = a[ok] * n_sites + b[ok]
        keys = np.concatenate([keys, new])
        _, first = np.unique(keys, return_index=True)
        keys = keys[np.sort(first)]
    keys = keys[:n]
    return lat, lon, keys // n_sites, keys % n_sites


def write_inputs(folder: Path, pairs: tuple[np.ndarray, ...]) -> tuple[Path, Path]:
    lat, lon, a, b = pairs
    sites, plist = folder / "sites.csv", folder / "pairs.csv"
    with open(sites, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "lat", "lon", "antenna_agl_m"])
        for k in range(lat.size):
            w.writerow([f"s{k}", f"{lat[k]:.7f}", f"{lon[k]:.7f}", "20"])
    with open(plist, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["a", "b"])
        for i, j in zip(a.tolist(), b.tolist()):
            w.writerow([f"s{i}", f"s{j}"])
    return sites, plist


class PeakMemory:
    """Peak of the summed resident memory of a process and its children, sampled every 50 ms."""

    def __init__(self, pid: int) -> None:
        import psutil

        self.proc = psutil.Process(pid)
        self.peak = 0
        self.peak_pss = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        import psutil

        while not self._stop.is_set():
            total = pss = 0
            try:
                family = [self.proc, *self.proc.children(recursive=True)]
            except psutil.Error:
                family = []
            for p in family:
                try:
                    info = p.memory_full_info()  # PSS shares pages common to forked workers out fairly
                    total += info.rss
                    pss += getattr(info, "pss", info.rss)
                except psutil.Error:
                    pass
            self.peak = max(self.peak, total)
            self.peak_pss = max(self.peak_pss, pss)
            time.sleep(0.1)

    def __enter__(self) -> "PeakMemory":
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()


def run_screen(dem: Path, sites_csv: Path, pairs_csv: Path | None, out: Path, workers: int,
               max_km: float | None = None, method: str | None = None):
    from profiler.budget import Radio
    from profiler.io.sites import read_name_pairs, read_sites
    from profiler.link import Settings
    from profiler.screening import PairPlan, screen
    from profiler.terrain import ElevationModel

    sites, bad = read_sites(sites_csv)
    explicit = None
    if pairs_csv is not None:
        a, b, bad_pairs = read_name_pairs(pairs_csv, sites.names)
        explicit = (a, b)
    with ElevationModel([dem]) as model:
        settings = Settings(spacing_m=SPACING_M)
        if method:
            settings = Settings(spacing_m=SPACING_M, diffraction_method=method)
        return screen(sites, model, Radio(5.8, gain_a_dbi=30, gain_b_dbi=30), settings,
                      out, plan=PairPlan(max_km=max_km, explicit=explicit), workers=workers, restart=True,
                      overwrite=True)


def baseline(dem: Path, pairs: tuple[np.ndarray, ...], n: int) -> tuple[float, int]:
    """Per pair: pyproj points at 30 m, rasterio ``sample()`` elevations, in a loop."""
    import rasterio
    from pyproj import Geod

    geod = Geod(ellps="WGS84")
    lat, lon, ia, ib = pairs
    lat_a, lon_a, lat_b, lon_b = lat[ia[:n]], lon[ia[:n]], lat[ib[:n]], lon[ib[:n]]
    samples = 0
    t = time.perf_counter()
    with rasterio.open(dem) as src:
        for k in range(n):
            az, _, dist = geod.inv(lon_a[k], lat_a[k], lon_b[k], lat_b[k])
            m = int(np.ceil(dist / SPACING_M)) + 1
            d = np.linspace(0.0, dist, m)
            lon, lat, _ = geod.fwd(np.full(m, lon_a[k]), np.full(m, lat_a[k]), np.full(m, az), d)
            heights = [v[0] for v in src.sample(zip(lon, lat))]
            samples += len(heights)
    return time.perf_counter() - t, samples


def bare_gather(dem: Path, pairs: tuple[np.ndarray, ...], n: int) -> tuple[float, int]:
    """The bilinear gather alone over the same sample points (array in memory, points given)."""
    from profiler.geodesy import sample_paths
    from profiler.kernels import cell_numpy, gather_bilinear
    from profiler.terrain import ElevationModel

    plat, plon, ia, ib = pairs
    lat, lon, _, counts, _ = sample_paths(plat[ia[:n]], plon[ia[:n]], plat[ib[:n]], plon[ib[:n]], SPACING_M)
    keep = np.arange(lat.shape[1])[None, :] < counts[:, None]
    lat, lon = lat[keep], lon[keep]
    with ElevationModel([dem]) as model:
        model.preload()
        s = model.sources[0]
        block = model._cache[s.path].to_array().astype(np.float64)  # metres, a plain float array
        a, _, c, _, e, f = s.transform
        col, row = (lon - c) / a, (lat - f) / e
        best = np.inf
        for _ in range(3):
            t = time.perf_counter()
            x, y, x0, y0 = cell_numpy(col, row, s.width, s.height)
            gather_bilinear(block, x, y, x0, y0)
            best = min(best, time.perf_counter() - t)
    return best, int(lat.size)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--quick", action="store_true", help="fewer pairs: a few minutes in all")
    ap.add_argument("--pairs", type=int, default=None, help="pairs screened for the speed figures")
    ap.add_argument("--memory-pairs", type=int, default=None,
                    help="pairs streamed for the memory figure [1,000,000; 100,000 with --quick; 0 skips]")
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--diffraction", default=None,
                    help="diffraction method of the screen runs [default: the engine's default]")
    ap.add_argument("--keep", type=Path, default=None, help="folder to keep the tile and inputs in")
    args = ap.parse_args()
    n_pairs = args.pairs or (20_000 if args.quick else 100_000)
    n_base = 40 if args.quick else 150
    n_mem = args.memory_pairs if args.memory_pairs is not None else (100_000 if args.quick else 1_000_000)
    folder = args.keep or Path(tempfile.mkdtemp(prefix="terrahop-bench-"))
    folder.mkdir(parents=True, exist_ok=True)
    dem = folder / "tile_1arcsec.tif"
    if not dem.exists():
        t = time.perf_counter()
        make_tile(dem)
        print(f"tile: 3601 x 3601 int16, deflate, 256x256 blocks ({dem.stat().st_size / 2**20:.1f} MiB) "
              f"built in {time.perf_counter() - t:.1f} s")
    pairs = random_pairs(n_pairs)
    sites_csv, pairs_csv = write_inputs(folder, pairs)
    from profiler.link import Settings

    method = args.diffraction or Settings().diffraction_method
    print(f"{n_pairs} random pairs of 5-40 km among {pairs[0].size} sites, {SPACING_M:g} m spacing, "
          f"{args.workers} worker(s), {os.cpu_count()} core(s), {method} diffraction, availability estimated")

    print(f"load average (1, 5, 15 min) at start: {', '.join(f'{v:.2f}' for v in os.getloadavg())}")
    t_base, s_base = baseline(dem, pairs, n_base)
    print(f"baseline (pyproj points + rasterio sample(), per pair): {n_base / t_base:10,.1f} pairs/s "
          f"{s_base / t_base:14,.0f} samples/s")
    t_gather, s_gather = bare_gather(dem, pairs, min(n_pairs, 5000))
    print(f"bare bilinear numpy gather over the same points:        {'':>16} {s_gather / t_gather:14,.0f} samples/s")
    t = time.perf_counter()
    summary = run_screen(dem, sites_csv, pairs_csv, folder / "screen.gpkg", args.workers, method=args.diffraction)
    t_screen = time.perf_counter() - t
    rate_p, rate_s = summary.pairs / t_screen, summary.samples / t_screen
    print(f"terrahop screen, end to end:                            {rate_p:10,.1f} pairs/s "
          f"{rate_s:14,.0f} samples/s  ({summary.pairs} pairs, {summary.samples:,} samples, {t_screen:.1f} s)")
    print(f"screen / baseline:  {rate_p / (n_base / t_base):8.0f} x pairs/s   (target >= 200 x)")
    print(f"screen / bare gather: {rate_s / (s_gather / t_gather):6.2f} x samples/s (target >= 1 x)")
    if args.workers > 1:
        t = time.perf_counter()
        one = run_screen(dem, sites_csv, pairs_csv, folder / "screen1.gpkg", 1, method=args.diffraction)
        t_one = time.perf_counter() - t
        print(f"terrahop screen, 1 worker (in-process), end to end:     {one.pairs / t_one:10,.1f} pairs/s "
              f"{one.samples / t_one:14,.0f} samples/s  ({t_one:.1f} s; "
              f"{one.samples / t_one / (s_gather / t_gather):.2f} x the bare gather on one core)")
    print(f"load average (1, 5, 15 min) now: {', '.join(f'{v:.2f}' for v in os.getloadavg())} "
          f"on {os.cpu_count()} cores (other work on the machine slows the parallel figures)")
    if n_mem:
        from profiler.io.sites import read_sites  # noqa: F401  (imported before measuring)

        # All pairs within 40 km of enough sites spread over the tile.
        n_sites = int(np.sqrt(2 * n_mem / 0.33)) + 1
        rng = np.random.default_rng(5)
        mem_sites = folder / "mem_sites.csv"
        with open(mem_sites, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["name", "lat", "lon", "antenna_agl_m"])
            for k in range(n_sites):
                w.writerow([f"s{k}", f"{rng.uniform(LAT0 + .01, LAT0 + .99):.7f}",
                            f"{rng.uniform(LON0 + .01, LON0 + .99):.7f}", "20"])
        # The real command in a fresh process, so nothing of this script counts.
        import subprocess

        cmd = [sys.executable, "-m", "profiler", "screen", str(mem_sites), "--dem", str(dem),
               "--freq-ghz", "5.8", "--gain-a-dbi", "30", "--gain-b-dbi", "30", "--spacing-m", str(SPACING_M),
               "--max-km", "40", "--out", str(folder / "memory.gpkg"), "--restart", "--overwrite", "--workers", str(args.workers)]
        if args.diffraction:
            cmd += ["--diffraction", args.diffraction]
        env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]))
        t = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
        with PeakMemory(proc.pid) as mem:
            stdout, stderr = proc.communicate()
        dt = time.perf_counter() - t
        if proc.returncode != 0:
            raise SystemExit(f"memory run failed: {stderr}")
        first = stdout.splitlines()[0]
        print(f"memory: terrahop screen of all pairs of {n_sites} sites within 40 km: {first}")
        print(f"memory: peak of the command and its workers: {mem.peak_pss / 2**20:,.0f} MiB proportional set "
              f"size (shared pages counted once), {mem.peak / 2**20:,.0f} MiB summed resident size (shared "
              f"pages counted in every process); target < 1024 MiB; {dt:.0f} s wall")
    print(f"files in {folder}")


if __name__ == "__main__":
    main()
