"""Screening many candidate pairs: pair generation, chunked batch evaluation,
parallel or distributed execution, streamed and resumable results.

The numbers of every pair come from :func:`profiler.link.analyse_links`, the
engine of ``terrahop link``: a screened pair gives exactly the numbers a
single check gives.  Pairs are generated lazily in a fixed order and cut into
chunks of ``chunk_pairs``; chunks are evaluated in-process, on a local process
pool, or on a Dask cluster, and come back in order.  Their columns are
appended to a staging folder beside the output and committed chunk by chunk,
so an interrupted run resumes where it stopped.  At the end the rows are
ranked by fade margin and written out (see :mod:`profiler.io.screen_output`).
"""

from __future__ import annotations

import dataclasses
import enum
import hashlib
import json
import os
import sys
import threading
import time
from collections import deque
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterator, Sequence

import numpy as np

from .budget import Radio
from .errors import InputError
from .geodesy import WGS84
from .io.sites import BadRow, SiteTable
from .io.stage import RunLock, Stage, lock_path, pending_renames, staging_folder
from .link import LinkBatch, Settings, SiteColumns, analyse_links
from .terrain import ElevationModel
from .units import EARTH_RADIUS_M

__all__ = [
    "PairPlan",
    "ScreenSummary",
    "iter_pair_blocks",
    "count_pairs",
    "evaluate_chunk",
    "screen",
    "VERDICTS",
    "Verdict",
    "COLUMNS",
    "mast_raise_m",
]

class Verdict(str, enum.Enum):
    """What stands between a screened pair and a working link (definitions in the README).

    Checked in this order, the first that applies wins: ``error`` (could not
    be profiled), ``obstructed`` (no line of sight at the design k: terrain,
    buildings or trees cut the ray), ``clearance-short`` (line of sight, but
    the clearance criterion fails at the design or worst-case k),
    ``budget-short`` (the path meets the criterion but the fade margin is
    below 0 dB at the design k: the link does not close), ``marginal``
    (closes, margin below the minimum asked) and ``viable`` (criterion met,
    margin at least the minimum).  Path verdicts come before budget ones
    because a mast fixes the first and gains or power the second.
    """

    VIABLE = "viable"
    MARGINAL = "marginal"
    BUDGET_SHORT = "budget-short"
    CLEARANCE_SHORT = "clearance-short"
    OBSTRUCTED = "obstructed"
    ERROR = "error"

    def __str__(self) -> str:
        return self.value

    @property
    def code(self) -> int:
        """The int8 code a verdict is stored as (its position in the enum)."""
        return _VERDICT_ORDER.index(self)

    @property
    def column(self) -> str:
        """Name of the per-site count column of this verdict (``budget_short_links``...)."""
        return self.value.replace("-", "_") + "_links"


_VERDICT_ORDER = tuple(Verdict)
#: Verdict of each int8 code.
VERDICTS = {k: v for k, v in enumerate(_VERDICT_ORDER)}

#: Staged result columns and their dtypes, in output order.
COLUMNS: dict[str, str] = {
    "pair": "i8", "a": "i8", "b": "i8", "status": "i1",
    "distance_km": "f8", "azimuth_a_to_b_deg": "f8", "azimuth_b_to_a_deg": "f8",
    "ground_a_m": "f8", "ground_b_m": "f8", "antenna_a_amsl_m": "f8", "antenna_b_amsl_m": "f8",
    "samples": "i4", "spacing_m": "f8",
    "worst_f1_fraction": "f8", "worst_clearance_m": "f8", "worst_point_km": "f8", "line_of_sight": "u1",
    "wc_worst_f1_fraction": "f8", "wc_worst_clearance_m": "f8", "wc_worst_point_km": "f8",
    "wc_line_of_sight": "u1",
    "meets_criterion": "u1",
    "free_space_db": "f8", "diffraction_db": "f8", "gases_db": "f8", "total_loss_db": "f8",
    "eirp_dbm": "f8", "rx_level_dbm": "f8", "noise_floor_dbm": "f8", "snr_db": "f8", "fade_margin_db": "f8",
    "wc_diffraction_db": "f8", "wc_total_loss_db": "f8", "wc_rx_level_dbm": "f8", "wc_snr_db": "f8",
    "wc_fade_margin_db": "f8",
    "mast_raise_m": "f8",
    "availability_pct": "f8", "rain_outage_min_per_year": "f8", "multipath_min_per_year": "f8",
    "multipath_worst_month_min": "f8", "meets_availability": "u1",
    "availability_status": "i1", "rain_range": "i1", "multipath_status": "i1",
}

#: Padded samples per call of the engine inside a chunk (small arrays stay in cache).
SUBBATCH_SAMPLES = 200_000
#: Rasters up to this many cells are read whole into each worker's memory.
PRELOAD_MAX_CELLS = 40_000_000


# --------------------------------------------------------------------------- pairs

@dataclass(frozen=True)
class PairPlan:
    """Which pairs to screen: all within ``max_km``, hub(s) to all, or an explicit list.

    ``explicit`` holds site indices ``(a, b)``; ``hubs`` site indices.  Both
    directions are one link: site a is the earlier site in the file (all
    pairs), the hub (hub mode) or as listed (explicit pairs).
    """

    max_km: float | None = None
    hubs: tuple[int, ...] = ()
    explicit: tuple[np.ndarray, np.ndarray] | None = None

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


def _chunks(
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


# --------------------------------------------------------------------------- evaluation

def mast_raise_m(batch: LinkBatch) -> np.ndarray:
    """Equal rise of both antennas that makes each path meet the clearance criterion, m.

    Raising both antennas by dh raises the line between them by dh at every
    point, so the rise needed is the largest shortfall max(c F1 - clearance)
    over the interior samples, at the design and the worst-case k (0 when the
    criterion is already met).  Geometry only: diffraction is not re-evaluated.
    """
    crit = batch.settings.criterion
    need = np.zeros(len(batch))
    interior = batch.profiles.interior
    for at_k, frac in ((batch.design, crit.min_f1_fraction), (batch.worst, crit.min_f1_fraction_worst)):
        c = at_k.clearance
        short = c.shortfall_m  # made with the clearance by analyse_links (the same numbers)
        if short is None:
            short = np.max(np.where(interior, frac * c.f1_m - c.clearance_m, -np.inf), axis=1)
        need = np.maximum(need, short)
    return np.maximum(need, 0.0)


@dataclass(frozen=True)
class ChunkTask:
    """One chunk of pairs with everything a worker needs (picklable)."""

    first_pair: int
    a: np.ndarray
    b: np.ndarray
    names_a: np.ndarray
    names_b: np.ndarray
    lat_a: np.ndarray
    lon_a: np.ndarray
    lat_b: np.ndarray
    lon_b: np.ndarray
    agl_a: np.ndarray
    agl_b: np.ndarray
    gain_a: np.ndarray | None
    gain_b: np.ndarray | None
    radio: Radio
    settings: Settings


def _make_task(sites: SiteTable, first: int, a: np.ndarray, b: np.ndarray, radio: Radio, settings: Settings) -> ChunkTask:
    g = sites.gain_dbi
    return ChunkTask(
        first_pair=first, a=a, b=b,
        names_a=sites.names[a], names_b=sites.names[b],
        lat_a=sites.lat_deg[a], lon_a=sites.lon_deg[a], lat_b=sites.lat_deg[b], lon_b=sites.lon_deg[b],
        agl_a=sites.antenna_agl_m[a], agl_b=sites.antenna_agl_m[b],
        gain_a=None if g is None else g[a], gain_b=None if g is None else g[b],
        radio=radio, settings=settings,
    )


def evaluate_chunk(model: ElevationModel, task: ChunkTask) -> tuple[dict[str, np.ndarray], list[tuple[int, str]]]:
    """Evaluate a chunk of pairs with the link engine.

    Pairs are sorted by length and cut into sub-batches of similar sample
    counts (little padding, arrays that fit in cache); results come back in
    the chunk's order as columns of :data:`COLUMNS`, with the problems of
    pairs that could not be profiled as ``(pair_index, sentence)``.
    """
    n = task.a.size
    out = {name: np.zeros(n, dtype=dt) for name, dt in COLUMNS.items()}
    out["pair"][:] = task.first_pair + np.arange(n)
    out["a"][:] = task.a
    out["b"][:] = task.b
    for name in COLUMNS:
        if COLUMNS[name] == "f8":
            out[name][:] = np.nan
    problems: list[tuple[int, str]] = []
    from .validation import MIN_PATH_M, too_close

    same, gap_m = too_close(task.lat_a, task.lon_a, task.lat_b, task.lon_b)
    for k in np.flatnonzero(same):
        problems.append((task.first_pair + int(k),
                         f"{task.names_a[k]} - {task.names_b[k]}: both sites are at the same position"
                         + (f" ({gap_m[k]:.3g} m apart, under {MIN_PATH_M:g} m)" if gap_m[k] > 0 else "")))
    todo = np.flatnonzero(~same)
    length_m = np.full(n, np.nan)
    if todo.size:
        _, _, length = WGS84.inv(task.lon_a[todo], task.lat_a[todo], task.lon_b[todo], task.lat_b[todo])
        from .profile import MAX_SAMPLES_PER_PATH, path_spacings_m, sample_limit_problem

        spacing = task.settings.spacing_m
        if spacing is None:  # the spacing build_profiles will use: symmetric, from the whole path
            spacing = path_spacings_m(model, task.lat_a[todo], task.lon_a[todo], task.lat_b[todo], task.lon_b[todo])
        spacing = np.broadcast_to(np.asarray(spacing, dtype=float), todo.shape)
        n_samples = np.ceil(np.asarray(length) / spacing) + 1
        # A pair needing more samples than a path may hold is reported and skipped, not fatal.
        over = ~(n_samples <= MAX_SAMPLES_PER_PATH)
        for k in np.flatnonzero(over):
            i = int(todo[k])
            problems.append((task.first_pair + i, sample_limit_problem(
                f"{task.names_a[i]} - {task.names_b[i]}", float(length[k]), int(min(n_samples[k], 2**62)),
                float(spacing[k]))))
        todo, n_samples = todo[~over], n_samples[~over]
        todo = todo[np.argsort(n_samples, kind="stable")]
        n_sorted = np.sort(n_samples, kind="stable")
        start = 0
        while start < todo.size:
            # Take pairs while (count x widest) stays within the sub-batch budget.
            widths = n_sorted[start:]
            fits = np.arange(1, widths.size + 1) * widths <= SUBBATCH_SAMPLES
            stop = start + max(int(np.argmin(fits)) if not fits.all() else widths.size, 1)
            _evaluate_into(model, task, todo[start:stop], out, problems, length_m)
            start = stop
    out["status"][:] = 0
    bad = np.array([p for p, _ in problems], dtype=np.int64) - task.first_pair
    out["status"][bad] = 1
    # Availability once per chunk: its per-call cost is worth spreading over many pairs.
    # The inputs are those analyse_links would pass, so the numbers are the same.
    from .availability import availability_for_links

    valid = out["status"] == 0
    av = availability_for_links(
        out["fade_margin_db"], np.where(valid, length_m, 1.0), _radio_freq(task.radio, n),
        out["antenna_a_amsl_m"], out["antenna_b_amsl_m"], (task.lat_a + task.lat_b) / 2.0, valid,
        task.settings.climate, meets_criterion=out["meets_criterion"] == 1,
        solve_required=False,  # the margin needed is not a screening column
    )
    for name, values in _availability_columns(av, n).items():
        out[name][:] = values
    _blank_error_rows(out)
    return out, problems


#: Columns an error row keeps: they come from the two positions alone, not from the terrain.
KEPT_IN_ERROR_ROWS = frozenset({"pair", "a", "b", "status", "distance_km", "azimuth_a_to_b_deg",
                                "azimuth_b_to_a_deg", "samples", "spacing_m"})


def _blank_error_rows(out: dict[str, np.ndarray]) -> None:
    """NaN in every figure of a pair that could not be profiled (the engine's numbers are meaningless there).

    Flag columns (u1) cannot hold NaN: the writer shows them empty for error rows.
    """
    bad = out["status"] != 0
    if not bad.any():
        return
    for name, dt in COLUMNS.items():
        if dt == "f8" and name not in KEPT_IN_ERROR_ROWS:
            out[name][bad] = np.nan
        elif dt == "u1":
            out[name][bad] = 0


def _radio_freq(radio: Radio, n: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(radio.freq_ghz, dtype=float), (n,))


def _availability_columns(av: Any, n: int) -> dict[str, np.ndarray]:
    """Availability (rain only), rain and multipath outage, target verdict and status codes of each link.

    NaN where a figure is not estimated (the status codes say why; see
    :func:`profiler.availability.availability_note`); ``meets_availability``
    is 2 where there is no verdict (written as empty).
    """
    cols = {"availability_pct": np.full(n, np.nan), "rain_outage_min_per_year": np.full(n, np.nan),
            "multipath_min_per_year": np.full(n, np.nan), "multipath_worst_month_min": np.full(n, np.nan),
            "meets_availability": np.full(n, 2, dtype=np.uint8),
            "availability_status": np.asarray(av.status, dtype=np.int8) if av is not None and av.status is not None
            else np.full(n, 1, dtype=np.int8),
            "rain_range": np.zeros(n, dtype=np.int8), "multipath_status": np.zeros(n, dtype=np.int8)}
    if av is None or av.result is None:
        return cols
    rows = np.asarray(av.rows)
    ok = rows >= 0
    r = av.result
    cols["availability_pct"][ok] = np.asarray(r.availability_pct)[rows[ok]]
    cols["rain_outage_min_per_year"][ok] = np.asarray(r.rain_outage_min_per_year)[rows[ok]]
    cols["multipath_min_per_year"][ok] = np.asarray(r.multipath_outage_min_per_year)[rows[ok]]
    cols["multipath_worst_month_min"][ok] = np.asarray(r.multipath_worst_month_min)[rows[ok]]
    cols["meets_availability"][ok] = np.asarray(r.meets_target)[rows[ok]]
    cols["rain_range"] = av.rain_side()
    cols["multipath_status"] = av.multipath_status()
    return cols


def _evaluate_into(model, task: ChunkTask, idx: np.ndarray, out: dict, problems: list,
                   length_m: np.ndarray) -> None:
    # Columns, not one Site object per pair (the engine reads them as arrays).
    sites_a = SiteColumns(task.names_a[idx], task.lat_a[idx].astype(float), task.lon_a[idx].astype(float),
                          task.agl_a[idx].astype(float))
    sites_b = SiteColumns(task.names_b[idx], task.lat_b[idx].astype(float), task.lon_b[idx].astype(float),
                          task.agl_b[idx].astype(float))
    radio = task.radio
    if task.gain_a is not None:
        # A blank gain cell is "not given": the radio's gain applies (profiler.io.sites).
        ga, gb = task.gain_a[idx], task.gain_b[idx]
        radio = dataclasses.replace(radio, gain_a_dbi=np.where(np.isnan(ga), radio.gain_a_dbi, ga),
                                    gain_b_dbi=np.where(np.isnan(gb), radio.gain_b_dbi, gb))
    # Sites were checked when read, and same-place pairs set aside, so skip the per-pair checks.
    # The other diffraction methods are for a single link's record: not computed in bulk.
    settings = dataclasses.replace(task.settings, compare_methods=False)
    batch = analyse_links(model, sites_a, sites_b, radio, settings,
                          names=[f"{a} - {b}" for a, b in zip(sites_a.names.tolist(), sites_b.names.tolist())],
                          check_sites=False, estimate_availability=False)
    length_m[idx] = batch.profiles.length_m
    lines = batch.profiles.lines
    d, w = batch.design, batch.worst
    cols = {
        "distance_km": lines.length_m / 1000.0,
        "azimuth_a_to_b_deg": lines.azimuth_a_to_b_deg,
        "azimuth_b_to_a_deg": lines.azimuth_b_to_a_deg,
        "ground_a_m": batch.ground_a_m, "ground_b_m": batch.ground_b_m,
        "antenna_a_amsl_m": batch.antenna_a_amsl_m, "antenna_b_amsl_m": batch.antenna_b_amsl_m,
        "samples": batch.profiles.n_samples, "spacing_m": batch.profiles.spacing_m,
        "worst_f1_fraction": d.clearance.worst_f1_fraction,
        "worst_clearance_m": d.clearance.worst_clearance_m,
        "worst_point_km": d.clearance.worst_distance_m / 1000.0,
        "line_of_sight": d.clearance.line_of_sight,
        "wc_worst_f1_fraction": w.clearance.worst_f1_fraction,
        "wc_worst_clearance_m": w.clearance.worst_clearance_m,
        "wc_worst_point_km": w.clearance.worst_distance_m / 1000.0,
        "wc_line_of_sight": w.clearance.line_of_sight,
        "meets_criterion": batch.meets_criterion,
        "free_space_db": batch.free_space_db,
        "diffraction_db": d.diffraction_db, "gases_db": d.gases_db, "total_loss_db": d.total_db,
        "eirp_dbm": d.budget.eirp_dbm, "rx_level_dbm": d.budget.rx_level_dbm,
        "noise_floor_dbm": d.budget.noise_floor_dbm, "snr_db": d.budget.snr_db,
        "fade_margin_db": d.budget.fade_margin_db,
        "wc_diffraction_db": w.diffraction_db, "wc_total_loss_db": w.total_db,
        "wc_rx_level_dbm": w.budget.rx_level_dbm, "wc_snr_db": w.budget.snr_db,
        "wc_fade_margin_db": w.budget.fade_margin_db,
        "mast_raise_m": mast_raise_m(batch),
    }
    for name, values in cols.items():
        out[name][idx] = np.asarray(values)
    for k, problem in enumerate(batch.problems):
        if problem is not None:
            problems.append((task.first_pair + int(idx[k]), problem))


# --------------------------------------------------------------------------- workers

_WORKER: dict[str, Any] = {}
_WORKER_LOCK = threading.Lock()


def _model_key(model: ElevationModel) -> tuple:
    return (tuple(s.path for s in model.sources), model.nodata_fill_m,
            tuple(s.unit_factor_m for s in model.sources))


def _worker_model(model: ElevationModel) -> ElevationModel:
    """The worker's own open copy of ``model`` (opened and preloaded once per process)."""
    key = _model_key(model)
    with _WORKER_LOCK:
        if _WORKER.get("key") != key:
            _prepare(model)
            _WORKER["key"] = key
            _WORKER["model"] = model
        return _WORKER["model"]


def _prepare(model: ElevationModel) -> None:
    """Read small rasters whole and load the compiled kernels for their cell types."""
    from .kernels import warm_up

    if model.total_cells() <= PRELOAD_MAX_CELLS:
        model.preload(max_cells=PRELOAD_MAX_CELLS)
    warm_up(tuple(cells.tiles.dtype for cells in model._cache.values()) or (np.float64,))


def _init_local_worker(model: ElevationModel) -> None:
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent decides what an interrupt means
    try:
        _worker_model(model)
    except Exception as exc:  # noqa: BLE001 - an initializer that raises breaks the whole pool
        # Kept and raised by the first task instead, so the parent sees the one-line error
        # (e.g. a damaged raster) rather than "process pool broken".
        _WORKER["error"] = exc


def run_chunk(model: ElevationModel, task: ChunkTask):
    """Worker entry point (local pool or Dask): evaluate ``task`` on the worker's model."""
    return evaluate_chunk(_worker_model(model), task)


def _local_pool_run(task: ChunkTask):
    if "error" in _WORKER:
        raise _WORKER["error"]
    return evaluate_chunk(_WORKER["model"], task)


def _warm() -> None:
    """A no-op task that makes a pool start its workers now."""


class _InProcess:
    def __init__(self, model: ElevationModel) -> None:
        self.model = model
        if model.total_cells() <= PRELOAD_MAX_CELLS:
            model.preload(max_cells=PRELOAD_MAX_CELLS)

    def submit(self, task: ChunkTask):
        return _Done(evaluate_chunk(self.model, task))

    def close(self, cancel: bool = False) -> None:
        pass


class _Done:
    def __init__(self, value: Any) -> None:
        self.value = value

    def result(self) -> Any:
        return self.value


class _LocalPool:
    def __init__(self, model: ElevationModel, workers: int) -> None:
        import multiprocessing as mp
        from concurrent.futures import ProcessPoolExecutor

        # Linux: fork, so workers start with the parent's modules already imported (the
        # pool starts before any progress-bar thread); elsewhere a fresh interpreter each.
        methods = mp.get_all_start_methods()
        method = "fork" if sys.platform.startswith("linux") and "fork" in methods else (
            "forkserver" if "forkserver" in methods else "spawn")
        ctx = mp.get_context(method)
        if method == "forkserver":
            ctx.set_forkserver_preload(["profiler.screening"])
        self.pool = ProcessPoolExecutor(workers, mp_context=ctx, initializer=_init_local_worker,
                                        initargs=(model,))
        for _ in range(workers):  # start the workers while the parent prepares the pairs
            self.pool.submit(_warm)

    def submit(self, task: ChunkTask):
        return self.pool.submit(_local_pool_run, task)

    def close(self, cancel: bool = False) -> None:
        self.pool.shutdown(wait=True, cancel_futures=cancel)


#: Longest wait for a Dask scheduler to answer, s (a wrong address must not hang the run).
SCHEDULER_CONNECT_TIMEOUT_S = 10.0

_ADDRESS_SCHEMES = ("tcp", "tls", "ucx", "ws", "wss")


def check_scheduler_address(address: str) -> str:
    """A Dask scheduler address as ``scheme://host:port`` (``host:port`` means tcp); InputError if garbled."""
    import re

    text = str(address).strip()
    if text.startswith("inproc://"):
        return text
    m = re.fullmatch(r"(?:([A-Za-z]+)://)?(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9_.-]+):(\d{1,5})/?", text)
    if m is None or (m.group(1) is not None and m.group(1).lower() not in _ADDRESS_SCHEMES) \
            or not 0 < int(m.group(3)) < 65536:
        raise InputError(
            f"--scheduler {address!r} is not a Dask scheduler address; give one like tcp://host:8786"
        )
    return text if m.group(1) else f"tcp://{text}"


def with_absolute_paths(model: ElevationModel) -> ElevationModel:
    """A copy of ``model`` whose local raster paths are absolute (workers elsewhere have another cwd)."""
    from .terrain import _is_remote

    copy = ElevationModel.__new__(ElevationModel)
    copy.__dict__.update(model.__getstate__())
    copy.sources = tuple(
        s if _is_remote(s.path) else dataclasses.replace(s, path=os.path.abspath(s.path)) for s in model.sources
    )
    return copy


class _WorkerFuture:
    """A Dask future whose data errors say they happened on a worker."""

    def __init__(self, future: Any) -> None:
        self.future = future

    def result(self) -> Any:
        from .errors import DataFileError

        try:
            return self.future.result()
        except DataFileError as exc:
            raise DataFileError(
                f"on a Dask worker: {exc} (workers must reach the rasters by the same absolute paths)"
            ) from None

    def cancel(self) -> None:
        self.future.cancel()


class _DaskPool:
    def __init__(self, model: ElevationModel, scheduler: Any) -> None:
        try:
            from distributed import Client
        except ImportError:
            raise InputError(
                "running on a Dask cluster needs the distributed package: pip install 'terrahop[distributed]'"
            ) from None
        self.own = False
        if isinstance(scheduler, Client):
            self.client = scheduler
        else:
            if isinstance(scheduler, str):
                scheduler = check_scheduler_address(scheduler)
            try:
                self.client = Client(scheduler, timeout=SCHEDULER_CONNECT_TIMEOUT_S)  # an address or a cluster
            except Exception as exc:  # noqa: BLE001 - distributed raises many kinds; all mean "not reached"
                from .errors import DataError

                cause = " ".join(str(exc).split())[:160] or type(exc).__name__
                if isinstance(exc, MemoryError):  # a reply read as a huge message: not a scheduler
                    cause = "the other end does not answer as a Dask scheduler"
                raise DataError(
                    f"cannot connect to the Dask scheduler at {scheduler} within "
                    f"{SCHEDULER_CONNECT_TIMEOUT_S:g} s ({cause}); check the address and that it is running"
                ) from None
            self.own = True
        self.model = self.client.scatter(with_absolute_paths(model), broadcast=True)

    @property
    def workers(self) -> int:
        return max(len(self.client.scheduler_info().get("workers", {})), 1)

    def submit(self, task: ChunkTask):
        return _WorkerFuture(self.client.submit(run_chunk, self.model, task, pure=False))

    def close(self, cancel: bool = False) -> None:
        if self.own:
            self.client.close()


# --------------------------------------------------------------------------- staging

def _stage(out: str | os.PathLike) -> Stage:
    return Stage(staging_folder(out), COLUMNS)


def _fingerprint(sites: SiteTable, model: ElevationModel, radio: Radio, settings: Settings,
                 plan: PairPlan, chunk_pairs: int) -> str:
    h = hashlib.sha256()
    for arr in (sites.lat_deg, sites.lon_deg, sites.antenna_agl_m, sites.gain_dbi):
        if arr is not None:
            h.update(np.ascontiguousarray(arr, dtype=float).tobytes())
    h.update("\x1f".join(map(str, sites.names)).encode())
    for s in model.sources:
        st = os.stat(s.path) if os.path.exists(s.path) else None
        h.update(f"{s.path}|{st.st_size if st else ''}|{st.st_mtime_ns if st else ''}".encode())
    h.update(repr((radio, settings, model.nodata_fill_m, plan.max_km, plan.hubs, chunk_pairs)).encode())
    h.update(repr(tuple(COLUMNS.items())).encode())  # a staging folder of another column layout is not resumed
    if plan.explicit is not None:
        h.update(plan.explicit[0].tobytes())
        h.update(plan.explicit[1].tobytes())
    return h.hexdigest()


# --------------------------------------------------------------------------- the run

@dataclass(frozen=True)
class ScreenSummary:
    """What a screening run did; ``counts`` pairs by verdict (see :class:`Verdict`)."""

    outputs: tuple[str, ...]
    sites: int
    pairs: int
    counts: dict
    bad_rows: tuple[BadRow, ...]
    samples: int
    seconds: float
    resumed_pairs: int
    min_margin_db: float
    problems: tuple[str, ...] = field(default=())
    #: Run-wide warnings (e.g. a given spacing coarser than the rasters), for stderr.
    warnings: tuple[str, ...] = field(default=())

    def count(self, verdict: "Verdict | str") -> int:
        """Pairs with this verdict."""
        return int(self.counts.get(Verdict(verdict), 0))

    @property
    def viable(self) -> int:
        return self.count(Verdict.VIABLE)

    @property
    def marginal(self) -> int:
        return self.count(Verdict.MARGINAL)

    @property
    def errors(self) -> int:
        return self.count(Verdict.ERROR)


def verdicts(cols: dict[str, np.ndarray], min_margin_db: float) -> np.ndarray:
    """Int8 verdict codes (:attr:`Verdict.code`) of each row, from its staged columns.

    Needs ``status``, ``line_of_sight``, ``meets_criterion`` and
    ``fade_margin_db`` (design k).  Order of the checks: see :class:`Verdict`.
    """
    fade = cols["fade_margin_db"]
    code = np.full(fade.shape, Verdict.VIABLE.code, dtype=np.int8)
    with np.errstate(invalid="ignore"):
        code[fade < min_margin_db] = Verdict.MARGINAL.code
        code[fade < 0.0] = Verdict.BUDGET_SHORT.code
    code[cols["meets_criterion"] != 1] = Verdict.CLEARANCE_SHORT.code
    code[cols["line_of_sight"] != 1] = Verdict.OBSTRUCTED.code
    code[(cols["status"] != 0) | ~np.isfinite(fade)] = Verdict.ERROR.code
    return code


def verdict_counts(codes: np.ndarray) -> dict:
    """Pairs per verdict, every verdict present (0 when none)."""
    counts = np.bincount(codes.astype(np.int64), minlength=len(_VERDICT_ORDER))
    return {v: int(counts[v.code]) for v in _VERDICT_ORDER}


def screen(
    sites: SiteTable,
    model: ElevationModel,
    radio: Radio,
    settings: Settings,
    out: str | os.PathLike,
    *,
    plan: PairPlan = PairPlan(),
    bad_rows: Sequence[BadRow] = (),
    workers: int | None = None,
    scheduler: Any = None,
    resume: bool = False,
    restart: bool = False,
    overwrite: bool = False,
    chunk_pairs: int = 2000,
    min_margin_db: float = 10.0,
    progress: Callable[[int, int], None] | None = None,
    inputs: Sequence[str | os.PathLike] = (),
) -> ScreenSummary:
    """Screen the planned pairs of ``sites`` and write ranked results to ``out``.

    ``workers`` local processes (None: all cores; 1: in this process), or a
    Dask ``scheduler`` (address, cluster or Client).  ``progress(done, total)``
    is called after each committed chunk.  With ``resume`` an interrupted run
    of the same inputs continues; without it a leftover staging folder is an
    error unless ``restart`` discards it.  An existing result is replaced
    only with ``overwrite``.  Outputs that would land on ``inputs`` (the
    sites and pairs files) or on a raster are refused; a second run on the same output
    while one is alive is refused (see :mod:`profiler.io.stage`).
    """
    t0 = time.perf_counter()
    radio.validate()
    settings.validate()
    if chunk_pairs < 1:
        raise InputError(f"chunk size must be at least 1 pair, got {chunk_pairs}")
    from .io.screen_output import check_output_path, check_outputs_spare_inputs

    check_output_path(out)
    # sites.source is only a file name, so the sites file's path comes in ``inputs``.
    check_outputs_spare_inputs(out, [*inputs, *_raster_files(model)])
    bad = list(bad_rows)
    covered = model.covers(sites.lon_deg, sites.lat_deg)
    for k in np.flatnonzero(~covered):
        bad.append(BadRow(sites.source, int(sites.rows[k]), str(sites.names[k]),
                          f"position ({sites.lat_deg[k]:.6f}, {sites.lon_deg[k]:.6f}) lies outside the elevation rasters"))
    if covered.sum() < 2:
        raise InputError(
            f"{sites.source}: {int(covered.sum())} of {len(sites)} usable sites lie inside the elevation rasters; "
            "nothing to screen (check the --dem files and the site coordinates)"
        )
    if not covered.all():
        sites, plan = _drop_sites(sites, plan, covered)
    bad.sort(key=lambda r: (r.source != sites.source, r.row))
    with RunLock(lock_path(out), str(out)):
        run = _Run(sites, model, radio, settings, out, plan, bad, chunk_pairs, min_margin_db, t0)
        done = run.prepare(resume, restart, overwrite)
        if done is not None:
            return done
        try:
            executor, inflight_max = _executor(model, workers, scheduler, _pairs_bound(sites, plan), chunk_pairs)
        except BaseException:
            if run.done_rows == 0:  # e.g. the scheduler cannot be reached: leave no empty staging behind
                run.stage.discard()
            raise
        try:
            summary = run.compute(executor, inflight_max, progress)
            return dataclasses.replace(summary, warnings=summary.warnings + _spacing_warnings(model, sites, settings))
        finally:
            executor.close(cancel=True)


def _raster_files(model: ElevationModel) -> list[str]:
    """Every file the rasters read, the sources of a VRT included."""
    files = []
    for s in model.sources:
        files.append(s.path)
        if str(s.path).lower().endswith(".vrt"):
            import rasterio

            try:
                with rasterio.open(s.path) as ds:
                    files += [f for f in ds.files if f != s.path]
            except Exception:  # noqa: BLE001 - opened before; the model reports read errors itself
                pass
    return files


def _spacing_warnings(model: ElevationModel, sites: SiteTable, settings: Settings) -> tuple[str, ...]:
    """A warning when a given spacing is coarser than the finest raster cell at the sites."""
    if settings.spacing_m is None or len(sites) == 0:
        return ()
    from .profile import spacing_warning

    cells = model.cell_sizes_m(sites.lon_deg, sites.lat_deg)
    if not np.isfinite(cells).any():
        return ()
    note = spacing_warning("screening", float(settings.spacing_m), float(np.nanmin(cells)))
    return (note.replace("on the path", "at the sites"),) if note else ()


def _pairs_bound(sites: SiteTable, plan: PairPlan) -> int:
    """A cheap upper bound of the number of pairs (to choose in-process or a pool)."""
    n = len(sites)
    if plan.explicit is not None:
        return int(plan.explicit[0].size)
    if plan.hubs:
        return len(plan.hubs) * n
    return n * (n - 1) // 2


#: Staged columns the verdicts and the ranking read.
_VERDICT_KEYS = ("pair", "a", "b", "status", "fade_margin_db", "meets_criterion", "line_of_sight")


class _Run:
    """One screening run under the output's lock: staging checks, the chunks, the final write."""

    def __init__(self, sites, model, radio, settings, out, plan, bad, chunk_pairs, min_margin_db, t0) -> None:
        self.sites, self.model, self.radio, self.settings = sites, model, radio, settings
        self.out, self.plan, self.bad = out, plan, bad
        self.chunk_pairs, self.min_margin_db, self.t0 = chunk_pairs, min_margin_db, t0
        self.stage = _stage(out)
        self.fingerprint = _fingerprint(sites, model, radio, settings, plan, chunk_pairs)
        self.total = count_pairs(sites, plan)
        self.done_rows = self.done_chunks = self.resumed = 0

    def prepare(self, resume: bool, restart: bool, overwrite: bool) -> "ScreenSummary | None":
        """Finish a crashed final write, apply the overwrite rule, open or create the stage.

        Returns the summary when a resumed run only had its renames left to do.
        """
        from .io.screen_output import output_paths

        stage = self.stage
        renames = None
        if stage.exists():
            try:
                renames = pending_renames(stage)
            except InputError:
                if not restart:  # --restart is the advice: it must get past a damaged marker
                    raise
        if renames is not None:
            # The last run crashed between its renames: put its complete pair of files in place.
            from .io.stage import finish_renames

            finish_renames(stage, renames)
            if resume and self._same_run():
                rows, _ = stage.validate(self.total)
                summary = self._summary(rows, rows, list(map(str, output_paths(self.out))))
                stage.discard()
                return summary
            stage.discard()
        if not overwrite:
            for path in output_paths(self.out):
                if path.exists():
                    raise InputError(
                        f"{path} exists; add --overwrite to replace it (it is kept until the new result "
                        "is complete) or choose another --out"
                    )
        if stage.exists():
            if resume:
                if not self._same_run():
                    raise InputError(
                        f"{stage.folder} holds an interrupted run with different inputs or settings; "
                        "run the same command as before with --resume, or add --restart to start again"
                    )
                self.done_rows, self.done_chunks = stage.validate(self.total)
                stage.reopen(self.done_rows)
                self.resumed = self.done_rows
                return None
            if not restart:
                raise InputError(
                    f"an interrupted run left {stage.folder}; add --resume to finish it "
                    "or --restart to discard it and start again"
                )
        stage.create({"fingerprint": self.fingerprint, "chunk_pairs": self.chunk_pairs,
                      "total_pairs": self.total})
        return None

    def _same_run(self) -> bool:
        return self.stage.manifest()["fingerprint"] == self.fingerprint

    def compute(self, executor, inflight_max: int, progress) -> "ScreenSummary":
        """Evaluate the remaining chunks, then rank and write the result."""
        from .io.screen_output import rank_order, write_outputs

        stage, total = self.stage, self.total
        sites, radio, settings = self.sites, self.radio, self.settings
        done_rows, done_chunks = self.done_rows, self.done_chunks
        stage.open()
        try:
            if progress:
                progress(done_rows, total)
            if total - done_rows > 0:
                pending: deque = deque()
                chunks = _chunks(sites, self.plan, self.chunk_pairs, skip_pairs=done_rows)
                exhausted = False
                while True:
                    while not exhausted and len(pending) < inflight_max:
                        nxt = next(chunks, None)
                        if nxt is None:
                            exhausted = True
                            break
                        first, a, b = nxt
                        pending.append(executor.submit(_make_task(sites, first, a, b, radio, settings)))
                    if not pending:
                        break
                    cols, problems = pending.popleft().result()
                    done_chunks += 1
                    done_rows += cols["pair"].size
                    stage.append(cols, problems, done_chunks, done_rows)
                    if progress:
                        progress(done_rows, total)
        finally:
            stage.close()
        executor.close()  # free the workers' memory before writing
        keys = stage.columns(done_rows, _VERDICT_KEYS)
        codes = verdicts(keys, self.min_margin_db)
        problems = {int(p): str(m) for p, m in stage.problems()}
        ranked = stage.rank(rank_order(keys))
        outputs = write_outputs(self.out, stage, sites, keys, codes, ranked, problems, settings)
        summary = self._summary(done_rows, self.resumed, outputs)
        stage.discard()
        from .io.stage import crash_point

        crash_point("staging removed")
        return summary

    def _summary(self, rows: int, resumed: int, outputs: list[str]) -> "ScreenSummary":
        stage = self.stage
        keys = stage.columns(rows, _VERDICT_KEYS)
        samples = int(stage.columns(rows, ("samples",))["samples"].astype(np.int64).sum())
        problems = {int(p): str(m) for p, m in stage.problems()}
        codes = verdicts(keys, self.min_margin_db)
        return ScreenSummary(
            outputs=tuple(outputs), sites=len(self.sites), pairs=int(rows), counts=verdict_counts(codes),
            bad_rows=tuple(self.bad), samples=samples,
            seconds=time.perf_counter() - self.t0, resumed_pairs=resumed, min_margin_db=self.min_margin_db,
            problems=tuple(problems[p] for p in sorted(problems)),
        )


def _drop_sites(sites: SiteTable, plan: PairPlan, keep: np.ndarray) -> tuple[SiteTable, PairPlan]:
    new_index = np.cumsum(keep) - 1
    hubs = tuple(int(new_index[h]) for h in plan.hubs if keep[h])
    if plan.hubs and not hubs:
        raise InputError("every hub lies outside the elevation rasters; nothing to screen")
    explicit = None
    if plan.explicit is not None:
        a, b = plan.explicit
        ok = keep[a] & keep[b]
        explicit = (new_index[a[ok]], new_index[b[ok]])
    return sites.subset(keep), dataclasses.replace(plan, hubs=hubs, explicit=explicit)


def _executor(model: ElevationModel, workers: int | None, scheduler: Any, remaining: int, chunk_pairs: int):
    if scheduler is not None:
        pool = _DaskPool(model, scheduler)
        return pool, 2 * pool.workers + 2
    n = (os.cpu_count() or 1) if workers is None else workers
    if n < 1:
        raise InputError(f"--workers must be 1 or more, got {n}")
    if n == 1 or remaining <= chunk_pairs:
        return _InProcess(model), 1
    return _LocalPool(model, n), 2 * n + 1


def resolve_hubs(sites: SiteTable, hub_names: Sequence[str]) -> tuple[int, ...]:
    """Indices of the named hub sites; InputError naming any that is unknown."""
    index = {str(nm): k for k, nm in enumerate(sites.names)}
    out = []
    for h in hub_names:
        if h not in index:
            raise InputError(f"hub {h!r} is not among the usable sites of {sites.source}")
        out.append(index[h])
    return tuple(dict.fromkeys(out))
