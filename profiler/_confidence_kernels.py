"""Kernel of the Monte Carlo draws of :mod:`profiler.confidence`.

For one path and D draws: the correlated error field along the samples
(AR(1) recursion e_c = rho_c e_(c-1) + sqrt(1 - rho_c^2) z_c, a Gaussian
field with exponential correlation exp(-|dx| / L)), the drawn surface, the
drawn antenna elevations, and per draw the worst clearance as a fraction of
F1 at the criterion's two k-factors and the line of sight at the drawn k.
The compiled loop and its numpy twin do the same arithmetic in the same
order (same bits, tests/test_kernels.py).  Pure functions, no I/O.
"""

from __future__ import annotations

import numpy as np

from ._compiled import twin

__all__ = ["confidence_draws", "confidence_draws_numpy"]


def confidence_draws_numpy(
    surface: np.ndarray, sigma: np.ndarray, rho: np.ndarray, innov: np.ndarray, interior: np.ndarray,
    t: np.ndarray, f1: np.ndarray, bulge_design: np.ndarray, bulge_worst: np.ndarray, d1d2: np.ndarray,
    ha: float, hb: float, follow_a: float, follow_b: float, z: np.ndarray, ea: np.ndarray, eb: np.ndarray,
    den_draw: np.ndarray, out_surface: np.ndarray,
) -> tuple[np.ndarray, ...]:
    """Per draw: worst F1 fraction at the design and worst-case k, line of sight at the drawn k,
    antenna a and b elevations (m); fills ``out_surface`` (D, N) with the drawn surfaces (m).

    Inputs of one path, N samples: ``surface``, ``sigma`` (m), ``rho``/``innov`` (the AR(1)
    weights, ``rho[0]`` = 0 and ``innov[0]`` = 1), ``interior``, ``t`` = d1/d, ``f1`` (m),
    the bulges at the two criterion k (m) and d1 d2 (m^2); ``ha``/``hb`` antenna elevations,
    ``follow_a``/``follow_b`` 1.0 where the antenna stands on the drawn ground (0.0: fixed
    elevation); per draw ``z`` (D, N) standard normals, ``ea``/``eb`` antenna errors (m),
    ``den_draw`` 2 k a at the drawn k (m).  Clearance = line - (surface + bulge),
    ITU-R P.526-15 eq. 2 for F1 (see profiler.geometry).
    """
    n_draws, width = z.shape
    e = np.zeros(n_draws)
    field = np.empty((n_draws, width))
    for c in range(width):
        e = rho[c] * e + innov[c] * z[:, c]
        field[:, c] = sigma[c] * e
    out_surface[:, :] = surface[None, :] + field
    a = ha + follow_a * field[:, 0] + ea
    b = hb + follow_b * field[:, width - 1] + eb
    line = a[:, None] + (b - a)[:, None] * t[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        q_design = (line - (out_surface + bulge_design[None, :])) / f1[None, :]
        q_worst = (line - (out_surface + bulge_worst[None, :])) / f1[None, :]
        g_draw = line - (out_surface + d1d2[None, :] / den_draw[:, None])
    usable = interior & (f1 > 0)
    frac_design = np.min(np.where(usable[None, :], q_design, np.inf), axis=1)
    frac_worst = np.min(np.where(usable[None, :], q_worst, np.inf), axis=1)
    los = np.min(np.where(interior[None, :], g_draw, np.inf), axis=1) > 0.0
    return frac_design, frac_worst, los, a, b


def _examples(rng: np.random.Generator) -> list[tuple]:
    out: list[tuple] = []
    for width, n_draws, corr in ((60, 40, 300.0), (3, 5, 1e-9), (25, 7, np.inf)):
        length = rng.uniform(1_000.0, 30_000.0)
        d1 = np.linspace(0.0, length, width)
        d2 = length - d1
        dx = np.diff(d1, prepend=0.0)
        rho = np.exp(-dx / corr)
        rho[0] = 0.0
        innov = np.sqrt(1.0 - rho * rho)
        surface = rng.normal(100.0, 20.0, width)
        sigma = rng.uniform(0.0, 5.0, width)
        interior = np.ones(width, dtype=np.bool_)
        interior[[0, -1]] = False
        lam = 0.05
        f1 = np.sqrt(lam * d1 * d2 / length)
        d1d2 = d1 * d2
        den_d = 2.0 * 4.0 / 3.0 * 6_371_000.0
        den_w = 2.0 * 2.0 / 3.0 * 6_371_000.0
        den_draw = 2.0 * rng.uniform(0.5, 3.0, n_draws) * 6_371_000.0
        z = rng.standard_normal((n_draws, width))
        ea = rng.normal(0.0, 0.3, n_draws)
        eb = rng.normal(0.0, 0.3, n_draws)
        out.append((surface, sigma, rho, innov, interior, d1 / length, f1, d1d2 / den_d, d1d2 / den_w, d1d2,
                      surface[0] + 30.0, surface[-1] + 20.0, 1.0, 0.0, z, ea, eb, den_draw,
                      np.empty((n_draws, width))))
    return out


@twin("confidence_draws", confidence_draws_numpy, _examples, error_model="numpy")
def confidence_draws(surface, sigma, rho, innov, interior, t, f1, bulge_design, bulge_worst, d1d2,
                     ha, hb, follow_a, follow_b, z, ea, eb, den_draw, out_surface):  # pragma: no cover
    n_draws, width = z.shape
    frac_design = np.empty(n_draws)
    frac_worst = np.empty(n_draws)
    los = np.empty(n_draws, dtype=np.bool_)
    a_out = np.empty(n_draws)
    b_out = np.empty(n_draws)
    for j in range(n_draws):
        e = 0.0
        first = 0.0
        last = 0.0
        for c in range(width):
            e = rho[c] * e + innov[c] * z[j, c]
            f = sigma[c] * e
            out_surface[j, c] = surface[c] + f
            if c == 0:
                first = f
            last = f
        a = ha + follow_a * first + ea[j]
        b = hb + follow_b * last + eb[j]
        rise = b - a
        qd = np.inf
        qw = np.inf
        gmin = np.inf
        den = den_draw[j]
        for c in range(width):
            if not interior[c]:
                continue
            line = a + rise * t[c]
            s = out_surface[j, c]
            g = line - (s + d1d2[c] / den)
            if g < gmin:
                gmin = g
            if f1[c] > 0:
                x = (line - (s + bulge_design[c])) / f1[c]
                if x < qd:
                    qd = x
                y = (line - (s + bulge_worst[c])) / f1[c]
                if y < qw:
                    qw = y
        frac_design[j] = qd
        frac_worst[j] = qw
        los[j] = gmin > 0.0
        a_out[j] = a
        b_out[j] = b
    return frac_design, frac_worst, los, a_out, b_out
