"""Adaptive modulation of many links: each step's margin, the step chosen, its share of the year, capacity.

Pure and batch first: arrays of shape (paths, steps).  The budget the engine
computes for a link with a radio profile is the one of its LOWEST step (its
power and SNR, the profile's noise figure and noise bandwidth:
:meth:`RadioPlan.engine_radio`); every other step differs from it only by
its power and its threshold, so

    margin of step s = SNR (lowest step's power) + (P_tx,s - P_tx,0) - SNR_s

at the design and at the worst-case k (fade margin = SNR - required SNR,
common practice; :func:`profiler.budget.link_budget`).  The step chosen is
the highest whose margin at the design k is at least ``min_margin_db``, the
margin a pair needs to count as viable in screening (default 10 dB, common
practice).

Share of the year at or above a step: the availability engine
(:func:`profiler.availability.availability_for_links`, rain per ITU-R
P.530-17 section 2.4.1 and P.838-3, multipath of section 2.3 beside it) run
with that step's own margin, in one call for all paths and steps.  As in
the ``availability`` block, rain counts against availability and multipath
(clear-air) outage against error performance (ITU-R P.530-17 sections 2.3,
2.4): the share is 100 % minus the rain outage, and the multipath outage of
the average year at that margin is given beside it.  Outside the 0.001-1 %
range of eq. 34 the share is a bound, never a figure; a step that does not
close at the design k gets no share and counts as 0 % in the mean capacity
(conservative: up-fades are not counted).  Because the steps' powers never
rise and their thresholds rise (checked when the profile is read), a
higher step's margin is always smaller, so its share is never larger.

Time-weighted mean capacity: sum over steps of capacity_s x (share_s -
share_s+1), the same as sum of (capacity_s - capacity_s-1) x share_s; where
a share is a bound the mean is given as the range it allows.  Capacity at the
target: the capacity of the highest step whose share meets the target
availability (the engine's ``meets_target``).  Shannon capacity B log2(1 +
SNR) (C. E. Shannon, "A Mathematical Theory of Communication", Bell System
Technical Journal 27, 1948) with B the noise bandwidth and the SNR of the
budget: the ceiling no radio passes.

The EIRP limit check (:func:`eirp_check`) sits here too: it reads the same
radio and the same steps.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..availability import AvailabilityStatus, ClimateSettings, availability_for_links
from ..budget import Budget, Radio, shannon_capacity_mbps
from ..losses.rain import P530_RAIN_MAX_PCT, P530_RAIN_MIN_PCT
from .radios import EirpLimit, RadioBand, RadioProfile, StepTable

__all__ = [
    "RadioPlan", "DEFAULT_MIN_MARGIN_DB", "step_margins_db", "highest_closing_step", "StepShares",
    "step_shares", "mean_capacity_mbps", "ModulationResult", "modulation_for_links", "EirpCheck", "eirp_check",
    "SHANNON_SOURCE", "SiteRadios",
]

#: Margin a step needs at the design k to be chosen, dB: screening's viable margin (common practice).
DEFAULT_MIN_MARGIN_DB = 10.0
SHANNON_SOURCE = ('C. E. Shannon, "A Mathematical Theory of Communication", Bell System Technical Journal 27, '
                  "1948: C = B log2(1 + SNR), B the noise bandwidth")
#: Why a step has no share of the year although its link was estimated.
STEP_DOES_NOT_CLOSE = ("the step does not close (fade margin below 0 dB at the design k); counted as 0 % in "
                       "the mean capacity")


@dataclass(frozen=True)
class RadioPlan:
    """A radio profile applied to links: the channel's steps at a frequency and the margin a step needs (dB)."""

    profile: RadioProfile
    channel_mhz: float
    freq_ghz: float
    band: RadioBand
    steps: StepTable
    min_margin_db: float = DEFAULT_MIN_MARGIN_DB
    #: Settings of a one-step radio the profile replaced (e.g. a link file's bandwidth_mhz), for the record.
    replaced: tuple[str, ...] = ()

    def engine_radio(self, radio: Radio) -> Radio:
        """``radio`` as the engine analyses it: the lowest step's power and SNR, the profile's NF and noise bandwidth."""
        return dataclasses.replace(
            radio, tx_power_dbm=float(self.steps.tx_power_dbm[0]), bandwidth_mhz=self.steps.noise_bandwidth_mhz,
            noise_figure_db=self.profile.noise_figure_db, required_snr_db=float(self.steps.required_snr_db[0]))

    @property
    def power_offsets_db(self) -> np.ndarray:
        """Each step's power minus the lowest step's, dB (never positive)."""
        return self.steps.tx_power_dbm - self.steps.tx_power_dbm[0]

    def describe(self) -> dict:
        """Radio name, file, band and channel, for records."""
        return {"radio": self.profile.name, "file": self.profile.path, "band": self.band.describe(),
                "channel_mhz": self.channel_mhz, "noise_bandwidth_mhz": self.steps.noise_bandwidth_mhz,
                "noise_figure_db": self.profile.noise_figure_db, "noise_floor_dbm": self.steps.noise_floor_dbm}


def step_margins_db(snr_db: ArrayLike, power_offsets_db: ArrayLike, required_snr_db: ArrayLike) -> np.ndarray:
    """Fade margin of every step on every path, dB, shape (paths, steps).

    ``snr_db`` (paths,) at the lowest step's power; ``power_offsets_db`` and
    ``required_snr_db`` (steps,).  Fade margin = SNR - required SNR (common
    practice), a step's power shifting its SNR dB for dB.
    """
    snr = np.asarray(snr_db, dtype=float).reshape(-1, 1)
    return snr + np.asarray(power_offsets_db, dtype=float)[None, :] - np.asarray(required_snr_db, dtype=float)[None, :]


def highest_closing_step(margin_db: ArrayLike, min_margin_db: float) -> np.ndarray:
    """Index of the highest step with margin >= ``min_margin_db`` on each path; -1 where none (NaN never closes)."""
    m = np.atleast_2d(np.asarray(margin_db, dtype=float))
    with np.errstate(invalid="ignore"):
        closes = m >= min_margin_db
    n = m.shape[1]
    last = n - 1 - np.argmax(closes[:, ::-1], axis=1)
    return np.where(closes.any(axis=1), last, -1).astype(np.int64)


@dataclass(frozen=True)
class StepShares:
    """Share of the year at or above each step, (paths, steps) arrays.

    ``status``: the availability engine's :class:`AvailabilityStatus` of each
    step's run; ``pct`` the share where it is a figure (NaN otherwise);
    ``low_pct``/``high_pct`` what is known (equal where a figure; the bounds of
    ITU-R P.530-17 eq. 34's range where a bound; 0 for a step that does not
    close; NaN where not estimated); ``side`` the rain range side (-1 above
    99.999 %, +1 below 99 %); ``multipath_pct`` the multipath outage of the
    average year at the step's margin (NaN where not estimated);
    ``meets_target`` the engine's verdict (False where not estimated).
    """

    status: np.ndarray
    pct: np.ndarray
    low_pct: np.ndarray
    high_pct: np.ndarray
    side: np.ndarray
    multipath_pct: np.ndarray
    meets_target: np.ndarray
    #: The engine's reason of each (path, step), flat in path-major order (see :meth:`reason`).
    engine_reasons: tuple[str | None, ...]
    target_availability_pct: float

    def reason(self, i: int, s: int) -> str | None:
        """Why step ``s`` of path ``i`` has no share (None where it has a figure or a bound)."""
        if self.status[i, s] == AvailabilityStatus.DOES_NOT_CLOSE:
            return STEP_DOES_NOT_CLOSE
        return self.engine_reasons[i * self.status.shape[1] + s]

    @property
    def estimated(self) -> np.ndarray:
        """Per path: True where the lowest step's share was estimated (the link's availability was)."""
        return self.status[:, 0] == AvailabilityStatus.ESTIMATED


def step_shares(
    margin_db: ArrayLike, distance_m: ArrayLike, freq_ghz: ArrayLike, altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike, latitude_deg: ArrayLike, valid: ArrayLike, settings: ClimateSettings = ClimateSettings(),
    *, meets_criterion: ArrayLike | None = None, values: Any = None,
) -> StepShares:
    """Share of the year at or above each step: the availability engine run with each step's margin.

    ``margin_db`` (paths, steps) at the design k; the other arguments are those
    of :func:`profiler.availability.availability_for_links`, per path.  One
    engine call covers every path and step (paths repeated step by step).
    """
    m = np.atleast_2d(np.asarray(margin_db, dtype=float))
    p, s = m.shape

    def per_step(x: ArrayLike, dtype: Any = float) -> np.ndarray:
        return np.repeat(np.broadcast_to(np.asarray(x, dtype=dtype), (p,)), s)

    rows = np.repeat(np.arange(p), s)
    av = availability_for_links(
        m.reshape(-1), per_step(distance_m), per_step(freq_ghz), per_step(altitude_a_m), per_step(altitude_b_m),
        per_step(latitude_deg), per_step(valid, bool), settings,
        meets_criterion=None if meets_criterion is None else per_step(meets_criterion, bool),
        solve_required=False, values=None if values is None else values.take(rows),
    )
    assert av.status is not None  # availability_for_links always sets it
    status = np.asarray(av.status, dtype=np.int8)
    pct = np.full(p * s, np.nan)
    side = np.zeros(p * s, dtype=np.int8)
    mp = np.full(p * s, np.nan)
    meets = np.zeros(p * s, dtype=bool)
    ok = av.rows >= 0
    if av.result is not None and ok.any():
        r = av.result
        j = av.rows[ok]
        pct[ok] = np.asarray(r.availability_pct)[j]
        side[ok] = np.asarray(r.rain_range_side)[j]
        mp[ok] = np.asarray(r.multipath_outage_pct)[j]
        meets[ok] = np.asarray(r.meets_target)[j]
    pct = np.where(side != 0, np.nan, pct)
    low = np.where(side < 0, 100.0 - P530_RAIN_MIN_PCT, np.where(side > 0, 0.0, pct))
    high = np.where(side < 0, 100.0, np.where(side > 0, 100.0 - P530_RAIN_MAX_PCT, pct))
    no_close = status == AvailabilityStatus.DOES_NOT_CLOSE
    low = np.where(no_close, 0.0, low)
    high = np.where(no_close, 0.0, high)
    return StepShares(status=status.reshape(p, s), pct=pct.reshape(p, s), low_pct=low.reshape(p, s),
                      high_pct=high.reshape(p, s), side=side.reshape(p, s), multipath_pct=mp.reshape(p, s),
                      meets_target=meets.reshape(p, s), engine_reasons=av.reasons,
                      target_availability_pct=settings.target_availability_pct)


def mean_capacity_mbps(capacity_mbps: ArrayLike, share_pct: ArrayLike) -> np.ndarray:
    """Time-weighted mean capacity, Mbit/s: sum of (c_s - c_s-1) x share_s / 100 over the steps (c_-1 = 0).

    ``share_pct`` (paths, steps): the share of the year at or above each step.
    Equal to sum c_s (share_s - share_s+1): the time spent at exactly step s
    is the share at or above s less that at or above s+1.
    """
    c = np.asarray(capacity_mbps, dtype=float)
    steps = np.diff(np.concatenate([[0.0], c]))
    return np.atleast_2d(np.asarray(share_pct, dtype=float)) @ steps / 100.0


@dataclass(frozen=True)
class ModulationResult:
    """Modulation figures of many links (arrays over paths, or paths x steps)."""

    plan: RadioPlan
    margin_db: np.ndarray
    margin_worst_db: np.ndarray
    chosen: np.ndarray
    shares: StepShares
    mean_low_mbps: np.ndarray
    mean_high_mbps: np.ndarray
    at_target: np.ndarray
    shannon_mbps: np.ndarray
    snr_db: np.ndarray

    def capacity_mbps(self) -> np.ndarray:
        """Capacity of the chosen step per path, Mbit/s (NaN where none is chosen)."""
        return _capacity_of(self.plan.steps.capacity_mbps, self.chosen)

    def capacity_at_target_mbps(self) -> np.ndarray:
        """Capacity of the highest step meeting the target per path (NaN where none or not estimated)."""
        return _capacity_of(self.plan.steps.capacity_mbps, self.at_target)

    def record(self, i: int) -> dict:
        """JSON-ready ``modulation`` block of link i."""
        plan, steps, sh = self.plan, self.plan.steps, self.shares
        estimated = bool(sh.estimated[i])
        chosen = int(self.chosen[i])
        rows = []
        for s in range(len(steps)):
            share = _opt(sh.pct[i, s])
            rows.append({
                "step": s + 1,
                "label": steps.labels[s],
                "capacity_mbps": float(steps.capacity_mbps[s]),
                "threshold_given": steps.threshold_given[s],
                "threshold_error_ratio": _opt(steps.error_ratio[s]),
                "rx_threshold_dbm": float(steps.rx_threshold_dbm[s]),
                "required_snr_db": float(steps.required_snr_db[s]),
                "tx_power_dbm": float(steps.tx_power_dbm[s]),
                "fade_margin_db": float(self.margin_db[i, s]),
                "fade_margin_worst_db": float(self.margin_worst_db[i, s]),
                "closes": bool(self.margin_db[i, s] >= 0.0),
                "closes_with_min_margin": bool(self.margin_db[i, s] >= plan.min_margin_db),
                "share_of_year_pct": share,
                "share_of_year_above_pct": (100.0 - P530_RAIN_MIN_PCT) if sh.side[i, s] < 0 else None,
                "share_of_year_below_pct": (100.0 - P530_RAIN_MAX_PCT) if sh.side[i, s] > 0 else None,
                "share_reason": None if share is not None or sh.side[i, s] != 0 else sh.reason(i, s),
                "multipath_outage_pct": _opt(sh.multipath_pct[i, s]),
                "meets_target": bool(sh.meets_target[i, s]) if estimated else None,
            })
        exact = estimated and bool(np.isclose(self.mean_low_mbps[i], self.mean_high_mbps[i], rtol=0, atol=1e-9))
        return {
            **plan.describe(),
            "budget_step": steps.labels[0],
            "budget_note": "the budget, fade margin and availability blocks describe the lowest step "
                           f"({steps.labels[0]}): whether the link is up at all",
            "min_margin_db": plan.min_margin_db,
            "chosen_rule": "the highest step whose fade margin at the design k is at least min_margin_db",
            "chosen_step": chosen + 1 if chosen >= 0 else None,
            "chosen_label": steps.labels[chosen] if chosen >= 0 else None,
            "capacity_mbps": float(steps.capacity_mbps[chosen]) if chosen >= 0 else None,
            "target_availability_pct": sh.target_availability_pct,
            "capacity_at_target_step": int(self.at_target[i]) + 1 if estimated and self.at_target[i] >= 0 else None,
            "capacity_at_target_mbps": _opt(self.capacity_at_target_mbps()[i]) if estimated else None,
            "mean_capacity_mbps": float(self.mean_low_mbps[i]) if exact else None,
            "mean_capacity_min_mbps": float(self.mean_low_mbps[i]) if estimated else None,
            "mean_capacity_max_mbps": float(self.mean_high_mbps[i]) if estimated else None,
            "shares_estimated": estimated,
            "shares_reason": None if estimated else sh.reason(i, 0),
            "shares_method": "availability engine (ITU-R P.530-17 s. 2.4.1 rain, P.838-3) run with each step's "
                             "own margin; share = 100 % - rain outage, multipath outage (s. 2.3) beside it; "
                             "outside 0.001-1 % rain outage a bound",
            "shannon_capacity_mbps": float(self.shannon_mbps[i]),
            "shannon_snr_db": float(self.snr_db[i]),
            "shannon_source": SHANNON_SOURCE,
            "replaced_settings": list(plan.replaced),
            "steps": rows,
        }


def _opt(value: Any) -> float | None:
    v = float(value)
    return v if np.isfinite(v) else None


def _capacity_of(capacity: np.ndarray, index: np.ndarray) -> np.ndarray:
    idx = np.asarray(index)
    return np.where(idx >= 0, capacity[np.maximum(idx, 0)], np.nan)


def modulation_for_links(
    plan: RadioPlan, design: Budget, worst: Budget, distance_m: ArrayLike, freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike, altitude_b_m: ArrayLike, latitude_deg: ArrayLike, valid: ArrayLike,
    settings: ClimateSettings, *, meets_criterion: ArrayLike | None = None, values: Any = None,
) -> ModulationResult:
    """Every step's margins, the chosen step, shares of the year, mean capacity and Shannon capacity of many links.

    ``design``/``worst``: budgets of the lowest step at the two k-factors;
    the rest are the availability engine's inputs per path.
    """
    steps = plan.steps
    margin = step_margins_db(design.snr_db, plan.power_offsets_db, steps.required_snr_db)
    margin_worst = step_margins_db(worst.snr_db, plan.power_offsets_db, steps.required_snr_db)
    shares = step_shares(margin, distance_m, freq_ghz, altitude_a_m, altitude_b_m, latitude_deg, valid, settings,
                         meets_criterion=meets_criterion, values=values)
    estimated = shares.estimated
    low = np.where(estimated, mean_capacity_mbps(steps.capacity_mbps, np.nan_to_num(shares.low_pct)), np.nan)
    high = np.where(estimated, mean_capacity_mbps(steps.capacity_mbps, np.nan_to_num(shares.high_pct)), np.nan)
    at_target = np.where(estimated, highest_closing_step(np.where(shares.meets_target, 1.0, 0.0), 0.5), -1)
    snr = np.asarray(design.snr_db, dtype=float)
    return ModulationResult(
        plan=plan, margin_db=margin, margin_worst_db=margin_worst,
        chosen=highest_closing_step(margin, plan.min_margin_db), shares=shares,
        mean_low_mbps=low, mean_high_mbps=high, at_target=at_target,
        shannon_mbps=shannon_capacity_mbps(steps.noise_bandwidth_mhz, snr), snr_db=snr,
    )


# --- screening: a profile per site ---------------------------------------------


@dataclass(frozen=True)
class SiteRadios:
    """Radio profiles of a screening run: ``plans[k]`` (a RadioPlan, or None for the flags' one-step
    radio) with its EIRP limit ``limits[k]`` (or None); ``site_plan[i]`` the index of site i's.  ``names[k]``
    says where plan k came from, for messages.  Pairs whose two ends differ are reported and skipped."""

    plans: tuple
    limits: tuple
    site_plan: np.ndarray
    names: tuple[str, ...]
    #: Row of each site in its source (SiteTable.rows), to follow the sites when some are dropped.
    site_rows: np.ndarray | None = None

    def aligned(self, sites: Any) -> "SiteRadios":
        """These radios for ``sites`` (a SiteTable), a subset of the table they were made for (matched by source row)."""
        if self.site_rows is None or np.array_equal(self.site_rows, sites.rows):
            return self
        order = np.argsort(self.site_rows, kind="stable")
        pos = np.searchsorted(self.site_rows[order], sites.rows)
        return dataclasses.replace(self, site_plan=self.site_plan[order][pos], site_rows=np.asarray(sites.rows))

    def key(self) -> str:
        """Text that changes with any profile, limit or site assignment (the staging fingerprint)."""
        import hashlib

        h = hashlib.sha256(repr((self.plans, self.limits, self.names)).encode())
        h.update(np.ascontiguousarray(self.site_plan, dtype=np.int64).tobytes())
        return h.hexdigest()


# --- EIRP limit -----------------------------------------------------------------


@dataclass(frozen=True)
class EirpCheck:
    """EIRP at each end against a limit, dBm; site a's is the budget's, site b's that of the same radio at b."""

    limit: EirpLimit
    eirp_a_dbm: np.ndarray
    eirp_b_dbm: np.ndarray

    @property
    def excess_db(self) -> np.ndarray:
        """Highest EIRP of the two ends minus the limit, dB (above 0: over the limit)."""
        return np.maximum(self.eirp_a_dbm, self.eirp_b_dbm) - self.limit.max_eirp_dbm

    def record(self, i: int) -> dict:
        """JSON-ready ``eirp_limit`` block of link i."""
        excess = float(self.excess_db[i])
        return {
            "max_eirp_dbm": self.limit.max_eirp_dbm,
            "source": self.limit.source,
            "eirp_a_dbm": float(self.eirp_a_dbm[i]),
            "eirp_b_dbm": float(self.eirp_b_dbm[i]),
            "exceeds": bool(excess > 0.0),
            "excess_db": excess if excess > 0.0 else 0.0,
            "note": "no national limits are built in; the limit is the one given (check it with the local regulator)",
        }

    def warning(self, i: int) -> str | None:
        """The warning of link i when its EIRP exceeds the limit, else None."""
        if not self.excess_db[i] > 0.0:
            return None
        ends = [f"site {t} {e:.1f} dBm" for t, e in (("a", self.eirp_a_dbm[i]), ("b", self.eirp_b_dbm[i]))
                if e > self.limit.max_eirp_dbm]
        return (f"EIRP exceeds the limit of {self.limit.max_eirp_dbm:g} dBm ({self.limit.source}) by "
                f"{float(self.excess_db[i]):.1f} dB: {', '.join(ends)}")


def eirp_check(radio: Radio, limit: EirpLimit, n: int) -> EirpCheck:
    """EIRP of ``n`` links at both ends (the radio's power, which with a profile is its lowest and strongest step).

    EIRP = P_tx + G - L (common practice), the same figure as the budget's at site a.
    """
    tx = np.asarray(radio.tx_power_dbm, dtype=float)
    a = np.broadcast_to(tx + np.asarray(radio.gain_a_dbi, dtype=float) - radio.loss_a_db, (n,)).astype(float)
    b = np.broadcast_to(tx + np.asarray(radio.gain_b_dbi, dtype=float) - radio.loss_b_db, (n,)).astype(float)
    return EirpCheck(limit, a, b)
