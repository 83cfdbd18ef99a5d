"""Throughput of the terrain diffraction methods.

Prints profiles per second for each method on 10,000 random 20-km profiles
sampled every 30 m (invented terrain), against a baseline measured in the
same run: a plain Python loop over the samples of each profile, the same
method written with the math module, on a subset of the profiles.  The loop
results are also compared with the array results (largest difference, dB).

Run from the repository root: python benchmarks/diffraction.py [--paths 10000] [--baseline-paths 100]
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # run from a checkout without installing

from profiler.losses import terrain_diffraction as td
from profiler.losses.smooth_earth import smooth_earth_loss_db
from profiler.units import EARTH_RADIUS_M, SPEED_OF_LIGHT_M_S

LENGTH_M = 20_000.0
SPACING_M = 30.0
FREQ_GHZ = 6.0
K = 4.0 / 3.0


def random_profiles(n_paths: int, seed: int = 1):
    """Invented rolling terrain: random walk plus a few ridges, antennas 10-40 m above ground."""
    rng = np.random.default_rng(seed)
    n = int(LENGTH_M // SPACING_M) + 1
    d = np.linspace(0.0, LENGTH_M, n)
    walk = np.cumsum(rng.normal(0.0, 2.0, (n_paths, n)), axis=1)
    ridges = np.zeros((n_paths, n))
    for _ in range(3):
        centre = rng.uniform(0.1, 0.9, (n_paths, 1)) * LENGTH_M
        ridges += rng.uniform(0.0, 80.0, (n_paths, 1)) * np.exp(-(((d - centre) / 800.0) ** 2))
    surface = 200.0 + walk + ridges
    dist = np.broadcast_to(d, (n_paths, n)).copy()
    inner = np.zeros((n_paths, n), bool)
    inner[:, 1:-1] = True
    ha = surface[:, 0] + rng.uniform(10.0, 40.0, n_paths)
    hb = surface[:, -1] + rng.uniform(10.0, 40.0, n_paths)
    return dist, surface, inner, ha, hb, np.full(n_paths, LENGTH_M)


# ---- baseline: one profile at a time, a Python loop over its samples -------------------


def _j(v: float) -> float:
    return 6.9 + 20.0 * math.log10(math.sqrt((v - 0.1) ** 2 + 1.0) + v - 0.1) if v > -0.78 else 0.0


def _loop_knife(d, s, ha, hb, length, lam, ae, lo=0, hi=None, ya=None, yb=None, da=None, db=None, allowed=None):
    """Largest v between columns lo..hi (exclusive) against the line (da, ya) -> (db, yb)."""
    hi = len(d) - 1 if hi is None else hi
    da = 0.0 if da is None else da
    db = length if db is None else db
    ya = ha if ya is None else ya
    yb = hb if yb is None else yb
    best, where = -math.inf, -1
    for i in range(lo + 1, hi):
        d1, d2 = d[i] - da, db - d[i]
        if d1 <= 0 or d2 <= 0 or (allowed is not None and i not in allowed):
            continue
        elev = s[i] + d[i] * (length - d[i]) / (2 * ae)
        h = elev - (ya + (yb - ya) * d1 / (db - da))
        v = h * math.sqrt(2.0 / lam * (1.0 / d1 + 1.0 / d2))
        if v > best:
            best, where = v, i
    return best, where


def _loop_bullington(d, elev_of, ha, hb, length, lam):
    n = len(d)
    stim = srim = vmax = -math.inf
    for i in range(1, n - 1):
        d1, d2 = d[i], length - d[i]
        if d1 <= 0 or d2 <= 0:
            continue
        e = elev_of(i)
        stim = max(stim, (e - ha) / d1)
        srim = max(srim, (e - hb) / d2)
        h = e - (ha * d2 + hb * d1) / length
        vmax = max(vmax, h * math.sqrt(2.0 * length / (lam * d1 * d2)))
    if stim > (hb - ha) / length:
        dbp = (hb - ha + srim * length) / (stim + srim)
        v = (ha + stim * dbp - (ha * (length - dbp) + hb * dbp) / length) * math.sqrt(
            2.0 * length / (lam * dbp * (length - dbp)))
    else:
        v = vmax
    luc = _j(v)
    return luc + (1 - math.exp(-luc / 6)) * (10 + 0.02 * length / 1000.0)


def loop_method(name: str, d, s, ha, hb, length, freq_ghz, k) -> float:
    lam = SPEED_OF_LIGHT_M_S / (freq_ghz * 1e9)
    ae = k * EARTH_RADIUS_M
    n = len(d)
    if name == "knife-edge":
        return _j(_loop_knife(d, s, ha, hb, length, lam, ae)[0])
    if name in ("deygout", "epstein-peterson"):
        vp, ip = _loop_knife(d, s, ha, hb, length, lam, ae)
        if vp <= 0:
            return _j(vp)
        ep = s[ip] + d[ip] * (length - d[ip]) / (2 * ae)
        # Distinct summits only: the ground between a side edge and the main edge dips
        # below the lower of the two by 0.6 F1 (profiler.losses.terrain_diffraction).
        elev = [s[i] + d[i] * (length - d[i]) / (2 * ae) for i in range(n)]
        left, right, low = set(), set(), math.inf
        for i in range(ip - 1, 0, -1):
            if min(elev[i], ep) - low >= 0.6 * math.sqrt(lam * d[i] * (d[ip] - d[i]) / d[ip]):
                left.add(i)
            low = min(low, elev[i])
        low = math.inf
        for i in range(ip + 1, n - 1):
            if min(elev[i], ep) - low >= 0.6 * math.sqrt(lam * (d[i] - d[ip]) * (length - d[i]) / (length - d[ip])):
                right.add(i)
            low = min(low, elev[i])
        vt, it = _loop_knife(d, s, ha, ep, length, lam, ae, lo=0, hi=ip, db=d[ip], allowed=left)
        vr, ir = _loop_knife(d, s, ep, hb, length, lam, ae, lo=ip, hi=n - 1, da=d[ip], allowed=right)
        if name == "deygout":
            return _j(vp) + _j(vt) + _j(vr)
        loss = 0.0
        da, ya, db, yb = 0.0, ha, length, hb
        if vt > -0.78:
            loss += _j(vt)
            da, ya = d[it], s[it] + d[it] * (length - d[it]) / (2 * ae)
        if vr > -0.78:
            loss += _j(vr)
            db, yb = d[ir], s[ir] + d[ir] * (length - d[ir]) / (2 * ae)
        h = ep - (ya + (yb - ya) * (d[ip] - da) / (db - da))
        return loss + _j(h * math.sqrt(2.0 / lam * (1.0 / (d[ip] - da) + 1.0 / (db - d[ip]))))
    bulge = [d[i] * (length - d[i]) / (2 * ae) for i in range(n)]
    lbulla = _loop_bullington(d, lambda i: s[i] + bulge[i], ha, hb, length, lam)
    if name == "bullington":
        return lbulla
    v1 = v2 = 0.0
    for i in range(1, n):
        step = d[i] - d[i - 1]
        v1 += step * (s[i] + s[i - 1])
        v2 += step * (s[i] * (2 * d[i] + d[i - 1]) + s[i - 1] * (d[i] + 2 * d[i - 1]))
    hst = (2 * v1 * length - v2) / length**2
    hsr = (v2 - v1 * length) / length**2
    hobs = aobt = aobr = -math.inf
    for i in range(1, n - 1):
        h = s[i] - (ha * (length - d[i]) + hb * d[i]) / length
        hobs, aobt, aobr = max(hobs, h), max(aobt, h / d[i]), max(aobr, h / (length - d[i]))
    if hobs > 0:
        hst -= hobs * aobt / (aobt + aobr)
        hsr -= hobs * aobr / (aobt + aobr)
    hts, hrs = ha - min(hst, s[0]), hb - min(hsr, s[-1])
    lbulls = _loop_bullington(d, lambda i: bulge[i], hts, hrs, length, lam)
    ldsph = float(smooth_earth_loss_db(length, hts, hrs, freq_ghz, k))
    return lbulla + max(ldsph - lbulls, 0.0)


def _timed(fn, repeat: int = 3) -> tuple[float, object]:
    best, out = math.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--paths", type=int, default=10_000)
    parser.add_argument("--baseline-paths", type=int, default=100)
    args = parser.parse_args()

    dist, surf, inner, ha, hb, length = random_profiles(args.paths)
    n_base = min(args.baseline_paths, args.paths)
    print(f"{args.paths} profiles of {dist.shape[1]} samples ({LENGTH_M / 1000:g} km at {SPACING_M:g} m), "
          f"{FREQ_GHZ:g} GHz, k = {K:.3f}; baseline: Python loop over samples on {n_base} profiles")
    print(f"{'method':<18}{'array prof/s':>14}{'loop prof/s':>13}{'ratio':>9}{'max |diff| dB':>15}{'mean dB':>9}")
    for name in td.DIFFRACTION_METHODS:
        t_arr, loss = _timed(lambda: td.diffraction_loss_db(name, dist, surf, inner, ha, hb, length, FREQ_GHZ, K))
        rows = [(dist[i].tolist(), surf[i].tolist(), float(ha[i]), float(hb[i])) for i in range(n_base)]
        t_loop, ref = _timed(lambda: [loop_method(name, d, s, a, b, LENGTH_M, FREQ_GHZ, K) for d, s, a, b in rows], 1)
        arr_rate = args.paths / t_arr
        loop_rate = n_base / t_loop
        diff = float(np.max(np.abs(np.asarray(ref) - loss[:n_base])))
        print(f"{name:<18}{arr_rate:>14,.0f}{loop_rate:>13,.0f}{arr_rate / loop_rate:>9.1f}{diff:>15.2e}"
              f"{float(np.mean(loss)):>9.2f}")
    t_all, _ = _timed(lambda: td.diffraction_by_method(dist, surf, inner, ha, hb, length, FREQ_GHZ, K))
    print(f"{'all five at once':<18}{args.paths / t_all:>14,.0f}")
    t_warn, _ = _timed(lambda: td.diffraction_validity_warnings("delta-bullington", dist, surf, inner, ha, hb,
                                                                 length, FREQ_GHZ, K))
    print(f"{'validity check':<18}{args.paths / t_warn:>14,.0f}")


if __name__ == "__main__":
    main()
