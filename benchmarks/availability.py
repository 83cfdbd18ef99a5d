"""Throughput of the availability estimate (gases, rain, multipath, margin needed).

Prints paths per second for ``evaluate_availability`` (outage per mechanism and
the margin needed for the target, by vectorised bisection) and for the P.676
gaseous attenuation, on random invented hops, against a baseline measured in
the same run: the same functions called once per path in a Python loop (a
batch of one each time), on a subset.  The loop results are compared with the
array results (largest difference).

Run from the repository root: python benchmarks/availability.py [--paths 20000] [--baseline-paths 200]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run from a checkout without installing

from profiler.availability import ClimateSettings, evaluate_availability
from profiler.losses.atmosphere import gaseous_path_attenuation_db


def random_hops(n: int, seed: int = 7) -> dict[str, np.ndarray]:
    """Invented hops: 2-50 km, 6-40 GHz, antennas 0-1500 m above sea level, margins 10-50 dB."""
    rng = np.random.default_rng(seed)
    return {
        "fade_margin_db": rng.uniform(10.0, 50.0, n),
        "distance_m": rng.uniform(2_000.0, 50_000.0, n),
        "freq_ghz": rng.uniform(6.0, 40.0, n),
        "altitude_a_m": rng.uniform(0.0, 1500.0, n),
        "altitude_b_m": rng.uniform(0.0, 1500.0, n),
        "latitude_deg": rng.uniform(-60.0, 60.0, n),
    }


def run_batch(h: dict[str, np.ndarray], s: ClimateSettings):
    return evaluate_availability(
        h["fade_margin_db"], h["distance_m"], h["freq_ghz"], h["altitude_a_m"], h["altitude_b_m"], s,
        latitude_deg=h["latitude_deg"], multipath_outside_range="exclude",
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--paths", type=int, default=20_000)
    parser.add_argument("--baseline-paths", type=int, default=200)
    args = parser.parse_args()
    s = ClimateSettings()
    hops = random_hops(args.paths)
    sub = {k: v[: args.baseline_paths] for k, v in hops.items()}

    t0 = time.perf_counter()
    batch = run_batch(hops, s)
    t_batch = time.perf_counter() - t0
    t0 = time.perf_counter()
    loop = [run_batch({k: v[i : i + 1] for k, v in sub.items()}, s) for i in range(args.baseline_paths)]
    t_loop = time.perf_counter() - t0
    loop_avail = np.concatenate([r.availability_pct for r in loop])
    loop_need = np.concatenate([r.required_fade_margin_db for r in loop])
    n = args.baseline_paths

    t0 = time.perf_counter()
    gases = gaseous_path_attenuation_db(hops["distance_m"], hops["freq_ghz"])
    t_gas = time.perf_counter() - t0
    t0 = time.perf_counter()
    gas_loop = np.array([float(gaseous_path_attenuation_db(d, f)) for d, f in zip(sub["distance_m"], sub["freq_ghz"])])
    t_gas_loop = time.perf_counter() - t0

    print(f"availability (outage + margin needed): {args.paths / t_batch:,.0f} paths/s batched, "
          f"{n / t_loop:,.0f} paths/s one at a time -> {(args.paths / t_batch) / (n / t_loop):.0f}x")
    print(f"  largest difference batch vs one-at-a-time: availability "
          f"{np.nanmax(np.abs(batch.availability_pct[:n] - loop_avail)):.2e} %, margin needed "
          f"{np.nanmax(np.abs(batch.required_fade_margin_db[:n] - loop_need)):.2e} dB")
    print(f"gases (P.676-12 Annex 1, 79 lines): {args.paths / t_gas:,.0f} paths/s batched, "
          f"{n / t_gas_loop:,.0f} paths/s one at a time -> {(args.paths / t_gas) / (n / t_gas_loop):.0f}x; "
          f"largest difference {np.max(np.abs(gases[:n] - gas_loop)):.2e} dB")


if __name__ == "__main__":
    main()
