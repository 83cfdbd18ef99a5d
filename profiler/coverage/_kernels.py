"""Kernel of the coverage sweep: every receiver on a radial from one pass over its samples.

Along a radial from the hub the samples are met in order of distance.  Two
running quantities describe everything a receiver further out needs:

* the largest "curved slope" s_i = (z_i - ha) / d_i - d_i / (2 k a) of the
  samples met so far: the largest elevation slope from the hub, earth bulge
  included (Bullington's Stim = max s_i + D / (2 k a) for a receiver at D);
* the upper convex hull of the points (d_i, y_i), y_i = z_i - d_i^2 / (2 k a),
  kept by Andrew's monotone chain (each sample pushed once, popped at most
  once).  For a receiver at distance D the bulged heights are
  y_i + D d_i / (2 k a), a shear of these points, and a shear keeps the hull.

From them, for a receiver at distance D and height hb (both the receiver's
own, not the sample's):

* line of sight: hb is above every obstacle's ray exactly when
  (hb - ha) / D > Stim (the clearance of every interior sample is positive);
* Srim, the largest slope from the receiver (ITU-R P.526-15 section 4.5.1), is
  the tangent from (D, hb) to the hull: scanned from the hull's far end while
  it grows (the slope is unimodal along a concave chain);
* the worst F1 fraction q = min clearance / F1 and the largest v (ITU-R
  P.526-15 eq. 26; v = -sqrt(2) q) start from the hull's vertices, ranked
  without a square root (gap / F1 orders as gap^2 / (d1 d2) for a given sign
  of the gap); only the chosen vertex is evaluated in full.  Where the
  path is obstructed (a vertex with negative clearance) that is the minimum
  over every sample: on a hull edge the clearance is linear and F1 concave, and
  a sample under an edge has at least the edge's clearance, so it is never
  worse than the worse end of the edge when the clearance there is negative (a
  ratio of a linear to a concave positive function is quasi-convex).  Where the
  path is clear the clearance is convex along the hull (a line minus a concave
  chain), so gap / F1 is quasi-convex along it and its smallest value lies on
  one of the two edges beside the vertex with the smallest fraction (the
  smallest clearance / F1 along an edge in closed form: a lower bound for the
  samples under it); a path whose bound is under ``exact_below`` (1 F1) has
  the samples under those edges read by branch and bound over a max-tree of
  the radial's bulged heights (a range of samples is skipped when its highest
  height bounds its fraction from below by the best value found: exact); above
  it the bound itself is reported, a lower bound (never more clearance than
  the samples have).

For delta-Bullington only (``smooth``) the kernel also keeps the running sums
v1, v2 of the smooth-surface fit and a second upper hull of the raw heights
(no bulge), so each receiver gets the smooth-surface heights hstd, hsrd of
ITU-R P.526-15 section 4.5.2 (the highest obstacle over the straight line by a
binary search on that hull, and the largest obstacle slopes from each end, by
the same running maximum and tangent scans).

Cost: O(radials x samples) for the sweep (each sample enters and leaves the
hull once) and O(samples) per radial for its max-tree (built only when a
marginal path needs it); per receiver, one pass over the hull vertices (h:
tens on real terrain, the whole radial only on a smooth convex surface) with
no square root, and, on a clear path that may lie under 1 F1, O(log samples)
max-tree nodes for each sample range the bound cannot rule out.  Nothing else
depends on the receiver's distance.  The compiled loops are registered with
:func:`profiler._compiled.twin`; the sweep's twin is the same loop run by the
interpreter (a sweep with a stack has no vectorised form), so both run the
same arithmetic in the same order.  The module also holds the plan's two
compiled steps: the bilinear lattice that places points (``lattice_interp``)
and the order of cells by radial then distance (``cell_order``).  Pure functions, no I/O.
"""

from __future__ import annotations

import numpy as np

from .._compiled import twin, use_numba

__all__ = ["sweep_radials", "sweep_radials_numpy", "lattice_interp", "lattice_interp_numpy", "cell_order",
           "cell_order_numpy", "SWEEP_OUTPUTS",
           "EXACT_BELOW_F1_FRACTION"]

#: Clear paths whose F1 fraction may lie under this are scanned sample by sample (exact); above it the
#: reported fraction is a lower bound (our own choice: 1.0 is above every usual criterion, and J(v) = 0 there).
EXACT_BELOW_F1_FRACTION = 1.0

#: Per receiver: worst F1 fraction, largest v, Stim, Srim, line of sight (1/0), profiled (1/0), and the
#: smooth-surface heights at the hub and the receiver (ITU-R P.526-15 section 4.5.2), m.
SWEEP_OUTPUTS = ("f1_fraction", "v_max", "stim", "srim", "line_of_sight", "profiled", "hstd", "hsrd")


def _sweep(dist, surface, ha, lam, den, start, cell_d, cell_hb, cell_hr, exact_below, smooth):  # pragma: no cover - run compiled and as twin
    n_rad, n_s = surface.shape
    n_cells = cell_d.shape[0]
    q_out = np.full(n_cells, np.inf)
    v_out = np.full(n_cells, -np.inf)
    stim_out = np.full(n_cells, -np.inf)
    srim_out = np.full(n_cells, -np.inf)
    los_out = np.zeros(n_cells, dtype=np.bool_)
    ok_out = np.zeros(n_cells, dtype=np.bool_)
    hst_out = np.full(n_cells, np.nan)
    hsr_out = np.full(n_cells, np.nan)
    rx_ = np.empty(n_s)  # upper hull of the raw heights (no bulge): the smooth-surface fit's obstacle terms
    ry_ = np.empty(n_s)
    hx = np.empty(n_s)
    hy = np.empty(n_s)
    hi = np.zeros(n_s, dtype=np.int64)  # sample index of each hull vertex
    gaps = np.empty(n_s)  # clearance of the ray at each hull vertex
    qs = np.empty(n_s)  # and as a fraction of F1
    edge_low = np.empty(n_s)  # smallest gap / F1 on the hull edge ending at each vertex
    inv_den = 1.0 / den
    # A max-tree of each radial's bulged heights y = z - d^2 / (2 k a): a node's largest y bounds the
    # clearance of every sample under it, so the exact scan of a marginal path skips whole ranges.
    n_leaf = 1
    while n_leaf < n_s:
        n_leaf *= 2
    tree = np.empty(2 * n_leaf)
    st_node = np.empty(128, dtype=np.int64)
    st_lo = np.empty(128, dtype=np.int64)
    st_hi = np.empty(128, dtype=np.int64)
    st_bound = np.empty(128)
    for r in range(n_rad):
        built = False
        m = 0
        m2 = 0
        s_max = -np.inf
        t_max = -np.inf  # largest (z - ha) / d
        sum1 = 0.0  # ITU-R P.526-15 section 4.5.2 (P.452-17 eq. 161-162): running v1, v2 up to sample j - 1
        sum2 = 0.0
        z_prev = surface[r, 0]
        d_prev = dist[0]
        hole = False
        j = 1
        for c in range(start[r], start[r + 1]):
            big_d = cell_d[c]
            hb = cell_hb[c]
            # Samples strictly between the hub and the receiver enter the running state.
            while j < n_s and dist[j] < big_d:
                z = surface[r, j]
                d = dist[j]
                j += 1
                if z != z:
                    hole = True
                    continue
                s = (z - ha) / d - d * inv_den
                if s > s_max:
                    s_max = s
                if smooth:  # the smooth-surface fit's running terms: delta-Bullington only
                    t = (z - ha) / d
                    if t > t_max:
                        t_max = t
                    step = d - d_prev
                    sum1 += step * (z + z_prev)
                    sum2 += step * (z * (2.0 * d + d_prev) + z_prev * (d + 2.0 * d_prev))
                    z_prev = z
                    d_prev = d
                    while m2 >= 2 and (rx_[m2 - 1] - rx_[m2 - 2]) * (z - ry_[m2 - 2]) - (ry_[m2 - 1] - ry_[m2 - 2]) * (d - rx_[m2 - 2]) >= 0.0:
                        m2 -= 1
                    rx_[m2] = d
                    ry_[m2] = z
                    m2 += 1
                y = z - d * d * inv_den
                while m >= 2 and (hx[m - 1] - hx[m - 2]) * (y - hy[m - 2]) - (hy[m - 1] - hy[m - 2]) * (d - hx[m - 2]) >= 0.0:
                    m -= 1
                hx[m] = d
                hy[m] = y
                hi[m] = j - 1
                m += 1
            if hole or hb != hb or big_d > dist[n_s - 1] or big_d <= 0.0:
                continue
            ok_out[c] = True
            if smooth:
                # Smooth-surface heights at both ends (ITU-R P.526-15 section 4.5.2), the last segment to the
                # receiver's own surface height added to the running sums.
                hr = cell_hr[c]
                step = big_d - d_prev
                v1 = sum1 + step * (hr + z_prev)
                v2 = sum2 + step * (hr * (2.0 * big_d + d_prev) + z_prev * (big_d + 2.0 * d_prev))
                hst = (2.0 * v1 * big_d - v2) / (big_d * big_d)
                hsr = (v2 - v1 * big_d) / (big_d * big_d)
                if m2 > 0:
                    slope_tr = (hb - ha) / big_d
                    # The highest obstacle over the straight line: a line's height above a concave chain is
                    # largest at the vertex where the edge slopes fall below the line's slope (binary search).
                    lo_k = 0
                    hi_k = m2 - 1
                    while lo_k < hi_k:
                        mid_k = (lo_k + hi_k) // 2
                        if ry_[mid_k + 1] - ry_[mid_k] > slope_tr * (rx_[mid_k + 1] - rx_[mid_k]):
                            lo_k = mid_k + 1
                        else:
                            hi_k = mid_k
                    hobs = ry_[lo_k] - ha - slope_tr * rx_[lo_k]
                    aobt = t_max - slope_tr
                    best_r = -np.inf
                    k = m2 - 1
                    while k >= 0:
                        val = (ry_[k] - hb) / (big_d - rx_[k])
                        if val < best_r:
                            break
                        best_r = val
                        k -= 1
                    aobr = best_r + slope_tr
                    if hobs > 0.0:
                        share = aobt / (aobt + aobr)
                        hst = hst - hobs * share
                        hsr = hsr - hobs * (1.0 - share)
                hst_out[c] = min(hst, surface[r, 0])
                hsr_out[c] = min(hsr, hr)
            if m == 0:
                los_out[c] = True
                continue
            shear = big_d * inv_den
            stim = s_max + shear
            stim_out[c] = stim
            los_out[c] = (hb - ha) / big_d > stim
            # Srim: the tangent from the receiver, scanned back from the hull's far end.
            best = -np.inf
            k = m - 1
            while k >= 0:
                val = (hy[k] + shear * hx[k] - hb) / (big_d - hx[k])
                if val < best:
                    break
                best = val
                k -= 1
            srim_out[c] = best
            rise = (hb - ha) / big_d
            # The ray's clearance at every hull vertex.  Vertices are ranked without a square root:
            # gap / F1 = gap / sqrt(lam d1 d2 / D), so among blocking vertices (gap < 0) the smallest
            # fraction (and the largest v = -sqrt(2) gap / F1) has the largest gap^2 / (d1 d2), and among
            # clear ones the smallest has the smallest.  Only the chosen vertex is evaluated in full.
            k_neg = -1
            key_neg = -1.0
            k_q = 0
            key_pos = np.inf
            for k in range(m):
                d1 = hx[k]
                gap = ha + rise * d1 - (hy[k] + shear * d1)
                gaps[k] = gap
                key = gap * gap / (d1 * (big_d - d1))
                if gap < 0.0:
                    if key > key_neg:
                        key_neg = key
                        k_neg = k
                elif key < key_pos:
                    key_pos = key
                    k_q = k
            if k_neg >= 0:
                # Blocked: the vertices hold the minimum over every sample (module docstring).
                d1 = hx[k_neg]
                d2 = big_d - d1
                gap = gaps[k_neg]
                q_out[c] = gap / np.sqrt(lam * d1 * d2 / big_d)
                v_out[c] = -gap * np.sqrt(2.0 / lam * (1.0 / d1 + 1.0 / d2))
                continue
            # Clear: gap >= 0 is convex along the hull (a line minus a concave chain) and F1 concave, so
            # gap / F1 is quasi-convex along it: its smallest value over the chain lies on one of the two
            # edges beside the vertex with the smallest fraction, and no other edge can go below that vertex.
            for k in range(max(k_q - 1, 0), min(k_q + 2, m)):
                d1 = hx[k]
                qs[k] = gaps[k] / np.sqrt(lam * d1 * (big_d - d1) / big_d)
            q_min = qs[k_q]
            d1 = hx[k_q]
            d2 = big_d - d1
            v_max = -gaps[k_q] * np.sqrt(2.0 / lam * (1.0 / d1 + 1.0 / d2))
            q_low = q_min
            k_lo = max(k_q, 1)
            k_hi = min(k_q + 1, m - 1)
            for k in range(k_lo, k_hi + 1):
                gap = gaps[k]
                g_prev = gaps[k - 1]
                low = min(qs[k], qs[k - 1])
                if gap > 0.0 and g_prev > 0.0:
                    # Smallest gap / F1 on the hull edge between vertices k - 1 and k: gap = al + be x
                    # is linear there, d/dx (gap / F1) = 0 at x = al D / (be D + 2 al).
                    x0 = hx[k - 1]
                    be = (gap - g_prev) / (hx[k] - x0)
                    al = g_prev - be * x0
                    den_x = be * big_d + 2.0 * al
                    if den_x != 0.0:
                        xs = al * big_d / den_x
                        if x0 < xs < hx[k]:
                            qe = (al + be * xs) / np.sqrt(lam * xs * (big_d - xs) / big_d)
                            if qe < low:
                                low = qe
                else:
                    low = -np.inf
                edge_low[k] = low
                if low < q_low:
                    q_low = low
            if q_low >= exact_below:
                q_min = q_low  # at least this clear: a lower bound, reported as such
                v_max = -np.sqrt(2.0) * q_low
            else:
                # Marginal: the samples under the edges beside that vertex that could hold a smaller
                # fraction (a sample under an edge is no closer than the edge itself: branch and bound),
                # read as the link engine reads them.
                # Whole ranges of samples are skipped where the max-tree bounds their fraction from below
                # by the best value found so far (the bound: the ray's lowest point over the range minus
                # the range's highest bulged height, over the largest (or, below zero, the smallest) F1).
                if not built:
                    for i in range(n_leaf):
                        tree[n_leaf + i] = -np.inf
                        if i < n_s:
                            z = surface[r, i]
                            if z == z:
                                tree[n_leaf + i] = z - dist[i] * dist[i] * inv_den
                    for i in range(n_leaf - 1, 0, -1):
                        tree[i] = max(tree[2 * i], tree[2 * i + 1])
                    built = True
                slope = rise - shear
                for k in range(k_lo, k_hi + 1):
                    if edge_low[k] >= q_min:
                        continue
                    i0 = hi[k - 1] + 1
                    i1 = hi[k] - 1
                    if i1 < i0:
                        continue
                    st_node[0] = 1
                    st_lo[0] = 0
                    st_hi[0] = n_leaf - 1
                    st_bound[0] = -np.inf
                    sp = 1
                    while sp > 0:
                        sp -= 1
                        if st_bound[sp] - 1e-9 >= q_min:  # the margin covers the rounding of the bound
                            continue
                        node = st_node[sp]
                        nl = st_lo[sp]
                        nr = st_hi[sp]
                        if nl == nr:
                            z = surface[r, nl]
                            d1 = dist[nl]
                            d2 = big_d - d1
                            gap = ha + rise * d1 - (z + d1 * d2 * inv_den)
                            q = gap / np.sqrt(lam * d1 * d2 / big_d)
                            if q < q_min:
                                q_min = q
                            v = -gap * np.sqrt(2.0 / lam * (1.0 / d1 + 1.0 / d2))
                            if v > v_max:
                                v_max = v
                            continue
                        mid = (nl + nr) // 2
                        # Both halves' bounds; the lower is read first (pushed last).
                        b_left = np.inf
                        b_right = np.inf
                        for half in range(2):
                            cl = nl if half == 0 else mid + 1
                            cr = mid if half == 0 else nr
                            if cr < i0 or cl > i1:
                                continue
                            bound = -np.inf
                            if i0 <= cl and cr <= i1:
                                # gap >= al + be x over the half (its highest bulged height under the ray)
                                al = ha - tree[2 * node + half]
                                xa = dist[cl]
                                xb = dist[cr]
                                ga = al + slope * xa
                                gb = al + slope * xb
                                fa = np.sqrt(lam * xa * (big_d - xa) / big_d)
                                fb = np.sqrt(lam * xb * (big_d - xb) / big_d)
                                if ga > 0.0 and gb > 0.0:
                                    bound = min(ga / fa, gb / fb)
                                    den_x = slope * big_d + 2.0 * al
                                    if den_x != 0.0:
                                        xs = al * big_d / den_x
                                        if xa < xs < xb:
                                            bound = min(bound, (al + slope * xs) / np.sqrt(lam * xs * (big_d - xs) / big_d))
                                else:
                                    bound = min(ga, gb) / min(fa, fb)
                            if half == 0:
                                b_left = bound
                            else:
                                b_right = bound
                        for t in range(2):
                            half = 0 if (b_left >= b_right) == (t == 0) else 1
                            bound = b_left if half == 0 else b_right
                            if bound == np.inf or bound - 1e-9 >= q_min:
                                continue
                            st_node[sp] = 2 * node + half
                            st_lo[sp] = nl if half == 0 else mid + 1
                            st_hi[sp] = mid if half == 0 else nr
                            st_bound[sp] = bound
                            sp += 1
            q_out[c] = q_min
            v_out[c] = v_max
    return q_out, v_out, stim_out, srim_out, los_out, ok_out, hst_out, hsr_out


def sweep_radials_numpy(dist, surface, ha, lam, den, start, cell_d, cell_hb, cell_hr, exact_below, smooth):
    """The sweep run by the interpreter: the compiled kernel's twin (see the module docstring)."""
    return _sweep(dist, surface, ha, lam, den, start, cell_d, cell_hb, cell_hr, exact_below, smooth)


def _examples(rng: np.random.Generator) -> list[tuple]:
    out = []
    for n_rad, n_s, flat in ((6, 120, False), (3, 40, True)):
        dist = np.arange(n_s) * 15.0
        surface = np.zeros((n_rad, n_s)) if flat else rng.normal(100.0, 25.0, (n_rad, n_s))
        if not flat:
            surface[1, 50] = np.nan  # a nodata hole: receivers behind it are not profiled
        per = rng.integers(0, 30, n_rad)
        start = np.concatenate([[0], np.cumsum(per)]).astype(np.int64)
        cell_d = np.concatenate([np.sort(rng.uniform(0.0, dist[-1] * 1.05, p)) for p in per])
        cell_hb = rng.uniform(90.0, 180.0, cell_d.size)
        cell_hr = cell_hb - rng.uniform(2.0, 30.0, cell_d.size)
        for den in (2.0 * 4.0 / 3.0 * 6_371_000.0, np.inf):
            for smooth in (True, False):
                out.append((dist, surface, 130.0, 0.05, den, start, cell_d, cell_hb, cell_hr, 1.0, smooth))
    return out


def _warm(_dtypes: tuple) -> list[tuple]:
    return _examples(np.random.default_rng(0))[:1]


_sweep_twin = twin("coverage_sweep", sweep_radials_numpy, _examples, _warm, error_model="numpy")(_sweep)


def sweep_radials(dist: np.ndarray, surface: np.ndarray, ha_m: float, wavelength_m: float, bulge_den_m: float,
                  start: np.ndarray, cell_d_m: np.ndarray, cell_hb_m: np.ndarray, cell_surface_m: np.ndarray,
                  exact_below: float = EXACT_BELOW_F1_FRACTION, smooth: bool = True) -> tuple[np.ndarray, ...]:
    """Sweep radials and evaluate their receivers: the arrays of :data:`SWEEP_OUTPUTS`, each (cells,).

    ``dist`` (S,) sample distances from the hub, m (``dist[0]`` = 0, the hub);
    ``surface`` (R, S) heights along each radial, m (NaN: not covered);
    ``ha_m`` the hub antenna's elevation, m; ``bulge_den_m`` = 2 k a, m;
    ``start`` (R + 1,) receivers of radial r are ``start[r]:start[r + 1]``,
    sorted by distance; ``cell_d_m``, ``cell_hb_m`` each receiver's distance
    and antenna elevation, m; ``cell_surface_m`` the surface height under
    each receiver (the profile's last height, for the smooth-surface fit); ``smooth``: compute the
    smooth-surface heights (delta-Bullington; without it ``hstd``, ``hsrd`` are NaN).  Compiled unless ``TERRAHOP_NO_NUMBA`` is set
    (:func:`profiler._compiled.use_numba`; any radial block is large).
    """
    args = (np.ascontiguousarray(dist, dtype=float), np.ascontiguousarray(surface, dtype=float), float(ha_m),
            float(wavelength_m), float(bulge_den_m), np.ascontiguousarray(start, dtype=np.int64),
            np.ascontiguousarray(cell_d_m, dtype=float), np.ascontiguousarray(cell_hb_m, dtype=float),
            np.ascontiguousarray(cell_surface_m, dtype=float), float(exact_below), bool(smooth))
    fn = _sweep_twin.compiled() if use_numba(max(surface.size, 1 << 20)) else _sweep_twin.numpy
    return fn(*args)


# --------------------------------------------------------------------------- lattice interpolation

def lattice_interp_numpy(x, y, x0, y0, dx, dy, u, v):
    """Bilinear interpolation of two lattices ``u``, ``v`` (ny, nx) at points ``x``, ``y`` (1-D): the
    compiled loop's twin, whole arrays at once.  Points outside the lattice take its edge cells' planes."""
    fx = (x - x0) / dx
    fy = (y - y0) / dy
    ny, nx = u.shape
    i = np.clip(np.floor(fx).astype(np.int64), 0, max(nx - 2, 0))
    j = np.clip(np.floor(fy).astype(np.int64), 0, max(ny - 2, 0))
    tx = fx - i
    ty = fy - j
    i1 = np.minimum(i + 1, nx - 1)
    j1 = np.minimum(j + 1, ny - 1)
    out = []
    for g in (u, v):
        top = g[j, i] * (1.0 - tx) + g[j, i1] * tx
        bot = g[j1, i] * (1.0 - tx) + g[j1, i1] * tx
        out.append(top * (1.0 - ty) + bot * ty)
    return out[0], out[1]


def _lattice_examples(rng: np.random.Generator) -> list[tuple]:
    out = []
    for ny, nx in ((7, 9), (1, 4), (2, 2)):
        u = rng.normal(30.0, 1.0, (ny, nx))
        v = rng.normal(-5.0, 1.0, (ny, nx))
        x = rng.uniform(-150.0, 1100.0, 500)  # beyond the lattice on both sides too
        y = rng.uniform(-150.0, 900.0, 500)
        out.append((x, y, 0.0, 0.0, 125.0, 110.0, u, v))
    return out


@twin("coverage_lattice", lattice_interp_numpy, _lattice_examples)
def _lattice_loop(x, y, x0, y0, dx, dy, u, v):  # pragma: no cover - compiled
    n = x.shape[0]
    ny, nx = u.shape
    imax = max(nx - 2, 0)
    jmax = max(ny - 2, 0)
    ou = np.empty(n)
    ov = np.empty(n)
    for k in range(n):
        fx = (x[k] - x0) / dx
        fy = (y[k] - y0) / dy
        i = min(max(np.int64(np.floor(fx)), 0), imax)
        j = min(max(np.int64(np.floor(fy)), 0), jmax)
        tx = fx - i
        ty = fy - j
        i1 = min(i + 1, nx - 1)
        j1 = min(j + 1, ny - 1)
        top = u[j, i] * (1.0 - tx) + u[j, i1] * tx
        bot = u[j1, i] * (1.0 - tx) + u[j1, i1] * tx
        ou[k] = top * (1.0 - ty) + bot * ty
        top = v[j, i] * (1.0 - tx) + v[j, i1] * tx
        bot = v[j1, i] * (1.0 - tx) + v[j1, i1] * tx
        ov[k] = top * (1.0 - ty) + bot * ty
    return ou, ov


def lattice_interp(x: np.ndarray, y: np.ndarray, x0: float, y0: float, dx: float, dy: float, u: np.ndarray,
                   v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Target coordinates of source points ``x``, ``y`` (1-D, source CRS units) by bilinear interpolation of
    the lattices ``u``, ``v`` (ny, nx) whose node (0, 0) lies at (x0, y0), ``dx`` x ``dy`` apart.  Compiled
    unless ``TERRAHOP_NO_NUMBA`` is set or the batch is small (:func:`profiler._compiled.use_numba`)."""
    xa = np.ascontiguousarray(x, dtype=float).ravel()
    ya = np.ascontiguousarray(y, dtype=float).ravel()
    return _lattice_loop(xa.size, xa, ya, float(x0), float(y0), float(dx), float(dy),
                         np.ascontiguousarray(u, dtype=float), np.ascontiguousarray(v, dtype=float))


# --------------------------------------------------------------------------- cell order

def cell_order_numpy(radial, d, n_radials):
    """Order of cells by radial then distance (ties: by position), and where each radial's cells start:
    the compiled loop's twin."""
    order = np.lexsort((d, radial))
    counts = np.bincount(radial, minlength=n_radials)
    start = np.concatenate((np.zeros(1, dtype=np.int64), np.cumsum(counts))).astype(np.int64)
    return order, start


def _order_examples(rng: np.random.Generator) -> list[tuple]:
    out = []
    for n, n_rad in ((400, 7), (50, 60), (0, 3)):
        radial = rng.integers(0, n_rad, n).astype(np.int64)
        d = np.round(rng.uniform(0.0, 100.0, n), 0)  # rounded: ties within a radial
        out.append((radial, d, n_rad))
    return out


@twin("coverage_order", cell_order_numpy, _order_examples)
def _order_loop(radial, d, n_radials):  # pragma: no cover - compiled
    n = radial.shape[0]
    start = np.zeros(n_radials + 1, dtype=np.int64)
    for k in range(n):
        start[radial[k] + 1] += 1
    for r in range(n_radials):
        start[r + 1] += start[r]
    fill = start[:-1].copy()
    by_radial = np.empty(n, dtype=np.int64)
    for k in range(n):  # counting sort: stable, so each radial keeps the cells' own order
        r = radial[k]
        by_radial[fill[r]] = k
        fill[r] += 1
    order = np.empty(n, dtype=np.int64)
    for r in range(n_radials):
        seg = by_radial[start[r]:start[r + 1]]
        within = np.argsort(d[seg], kind="mergesort")  # stable: ties stay in position order, as lexsort
        for t in range(seg.shape[0]):
            order[start[r] + t] = seg[within[t]]
    return order, start


def cell_order(radial: np.ndarray, d_m: np.ndarray, n_radials: int) -> tuple[np.ndarray, np.ndarray]:
    """Order of cells sorted by radial (0..n_radials - 1) then distance ``d_m`` (ties by position), and the
    start of each radial's cells in that order, (n_radials + 1,).  Compiled unless ``TERRAHOP_NO_NUMBA``."""
    r = np.ascontiguousarray(radial, dtype=np.int64)
    return _order_loop(max(r.size, 1 << 20), r, np.ascontiguousarray(d_m, dtype=float), int(n_radials))
