"""Speed of the Monte Carlo confidence: 1,000 draws of a 20 km link sampled every 30 m, one core.

Times (median of --repeats runs after a warm-up), on an invented rolling
profile of 667 samples:

* ``probabilities``: the draws (correlated field, antennas, k) and the
  clearance reductions, compiled kernel: what screening computes per pair;
* ``full``: the same plus the diffraction loss of every draw by
  delta-Bullington (ITU-R P.526-15 section 4.5.2) at the drawn k, one batch of
  1,000 paths: what ``terrahop link --draws 1000`` computes;
* ``numpy twin``: the probabilities with the kernel's numpy twin;
* baseline, measured in the same run: a plain loop over draws, each draw one
  call of :func:`profiler.geometry.clearance` at both criterion k and one
  diffraction call (a batch of one), on --baseline-draws draws, scaled to 1,000.

Target (issue 17): ``full`` under 50 ms.  Prints figures, asserts nothing.
Run from the repository root: python benchmarks/confidence.py [--draws 1000] [--repeats 7]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one core

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run from a checkout without installing

from profiler import confidence as conf  # noqa: E402
from profiler.geometry import clearance  # noqa: E402
from profiler.link_types import Criterion  # noqa: E402
from profiler.losses.terrain_diffraction import diffraction_loss_db  # noqa: E402

LENGTH_M = 20_000.0
SPACING_M = 30.0
FREQ_GHZ = 5.8


def invented_profile(seed: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Rolling invented terrain, 667 samples over 20 km, with a ridge near mid-path (m)."""
    rng = np.random.default_rng(seed)
    d = np.linspace(0.0, LENGTH_M, int(LENGTH_M / SPACING_M) + 1)
    s = 100.0 + np.cumsum(rng.normal(0.0, 1.5, d.size))
    s += 25.0 * np.exp(-((d - 11_000.0) / 900.0) ** 2)
    return d, s


def _median_ms(fn, repeats: int) -> float:
    fn()  # warm-up (compiles or loads the cached kernels)
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return 1000.0 * float(np.median(times))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=1000)
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--baseline-draws", type=int, default=50)
    args = ap.parse_args()
    d, s = invented_profile()
    n = d.size
    ha, hb = s[0] + 30.0, s[-1] + 30.0
    settings = conf.ConfidenceSettings(draws=args.draws, dem_error_m=3.0)
    seed = conf.path_seed(settings.seed, 0.0, 0.0, 0.0, 0.2)
    crit = Criterion()

    def draws():
        return conf.draw_path(d, s, None, LENGTH_M, ha, hb, FREQ_GHZ, 4 / 3, 2 / 3, 3.0, settings, seed)

    def probabilities():
        dr = draws()
        return np.mean(crit.met(dr.frac_design, dr.frac_worst)), np.mean(dr.los)

    def full():
        dr = draws()
        interior = np.zeros((args.draws, n), dtype=bool)
        interior[:, 1:-1] = True
        loss = diffraction_loss_db("delta-bullington", np.broadcast_to(d, (args.draws, n)).copy(), dr.surface_m,
                                   interior, dr.antenna_a_m, dr.antenna_b_m, np.full(args.draws, LENGTH_M),
                                   np.full(args.draws, FREQ_GHZ), dr.k)
        return np.mean(crit.met(dr.frac_design, dr.frac_worst)), np.percentile(loss, (5, 50, 95))

    t_prob = _median_ms(probabilities, args.repeats)
    t_full = _median_ms(full, args.repeats)
    os.environ["TERRAHOP_NO_NUMBA"] = "1"
    t_twin = _median_ms(probabilities, max(1, args.repeats // 2))
    del os.environ["TERRAHOP_NO_NUMBA"]

    dr = draws()
    m = args.baseline_draws
    inside = np.zeros((1, n), dtype=bool)
    inside[:, 1:-1] = True
    length = np.array([LENGTH_M])

    def baseline():
        met = 0
        for j in range(m):
            surf = dr.surface_m[j][None, :]
            a, b = dr.antenna_a_m[j:j + 1], dr.antenna_b_m[j:j + 1]
            c1 = clearance(d[None, :], surf, inside, length, a, b, FREQ_GHZ, 4 / 3)
            c2 = clearance(d[None, :], surf, inside, length, a, b, FREQ_GHZ, 2 / 3)
            met += bool(crit.met(c1.worst_f1_fraction, c2.worst_f1_fraction)[0])
            diffraction_loss_db("delta-bullington", d[None, :], surf, inside, a, b, length, FREQ_GHZ, dr.k[j:j + 1])
        return met

    t_base = _median_ms(baseline, 3) * args.draws / m
    p, q = full()
    print(f"confidence: {args.draws} draws of a {LENGTH_M / 1000:g} km link, {n} samples ({SPACING_M:g} m), one core")
    print(f"  probabilities (compiled kernel)        {t_prob:8.1f} ms")
    print(f"  full, with delta-Bullington per draw   {t_full:8.1f} ms   (target < 50 ms)")
    print(f"  probabilities, numpy twin              {t_twin:8.1f} ms")
    print(f"  baseline: loop of single-path calls    {t_base:8.1f} ms   ({m} draws timed, scaled to {args.draws})")
    print(f"  speed-up of full over the baseline     {t_base / t_full:8.1f} x")
    print(f"  P(meets) {p:.3f}; diffraction 5/50/95 % {q[0]:.1f}/{q[1]:.1f}/{q[2]:.1f} dB")


if __name__ == "__main__":
    main()
