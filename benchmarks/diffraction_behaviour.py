"""How often each diffraction method's loss falls while one obstacle rises.

Invented test case: rolling ground (20 m sine), antennas 40 m above sea level,
one sample raised from 0 to 100 m above the antenna height in 1 m steps, over
random lengths (2-40 km), positions, frequencies (0.05-40 GHz) and k-factors.
Prints, per method, how many of the sequences fall at some step and the
largest single-step fall.  Knife-edge and Bullington cannot fall (one edge,
or the crossing of the horizon rays, only rises); the others can.

Run from the repository root: python benchmarks/diffraction_behaviour.py [--cases 400]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run from a checkout without installing

from profiler.losses import terrain_diffraction as td  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=400)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    n, steps = 101, np.linspace(-40.0, 60.0, 101)
    falls = {m: 0 for m in td.DIFFRACTION_METHODS}
    worst = {m: 0.0 for m in td.DIFFRACTION_METHODS}
    for _ in range(args.cases):
        length = rng.uniform(2e3, 40e3)
        d = np.linspace(0.0, length, n)
        i = int(rng.integers(10, 91))
        freq = rng.uniform(0.05, 40.0)
        k = rng.choice([0.5, 2 / 3, 1.0, 4 / 3, 2.0, np.inf])
        surface = np.tile(20.0 * np.sin(d / 900.0), (steps.size, 1))
        surface[:, i] = 40.0 + steps
        inner = np.zeros(surface.shape, bool)
        inner[:, 1:-1] = True
        out = td.diffraction_by_method(np.tile(d, (steps.size, 1)), surface, inner, 40.0, 40.0,
                                       np.full(steps.size, length), freq, k)
        for m in td.DIFFRACTION_METHODS:
            step = np.diff(out[m])
            if (step < -1e-9).any():
                falls[m] += 1
                worst[m] = max(worst[m], float(-step.min()))
    print(f"{args.cases} sequences of one obstacle rising in 1 m steps over rolling ground")
    print(f"{'method':<18}{'sequences that fall':>21}{'largest fall dB':>17}")
    for m in td.DIFFRACTION_METHODS:
        print(f"{m:<18}{falls[m]:>21}{worst[m]:>17.2f}")


if __name__ == "__main__":
    main()
