"""Which pairs a screening run evaluates: the plan, the fixed pair order, the chunks.

Pairs are generated lazily in a fixed order (so an interrupted run resumes
at a pair index) and cut into chunks of ``chunk_pairs``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Iterator, Sequence

import numpy as np

from ..errors import InputError
from ..geodesy import WGS84
from ..io.sites import SiteTable
from ..units import EARTH_RADIUS_M

__all__ = ["PairPlan", "iter_pair_blocks", "count_pairs", "pair_chunks", "resolve_hubs", "drop_sites",
           "pairs_bound"]


@dataclass(frozen=True)
class PairPlan:
    """Which pairs to screen: all within ``max_km``, hub(s) to all, or an explicit list.

    ``explicit`` holds site indices ``(a, b)``; ``hubs`` site indices.  Both
    directions are one link: site a is the earlier site in the file (all
    pairs), the hub (hub mode) or as listed (explicit pairs).  ``heights``
    (with ``explicit``): antenna heights of each listed pair's ends, m,
    measured as the site's own height is; NaN where the pair takes its sites' heights.
    """

    max_km: float | None = None
    hubs: tuple[int, ...] = ()
    explicit: tuple[np.ndarray, np.ndarray] | None = None
    heights: tuple[np.ndarray, np.ndarray] | None = None

    def describe(self) -> str:
        within = f" within {self.max_km:g} km" if self.max_km is not None else ""
        if self.explicit is not None:
            return f"{len(self.explicit[0])} listed pairs{within}"
        if self.hubs:
            return f"{len(self.hubs)} hub(s) to every other site{within}"
        return f"all pairs{within}"


def _unit_vectors(lat_deg: np.ndarray, lon_deg: np.ndarray) -> np.ndarray:
    lat = np.radians(lat_deg)
    lon = np.radians(lon_deg)
    return np.column_stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)])


def _within(lat: np.ndarray, lon: np.ndarray, a: np.ndarray, b: np.ndarray, max_km: float) -> np.ndarray:
    """True where the WGS84 geodesic distance between sites a and b is at most ``max_km``."""
    if a.size == 0:
        return np.zeros(0, dtype=bool)
    _, _, dist = WGS84.inv(lon[a], lat[a], lon[b], lat[b])
    return np.asarray(dist) <= max_km * 1000.0


def iter_pair_blocks(
    sites: SiteTable, plan: PairPlan, block_pairs: int = 65_536
) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Yield blocks of site indices ``(a, b)``; their concatenation is the fixed pair order.

    All pairs within a distance use a grid of cells on the unit sphere (each
    cell as wide as the distance) so only neighbouring cells are compared;
    candidates are then kept by their exact WGS84 distance.  Memory stays
    bounded by ``block_pairs`` whatever the number of sites.
    """
    lat, lon = sites.lat_deg, sites.lon_deg
    n = len(sites)
    if plan.explicit is not None:
        a, b = plan.explicit
        for s in range(0, a.size, block_pairs):
            aa, bb = a[s:s + block_pairs], b[s:s + block_pairs]
            if plan.max_km is not None:
                keep = _within(lat, lon, aa, bb, plan.max_km)
                aa, bb = aa[keep], bb[keep]
            yield aa, bb
        return
    if plan.hubs:
        done: list[int] = []
        for h in plan.hubs:
            others = np.setdiff1d(np.arange(n), np.asarray(done + [h]), assume_unique=True)
            for s in range(0, others.size, block_pairs):
                bb = others[s:s + block_pairs]
                aa = np.full(bb.size, h, dtype=np.int64)
                if plan.max_km is not None:
                    keep = _within(lat, lon, aa, bb, plan.max_km)
                    aa, bb = aa[keep], bb[keep]
                yield aa, bb
            done.append(h)
        return
    if plan.max_km is None:
        yield from _all_pairs(n, block_pairs)
        return
    yield from _pairs_within(lat, lon, plan.max_km, block_pairs)


def _all_pairs(n: int, block_pairs: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    i = 0
    while i < n - 1:
        counts = (n - 1 - np.arange(i, n - 1)).astype(np.int64)
        cum = np.cumsum(counts)
        k = max(int(np.searchsorted(cum, block_pairs, side="right")), 1)
        rows = np.arange(i, i + k, dtype=np.int64)
        cnt = counts[:k]
        a = np.repeat(rows, cnt)
        start = np.repeat(np.cumsum(cnt) - cnt, cnt)
        b = a + 1 + (np.arange(int(cnt.sum()), dtype=np.int64) - start)
        yield a, b
        i += k


def _pairs_within(
    lat: np.ndarray, lon: np.ndarray, max_km: float, block_pairs: int
) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    n = lat.size
    if n < 2:
        return
    # Chord on the unit sphere for the distance, with a margin for the ellipsoid (< 0.6 %).
    angle = (max_km * 1000.0 * 1.01 + 1000.0) / EARTH_RADIUS_M
    r = 2.0 * np.sin(min(angle, np.pi) / 2.0)
    xyz = _unit_vectors(lat, lon)
    key = np.floor(xyz / r).astype(np.int64)
    off = int(np.ceil(1.0 / r)) + 2
    m = 2 * off + 1
    packed = ((key[:, 0] + off) * m + (key[:, 1] + off)) * m + (key[:, 2] + off)
    order = np.argsort(packed, kind="stable")
    cells, starts, counts = np.unique(packed[order], return_index=True, return_counts=True)
    lookup = {int(c): (int(s), int(s + k)) for c, s, k in zip(cells, starts, counts)}
    shifts = [(dx * m + dy) * m + dz for dx in (-1, 0, 1) for dy in (-1, 0, 1) for dz in (-1, 0, 1)]
    buf_a: list[np.ndarray] = []
    buf_b: list[np.ndarray] = []
    held = 0
    for c, s, k in zip(cells, starts, counts):
        members = np.sort(order[s:s + k])
        near = [order[lookup[int(c) + d][0]:lookup[int(c) + d][1]] for d in shifts if int(c) + d in lookup]
        cand = np.sort(np.concatenate(near))
        step = max(1, 4_000_000 // max(cand.size, 1))
        for t in range(0, members.size, step):
            mem = members[t:t + step]
            a = np.repeat(mem, cand.size)
            b = np.tile(cand, mem.size)
            keep = a < b
            a, b = a[keep], b[keep]
            keep = np.einsum("ij,ij->i", xyz[a] - xyz[b], xyz[a] - xyz[b]) <= r * r
            a, b = a[keep], b[keep]
            keep = _within(lat, lon, a, b, max_km)
            a, b = a[keep], b[keep]
            if a.size:
                buf_a.append(a)
                buf_b.append(b)
                held += a.size
            if held >= block_pairs:
                yield np.concatenate(buf_a), np.concatenate(buf_b)
                buf_a, buf_b, held = [], [], 0
    if held:
        yield np.concatenate(buf_a), np.concatenate(buf_b)


def count_pairs(sites: SiteTable, plan: PairPlan) -> int:
    """Number of pairs the plan yields (one pass of the generator)."""
    return int(sum(a.size for a, _ in iter_pair_blocks(sites, plan)))


def pair_chunks(
    sites: SiteTable, plan: PairPlan, chunk_pairs: int, skip_pairs: int = 0
) -> Iterator[tuple[int, np.ndarray, np.ndarray]]:
    """Fixed-size chunks ``(first_pair_index, a, b)`` of the pair sequence, after ``skip_pairs``."""
    buf_a: list[np.ndarray] = []
    buf_b: list[np.ndarray] = []
    held = 0
    position = 0  # index of the first pair in the buffer
    for a, b in iter_pair_blocks(sites, plan, block_pairs=max(chunk_pairs, 4096)):
        if position + held + a.size <= skip_pairs:
            position += a.size
            continue
        if position < skip_pairs:
            cut = skip_pairs - position
            a, b = a[cut:], b[cut:]
            position = skip_pairs
        buf_a.append(a)
        buf_b.append(b)
        held += a.size
        while held >= chunk_pairs:
            aa, bb = np.concatenate(buf_a), np.concatenate(buf_b)
            yield position, aa[:chunk_pairs], bb[:chunk_pairs]
            position += chunk_pairs
            buf_a, buf_b, held = [aa[chunk_pairs:]], [bb[chunk_pairs:]], aa.size - chunk_pairs
    if held:
        yield position, np.concatenate(buf_a), np.concatenate(buf_b)


def drop_sites(sites: SiteTable, plan: PairPlan, keep: np.ndarray) -> tuple[SiteTable, PairPlan]:
    new_index = np.cumsum(keep) - 1
    hubs = tuple(int(new_index[h]) for h in plan.hubs if keep[h])
    if plan.hubs and not hubs:
        raise InputError("every hub was skipped (outside the elevation rasters, or its roof not found); "
                         "nothing to screen")
    explicit = heights = None
    if plan.explicit is not None:
        a, b = plan.explicit
        ok = keep[a] & keep[b]
        explicit = (new_index[a[ok]], new_index[b[ok]])
        if plan.heights is not None:
            heights = (plan.heights[0][ok], plan.heights[1][ok])
    return sites.subset(keep), dataclasses.replace(plan, hubs=hubs, explicit=explicit, heights=heights)


def resolve_hubs(sites: SiteTable, hub_names: Sequence[str]) -> tuple[int, ...]:
    """Indices of the named hub sites; InputError naming any that is unknown."""
    index = {str(nm): k for k, nm in enumerate(sites.names)}
    out = []
    for h in hub_names:
        if h not in index:
            raise InputError(f"hub {h!r} is not among the usable sites of {sites.source}")
        out.append(index[h])
    return tuple(dict.fromkeys(out))
def pairs_bound(sites: SiteTable, plan: PairPlan) -> int:
    """A cheap upper bound of the number of pairs (to choose in-process or a pool)."""
    n = len(sites)
    if plan.explicit is not None:
        return int(plan.explicit[0].size)
    if plan.hubs:
        return len(plan.hubs) * n
    return n * (n - 1) // 2

