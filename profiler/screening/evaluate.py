"""Evaluating one chunk of pairs with the link engine (what a worker runs).

The numbers of every pair come from :func:`profiler.link.analyse_links`, the
engine of ``terrahop link``: a screened pair gives exactly the numbers a
single check gives.  Results come back as the staged columns of
:data:`profiler.io.columns.STAGED_COLUMNS`.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..availability import availability_for_links
from ..budget import Radio
from ..equipment.modulation import SiteRadios
from ..geodesy import WGS84
from ..heights import mast_raise_m
from ..io.columns import KEPT_IN_ERROR_ROWS, STAGED_COLUMNS, PairStatus
from ..io.sites import SiteTable
from ..link import LinkBatch, Settings, SiteColumns, analyse_links
from .. import profile
from ..profile import path_spacings_m, sample_limit_problem
from ..terrain import ElevationModel
from ..validation import MIN_PATH_M, too_close

__all__ = ["ChunkTask", "SiteRadios", "evaluate_chunk", "make_task", "engine_columns", "clutter_columns",
           "radio_columns", "SUBBATCH_SAMPLES"]

#: Padded samples per call of the engine inside a chunk (small arrays stay in cache).
SUBBATCH_SAMPLES = 200_000


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
    #: Roof mounts (profiler.screening.placing): height above ground of the roof under each end
    #: (NaN for an antenna measured from the ground) and the height given above it; None without layers.
    roof_a: np.ndarray | None = None
    roof_b: np.ndarray | None = None
    above_roof_a: np.ndarray | None = None
    above_roof_b: np.ndarray | None = None
    # Radio profiles (SiteRadios) and each pair's profile index at a and b; None without profiles or EIRP limit.
    radios: Any = None
    plan_a: np.ndarray | None = None
    plan_b: np.ndarray | None = None
    # The profile and EIRP limit of the pairs being evaluated (one group of a chunk).
    radio_plan: Any = None
    eirp_limit: Any = None
    # Monte Carlo confidence of each pair (profiler.confidence.ConfidenceSettings), or None.
    confidence: Any = None
    # Ground-reflection search (profiler.reflection.ReflectionSettings); None: not searched.
    reflection: Any = None


def make_task(sites: SiteTable, first: int, a: np.ndarray, b: np.ndarray, radio: Radio, settings: Settings,
              heights: Any = None, radios: SiteRadios | None = None, confidence: Any = None,
              reflection: Any = None) -> ChunkTask:
    """The chunk of pairs ``a``, ``b`` (site indices) starting at pair ``first``.

    ``heights`` (:class:`profiler.screening.placing.AntennaHeights`, or None)
    gives roof mounts and per-pair heights; without it each end has its site's
    height above ground.  ``radios`` (:class:`SiteRadios`, or None) the radio
    profile of each site.
    """
    g = sites.gain_dbi
    if heights is None:
        agl_a, agl_b, mounts = sites.antenna_agl_m[a], sites.antenna_agl_m[b], {}
    else:
        agl_a, agl_b, mounts = heights.of_pairs(a, b)
    return ChunkTask(
        radios=radios,
        plan_a=None if radios is None else radios.site_plan[a],
        plan_b=None if radios is None else radios.site_plan[b],
        first_pair=first, a=a, b=b,
        names_a=sites.names[a], names_b=sites.names[b],
        lat_a=sites.lat_deg[a], lon_a=sites.lon_deg[a], lat_b=sites.lat_deg[b], lon_b=sites.lon_deg[b],
        agl_a=agl_a, agl_b=agl_b,
        gain_a=None if g is None else g[a], gain_b=None if g is None else g[b],
        radio=radio, settings=settings, confidence=confidence, reflection=reflection, **mounts,
    )


def evaluate_chunk(model: ElevationModel, task: ChunkTask,
                   surroundings: Any = None) -> tuple[dict[str, np.ndarray], list[tuple[int, str]]]:
    """Evaluate a chunk of pairs with the link engine.

    ``surroundings`` (profiler.obstructions.Surroundings: obstruction layers,
    surface model) adds clutter to every profile, as ``terrahop link`` does.

    Pairs are sorted by length and cut into sub-batches of similar sample
    counts (little padding, arrays that fit in cache); results come back in
    the chunk's order as columns of :data:`STAGED_COLUMNS`, with the problems of
    pairs that could not be profiled as ``(pair_index, sentence)``.
    """
    n = task.a.size
    out = {name: np.zeros(n, dtype=dt) for name, dt in STAGED_COLUMNS.items()}
    out["pair"][:] = task.first_pair + np.arange(n)
    out["a"][:] = task.a
    out["b"][:] = task.b
    for name in STAGED_COLUMNS:
        if STAGED_COLUMNS[name] == "f8":
            out[name][:] = np.nan
    _mount_columns(task, out)
    problems: list[tuple[int, str]] = []
    same = _same_place(task, problems)
    length_m = np.full(n, np.nan)
    todo = np.flatnonzero(~same)
    if todo.size:
        _evaluate_by_radio(model, task, todo, out, problems, length_m, surroundings)
    out["status"][:] = PairStatus.PROFILED
    bad = np.array([p for p, _ in problems], dtype=np.int64) - task.first_pair
    out["status"][bad] = PairStatus.NOT_PROFILED
    _add_availability(task, out, length_m, model)
    _blank_error_rows(out)
    return out, problems


def _mount_columns(task: ChunkTask, out: dict) -> None:
    """Heights of both ends as used (from the task, so kept in rows that could not be profiled)."""
    out["agl_a_m"][:] = task.agl_a
    out["agl_b_m"][:] = task.agl_b
    if task.roof_a is not None and task.roof_b is not None:
        out["mount_a"][:] = np.isfinite(task.roof_a)
        out["mount_b"][:] = np.isfinite(task.roof_b)
        out["roof_a_m"][:] = task.roof_a
        out["roof_b_m"][:] = task.roof_b
        out["above_roof_a_m"][:] = task.above_roof_a
        out["above_roof_b_m"][:] = task.above_roof_b


def _evaluate_by_radio(model: ElevationModel, task: ChunkTask, todo: np.ndarray, out: dict, problems: list,
                       length_m: np.ndarray, surroundings: Any = None) -> None:
    """Evaluate pairs ``todo`` one radio profile at a time (a batch each); pairs whose ends differ are reported."""
    radios = task.radios
    if radios is None:
        _evaluate_by_length(model, task, todo, out, problems, length_m, surroundings)
        return
    assert task.plan_a is not None and task.plan_b is not None  # make_task sets them with radios
    pa, pb = task.plan_a[todo], task.plan_b[todo]
    mixed = pa != pb
    for k in np.flatnonzero(mixed):
        i = int(todo[k])
        problems.append((task.first_pair + i,
                         f"{task.names_a[i]} - {task.names_b[i]}: the two ends name different radios "
                         f"({radios.names[pa[k]]} at {task.names_a[i]}, {radios.names[pb[k]]} at "
                         f"{task.names_b[i]}); not evaluated: give both sites the same radio"))
    for p in np.unique(pa[~mixed]):
        plan = radios.plans[int(p)]
        group = dataclasses.replace(task, radio=task.radio if plan is None else plan.engine_radio(task.radio),
                                    radio_plan=plan, eirp_limit=radios.limits[int(p)])
        _evaluate_by_length(model, group, todo[~mixed & (pa == p)], out, problems, length_m, surroundings)


def _same_place(task: ChunkTask, problems: list) -> np.ndarray:
    """True for the pairs whose two sites are at one position; each is added to ``problems``."""
    same, gap_m = too_close(task.lat_a, task.lon_a, task.lat_b, task.lon_b)
    for k in np.flatnonzero(same):
        problems.append((task.first_pair + int(k),
                         f"{task.names_a[k]} - {task.names_b[k]}: both sites are at the same position"
                         + (f" ({gap_m[k]:.3g} m apart, under {MIN_PATH_M:g} m)" if gap_m[k] > 0 else "")))
    return same


def _evaluate_by_length(model: ElevationModel, task: ChunkTask, todo: np.ndarray, out: dict, problems: list,
                        length_m: np.ndarray, surroundings: Any = None) -> None:
    """Evaluate pairs ``todo`` in sub-batches of similar sample counts, shortest first."""
    _, _, length = WGS84.inv(task.lon_a[todo], task.lat_a[todo], task.lon_b[todo], task.lat_b[todo])
    spacing: float | np.ndarray | None = task.settings.spacing_m
    if spacing is None and surroundings is not None:  # as the engine chooses it (a surface model may be finer)
        spacing = surroundings.default_spacing_m(model, task.lon_a[todo], task.lat_a[todo], task.lat_b[todo],
                                                 task.lon_b[todo])
    elif spacing is None:  # the spacing build_profiles will use: symmetric, from the whole path
        spacing = path_spacings_m(model, task.lat_a[todo], task.lon_a[todo], task.lat_b[todo], task.lon_b[todo])
    spacing = np.broadcast_to(np.asarray(spacing, dtype=float), todo.shape)
    n_samples = np.ceil(np.asarray(length) / spacing) + 1
    # A pair needing more samples than a path may hold is reported and skipped, not fatal.
    over = ~(n_samples <= profile.MAX_SAMPLES_PER_PATH)  # read at call time: the limit may be set
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
        _evaluate_into(model, task, todo[start:stop], out, problems, length_m, surroundings)
        start = stop


def _add_availability(task: ChunkTask, out: dict, length_m: np.ndarray, model: ElevationModel | None = None) -> None:
    """Availability columns of the whole chunk (rows not profiled get none).

    With ``--climate itu`` each pair gets its own R0.01, dN1 (ITU-R maps, one
    vectorised look-up per chunk) and sa (from ``model``), as ``terrahop link`` does.
    """
    # Availability once per chunk: its per-call cost is worth spreading over many pairs.
    # The inputs are those analyse_links would pass, so the numbers are the same.
    n = task.a.size
    valid = out["status"] == PairStatus.PROFILED
    av = availability_for_links(
        out["fade_margin_db"], np.where(valid, length_m, 1.0), _radio_freq(task.radio, n),
        out["antenna_a_amsl_m"], out["antenna_b_amsl_m"], (task.lat_a + task.lat_b) / 2.0, valid,
        task.settings.climate, meets_criterion=out["meets_criterion"] == 1,
        solve_required=False,  # the margin needed is not a screening column
        values=_climate_values(task, model),
    )
    for name, values in _availability_columns(av, n).items():
        out[name][:] = values


def _climate_values(task: ChunkTask, model: ElevationModel | None) -> Any:
    """Per-pair climate values for ``--climate itu`` (None otherwise)."""
    if task.settings.climate.source != "itu":
        return None
    from ..climate_maps import climate_for_paths

    return climate_for_paths(task.settings.climate, model, task.lat_a, task.lon_a, task.lat_b, task.lon_b,
                             count_in_warning=False)


def _blank_error_rows(out: dict[str, np.ndarray]) -> None:
    """NaN in every figure of a pair that could not be profiled (the engine's numbers are meaningless there).

    Flag columns (u1) cannot hold NaN: the writer shows them empty for error rows.
    """
    bad = out["status"] != PairStatus.PROFILED
    if not bad.any():
        return
    for name, dt in STAGED_COLUMNS.items():
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


def _evaluate_into(model: ElevationModel, task: ChunkTask, idx: np.ndarray, out: dict, problems: list,
                   length_m: np.ndarray, surroundings: Any = None) -> None:
    """Run the engine on pairs ``idx`` of the chunk and fill their rows of ``out``."""
    # Columns, not one Site object per pair (the engine reads them as arrays).
    sites_a = SiteColumns(task.names_a[idx], task.lat_a[idx].astype(float), task.lon_a[idx].astype(float),
                          task.agl_a[idx].astype(float))
    sites_b = SiteColumns(task.names_b[idx], task.lat_b[idx].astype(float), task.lon_b[idx].astype(float),
                          task.agl_b[idx].astype(float))
    radio = task.radio
    if task.gain_a is not None and task.gain_b is not None:  # both set or both None (make_task)
        # A blank gain cell is "not given": the radio's gain applies (profiler.io.sites).
        ga, gb = task.gain_a[idx], task.gain_b[idx]
        radio = dataclasses.replace(radio, gain_a_dbi=np.where(np.isnan(ga), radio.gain_a_dbi, ga),
                                    gain_b_dbi=np.where(np.isnan(gb), radio.gain_b_dbi, gb))
    # Sites were checked when read, and same-place pairs set aside, so skip the per-pair checks.
    # The other diffraction methods are for a single link's record: not computed in bulk.
    settings = dataclasses.replace(task.settings, compare_methods=False)
    batch = analyse_links(model, sites_a, sites_b, radio, settings,
                          names=[f"{a} - {b}" for a, b in zip(sites_a.names.tolist(), sites_b.names.tolist())],
                          check_sites=False, estimate_availability=False, surroundings=surroundings,
                          radio_plan=task.radio_plan, eirp_limit=task.eirp_limit,
                          **_reflection_inputs(task))
    length_m[idx] = batch.profiles.length_m
    for name, values in engine_columns(batch).items():
        out[name][idx] = np.asarray(values)
    if surroundings is not None:
        for name, values in clutter_columns(batch).items():
            out[name][idx] = values
    for name, values in radio_columns(batch).items():
        out[name][idx] = np.asarray(values)
    if task.confidence is not None:  # p_meets, p_los: the draws of each pair, seeded by its ends
        from ..confidence import confidence_for_batch

        conf = confidence_for_batch(batch, task.confidence, diffraction=False, skip_too_large=True)
        out["p_meets"][idx] = conf.p_meets
        out["p_los"][idx] = conf.p_los
    if batch.reflection is not None:  # reflection_point_km, reflection_swing_db, over_water
        for name, values in batch.reflection.columns().items():
            out[name][idx] = np.asarray(values)
    for k, problem in enumerate(batch.problems):
        if problem is not None:
            problems.append((task.first_pair + int(idx[k]), problem))


def _reflection_inputs(task: ChunkTask) -> dict[str, Any]:
    """``reflection`` and ``water_layer`` for the engine (the water file read once per process)."""
    if task.reflection is None:
        return {}
    from ..reflection_water import cached_water_layer

    water = task.reflection.water_file
    return {"reflection": task.reflection, "water_layer": cached_water_layer(water) if water else None}


def clutter_columns(batch: LinkBatch) -> dict[str, np.ndarray]:
    """Clutter at the design-k worst point of each link: height, m, and kind code (the link record's
    ``clutter.at_worst_point_m`` and ``at_worst_point_kind``)."""
    p = batch.profiles
    rows = np.arange(len(batch.names))
    j = np.asarray(batch.design.clearance.worst_index)
    kind = np.zeros(rows.size, np.int8) if p.clutter_kind is None else p.clutter_kind[rows, j]
    return {"worst_point_clutter_m": p.clutter_m[rows, j], "worst_point_clutter": kind}


def radio_columns(batch: LinkBatch) -> dict[str, Any]:
    """Columns of :data:`profiler.io.columns.RADIO_COLUMNS` of the links of ``batch`` that it has figures for.

    The same figures as the record's ``modulation`` and ``eirp_limit`` blocks
    (:mod:`profiler.equipment.modulation`); a pair without a profile keeps NaN.
    """
    out: dict[str, Any] = {}
    m = batch.modulation
    if m is not None:
        out["best_step"] = (m.chosen + 1).astype(np.int16)  # 0: no step has the margin
        out["capacity_mbps"] = m.capacity_mbps()
        out["capacity_at_target_mbps"] = m.capacity_at_target_mbps()
    if batch.eirp is not None:
        out["eirp_over_limit_db"] = batch.eirp.excess_db
    return out


def engine_columns(batch: LinkBatch) -> dict[str, Any]:
    """The figures of :data:`profiler.io.columns.ENGINE_COLUMNS` for every link of ``batch``."""
    lines = batch.profiles.lines
    d, w = batch.design, batch.worst
    return {
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


