"""Lowest antenna heights that meet the clearance criterion.

The criterion asks, at every interior sample i and at each k-factor, that
the line between the antennas clear the surface plus earth bulge by c F1_i
(c = the criterion's fraction of the first Fresnel radius at that k).  The
line's height there is A (1 - t_i) + B t_i, with A and B the antenna
elevations and t_i = d_i / d, so each sample gives one linear constraint

    A (1 - t_i) + B t_i >= r_i,    r_i = surface_i + bulge_i + c F1_i.

``r_i`` is read from the engine's own clearance arrays (line minus
clearance plus c F1, from :func:`profiler.link.evaluate_profiles`), so there
is no second implementation of the geometry.  For one end, the least height
is a maximum over the samples; for both ends, every height of a on a grid
(multiples of ``step_m`` above the site's reference, up to its mast limit)
gives the least height of b, and the pair of least sum is chosen.  Every
pair reported is then evaluated by the engine, and the chosen pair is
checked with one step less at each end it solved (which must fail).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import InputError
from .validation import check_number
from .link import AtK, LinkBatch, evaluate_profiles
from .profile import Profiles

__all__ = ["SOLVE_CHOICES", "HeightPair", "HeightSolution", "solve_heights", "solve_heights_with_confidence",
           "take_paths", "mast_raise_m"]

#: Which ends to solve: a (b fixed), b (a fixed) or both (least sum).
SOLVE_CHOICES = ("a", "b", "both")

#: Default mast limit per site above its reference, m (an arbitrary default; set your own).
DEFAULT_MAX_MAST_M = 30.0

_TOLERANCE_M = 1e-9

#: Most antenna heights tried at one end (mast limit / step), so time and memory stay bounded.
MAX_GRID_HEIGHTS = 20_000

#: Grid heights x profile constraints evaluated at once (bounds the memory of the "both" search).
_BLOCK_ELEMENTS = 4_000_000


@dataclass(frozen=True)
class HeightPair:
    """Antenna heights above each site's reference (ground or roof) and their verdict by the engine."""

    antenna_a_m: float
    antenna_b_m: float
    antenna_a_amsl_m: float
    antenna_b_amsl_m: float
    f1_fraction: float
    f1_fraction_worst: float
    meets_criterion: bool
    #: Probability of meeting the criterion (profiler.confidence), when solved with a confidence.
    p_meets: float | None = None

    @property
    def sum_m(self) -> float:
        return self.antenna_a_m + self.antenna_b_m

    def record(self) -> dict:
        out = {**dataclasses.asdict(self), "sum_m": self.sum_m}
        if self.p_meets is None:
            del out["p_meets"]
        return out


@dataclass(frozen=True)
class HeightSolution:
    """The answer of :func:`solve_heights` (heights in metres)."""

    solve: str
    step_m: float
    reference_a: str
    reference_b: str
    base_a_m: float
    base_b_m: float
    max_mast_a_m: float
    max_mast_b_m: float
    criterion: str
    chosen: HeightPair | None
    pairs: tuple[HeightPair, ...]
    one_step_lower: tuple[HeightPair, ...]
    at_limits: HeightPair
    #: Probability asked of the chosen heights (--confidence), or None for the plain solver.
    confidence: float | None = None
    confidence_model: dict | None = None

    @property
    def feasible(self) -> bool:
        return self.chosen is not None

    def record(self) -> dict:
        """JSON-ready form."""
        return {
            "solve": self.solve,
            "step_m": self.step_m,
            "criterion": self.criterion,
            "feasible": self.feasible,
            "sites": {
                "a": {"reference": self.reference_a, "reference_m": self.base_a_m, "max_mast_m": self.max_mast_a_m},
                "b": {"reference": self.reference_b, "reference_m": self.base_b_m, "max_mast_m": self.max_mast_b_m},
            },
            "chosen": None if self.chosen is None else self.chosen.record(),
            "pairs": [p.record() for p in self.pairs],
            "one_step_lower": [p.record() for p in self.one_step_lower],
            "at_limits": self.at_limits.record(),
            **({"confidence": self.confidence, "confidence_model": self.confidence_model}
               if self.confidence is not None else {}),
        }


def take_paths(profiles: Profiles, index: np.ndarray) -> Profiles:
    """Profiles of the paths at ``index`` (repeats allowed), every per-path field taken alike."""
    n = len(profiles.n_samples)
    index = np.asarray(index, dtype=int)

    def take(value: Any) -> Any:
        if isinstance(value, np.ndarray) and value.ndim >= 1 and value.shape[0] == n:
            return value[index]
        if isinstance(value, tuple) and len(value) == n:
            return tuple(value[j] for j in index)
        if dataclasses.is_dataclass(value) and not isinstance(value, type):
            return dataclasses.replace(value, **{f.name: take(getattr(value, f.name))
                                                 for f in dataclasses.fields(value)})
        return value

    return dataclasses.replace(profiles, **{f.name: take(getattr(profiles, f.name))
                                            for f in dataclasses.fields(profiles)})


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


def _requirement_m(at: AtK, fraction: float, profiles: Profiles, i: int) -> tuple[np.ndarray, np.ndarray]:
    """Least line height r at the interior samples of path i, and t = d / length there."""
    c = at.clearance
    inside = profiles.interior[i]
    need = c.line_m[i] - c.clearance_m[i] + fraction * c.f1_m[i]
    t = profiles.distance_m[i] / profiles.length_m[i]
    return need[inside], t[inside]


def _grid(max_m: float, step_m: float) -> np.ndarray:
    return np.arange(int(math.floor(max_m / step_m + _TOLERANCE_M)) + 1) * step_m


def _up(height_m: np.ndarray, step_m: float) -> np.ndarray:
    """Round up to the grid of multiples of step, never below 0."""
    return np.maximum(np.ceil(np.asarray(height_m) / step_m - _TOLERANCE_M), 0.0) * step_m


def solve_heights(
    batch: LinkBatch,
    *,
    solve: str = "both",
    max_mast_a_m: float = DEFAULT_MAX_MAST_M,
    max_mast_b_m: float = DEFAULT_MAX_MAST_M,
    step_m: float = 1.0,
    i: int = 0,
) -> HeightSolution:
    """Lowest antenna heights for link ``i`` of ``batch`` that meet its clearance criterion.

    ``solve`` 'a' or 'b' solves that end with the other at its height in the
    batch; 'both' minimises the sum.  Heights are above each site's
    reference: the roof for a site given above its roof, else the ground.
    """
    _check_request(batch, i, solve, max_mast_a_m, max_mast_b_m, step_m)
    settings = batch.settings
    ref_a, base_a = _reference(batch, "a", i)
    ref_b, base_b = _reference(batch, "b", i)
    problem = _Problem.of(batch, i, solve, step_m, base_a, base_b, max_mast_a_m, max_mast_b_m)
    pairs = problem.meeting(problem.candidates())
    chosen = None
    if pairs:
        chosen = min(pairs, key=lambda p: (round(p.sum_m, 9), round(max(p.antenna_a_m, p.antenna_b_m), 9),
                                           p.antenna_a_m))
    return HeightSolution(
        solve=solve,
        step_m=step_m,
        reference_a=ref_a,
        reference_b=ref_b,
        base_a_m=base_a,
        base_b_m=base_b,
        max_mast_a_m=max_mast_a_m,
        max_mast_b_m=max_mast_b_m,
        criterion=settings.criterion.describe(settings.k, settings.k_worst),
        chosen=chosen,
        pairs=tuple(pairs),
        one_step_lower=tuple(problem.one_step_lower(chosen)),
        at_limits=problem.verify(problem.limits[None, :])[0],
    )


def _check_request(batch: LinkBatch, i: int, solve: str, max_mast_a_m: float, max_mast_b_m: float,
                   step_m: float) -> None:
    """InputError for a request the solver cannot answer (bad choice, limits, grid size, unprofiled link)."""
    if solve not in SOLVE_CHOICES:
        raise InputError(f"solve must be one of {', '.join(SOLVE_CHOICES)}, got {solve!r}")
    # Ranges shared with every entry point: profiler.validation.LIMITS.
    for tag, value in (("a", max_mast_a_m), ("b", max_mast_b_m)):
        check_number(value, "max_mast_m", f"site {tag}")
    check_number(step_m, "step_m")
    heights = max(max_mast_a_m, max_mast_b_m) / step_m
    if heights > MAX_GRID_HEIGHTS:
        raise InputError(
            f"a mast limit of {max(max_mast_a_m, max_mast_b_m):g} m in steps of {step_m:g} m gives "
            f"{heights:,.0f} heights to try, more than {MAX_GRID_HEIGHTS:,}; use a coarser --step-m "
            "or a lower mast limit"
        )
    problem = batch.problems[i]
    if problem is not None:
        raise InputError(problem)


@dataclass(frozen=True)
class _Problem:
    """The linear constraints of link ``i`` and the grid of heights (above each reference), m."""

    batch: LinkBatch
    i: int
    solve: str
    step_m: float
    base_a: float
    base_b: float
    max_a: float
    max_b: float
    now_a: float
    now_b: float
    need: np.ndarray
    t: np.ndarray

    @classmethod
    def of(cls, batch: LinkBatch, i: int, solve: str, step_m: float, base_a: float, base_b: float,
           max_a: float, max_b: float) -> "_Problem":
        crit = batch.settings.criterion
        r1, t1 = _requirement_m(batch.design, crit.min_f1_fraction, batch.profiles, i)
        r2, t2 = _requirement_m(batch.worst, crit.min_f1_fraction_worst, batch.profiles, i)
        return cls(batch, i, solve, step_m, base_a, base_b, max_a, max_b,
                   now_a=float(batch.antenna_a_amsl_m[i]) - base_a, now_b=float(batch.antenna_b_amsl_m[i]) - base_b,
                   need=np.concatenate([r1, r2]), t=np.concatenate([t1, t2]))

    @property
    def limits(self) -> np.ndarray:
        """The highest heights allowed: the mast limit at a solved end, the current height at a fixed one."""
        return np.array([self.max_a if self.solve != "b" else self.now_a,
                         self.max_b if self.solve != "a" else self.now_b])

    def least_b(self, a_m: np.ndarray) -> np.ndarray:
        """Least grid height of b for each height of a."""
        need, t = self.need, self.t
        a_m = np.asarray(a_m, dtype=float)
        if a_m.ndim == 1 and a_m.size * max(need.size, 1) > _BLOCK_ELEMENTS:
            rows = max(1, _BLOCK_ELEMENTS // max(need.size, 1))
            return np.concatenate([self.least_b(a_m[j:j + rows]) for j in range(0, a_m.size, rows)])
        a_amsl = self.base_a + a_m[..., None]
        top = np.max((need - a_amsl * (1.0 - t)) / t, axis=-1, initial=-np.inf)
        return _up(top - self.base_b, self.step_m)

    def least_a(self, b_m: np.ndarray) -> np.ndarray:
        """Least grid height of a for each height of b."""
        b_amsl = self.base_b + np.asarray(b_m, dtype=float)[..., None]
        top = np.max((self.need - b_amsl * self.t) / (1.0 - self.t), axis=-1, initial=-np.inf)
        return _up(top - self.base_a, self.step_m)

    def candidates(self) -> np.ndarray:
        """Height pairs (a, b) to verify: the frontier of least sums ('both'), or the least height and 3 above."""
        step_m = self.step_m
        if self.solve == "both":
            grid_a = _grid(self.max_a, step_m)
            b_for_a = self.least_b(grid_a)
            ok = b_for_a <= self.max_b + _TOLERANCE_M
            running = np.minimum.accumulate(np.where(ok, b_for_a, np.inf))
            frontier = ok & (b_for_a < np.r_[np.inf, running[:-1]])
            return np.column_stack([grid_a[frontier], b_for_a[frontier]])
        if self.solve == "a":
            a = float(self.least_a(np.array(self.now_b))) + step_m * np.arange(4)
            a = a[a <= self.max_a + _TOLERANCE_M]
            return np.column_stack([a, np.full(a.shape, self.now_b)])
        b = float(self.least_b(np.array(self.now_a))) + step_m * np.arange(4)
        b = b[b <= self.max_b + _TOLERANCE_M]
        return np.column_stack([np.full(b.shape, self.now_a), b])

    def verify(self, pairs: np.ndarray) -> list[HeightPair]:
        """Each height pair evaluated by the engine at the design and the worst-case k."""
        if len(pairs) == 0:
            return []
        batch, settings = self.batch, self.batch.settings
        sub = take_paths(batch.profiles, np.full(len(pairs), self.i))
        amsl_a = self.base_a + pairs[:, 0]
        amsl_b = self.base_b + pairs[:, 1]
        with np.errstate(invalid="ignore", divide="ignore"):
            design = evaluate_profiles(sub, amsl_a, amsl_b, batch.radio, settings.k, settings)
            worst = evaluate_profiles(sub, amsl_a, amsl_b, batch.radio, settings.k_worst, settings)
        f1 = design.clearance.worst_f1_fraction
        f1w = worst.clearance.worst_f1_fraction
        meets = settings.criterion.met(f1, f1w)
        return [
            HeightPair(float(p[0]), float(p[1]), float(a), float(b), float(x), float(y), bool(m))
            for p, a, b, x, y, m in zip(pairs, amsl_a, amsl_b, f1, f1w, meets)
        ]

    def meeting(self, candidates: np.ndarray) -> list[HeightPair]:
        """The candidates that meet the criterion once verified."""
        pairs = self.verify(candidates)
        limits = self.limits
        # Rounding can leave a pair a hair short of the criterion: raise the solved end a step.
        for _ in range(3):
            short = [j for j, p in enumerate(pairs) if not p.meets_criterion]
            if not short:
                break
            bump = np.array([self.step_m, 0.0]) if self.solve == "a" else np.array([0.0, self.step_m])
            fixed = candidates.copy()
            fixed[short] += bump
            keep = (fixed[:, 0] <= limits[0] + _TOLERANCE_M) & (fixed[:, 1] <= limits[1] + _TOLERANCE_M)
            candidates = fixed[keep]
            pairs = self.verify(candidates)
        return [p for p in pairs if p.meets_criterion]

    def one_step_lower(self, chosen: HeightPair | None) -> list[HeightPair]:
        """The chosen pair with one step less at each end solved (the check that it is the least)."""
        if chosen is None:
            return []
        step_m, tries = self.step_m, []
        if self.solve in ("a", "both") and chosen.antenna_a_m >= step_m - _TOLERANCE_M:
            tries.append([chosen.antenna_a_m - step_m, chosen.antenna_b_m])
        if self.solve in ("b", "both") and chosen.antenna_b_m >= step_m - _TOLERANCE_M:
            tries.append([chosen.antenna_a_m, chosen.antenna_b_m - step_m])
        return self.verify(np.array(tries).reshape(-1, 2))


def _reference(batch: LinkBatch, tag: str, i: int) -> tuple[str, float]:
    """('roof', roof elevation) for a site given above its roof, else ('ground', ground elevation)."""
    placements = getattr(batch, f"placements_{tag}", None)
    if placements is not None and placements[i].reference == "roof" and placements[i].roof is not None:
        return "roof", float(placements[i].roof.roof_m)
    return "ground", float(getattr(batch, f"ground_{tag}_m")[i])


# --- heights that meet the criterion with a probability (profiler.confidence) ---------


def solve_heights_with_confidence(
    batch: LinkBatch, confidence: float, settings: Any, *, solve: str = "both",
    max_mast_a_m: float = DEFAULT_MAX_MAST_M, max_mast_b_m: float = DEFAULT_MAX_MAST_M, step_m: float = 1.0,
    i: int = 0,
) -> HeightSolution:
    """Lowest antenna heights of link ``i`` meeting its criterion with probability >= ``confidence``.

    The same draws as :func:`profiler.confidence.confidence_for_batch` (``settings``:
    its ConfidenceSettings, None for the defaults); raising an antenna changes no draw, so the
    probability never falls as a mast rises.  Each draw is the plain solver's
    linear problem (module docstring) on the drawn surface and antennas: for
    a height of one end, the least height of the other that draw needs is a
    maximum over the samples, and the least height met by a share
    ``confidence`` of the draws is an order statistic.  Every pair reported
    is then re-evaluated by :func:`profiler.confidence.p_meets_at`.
    """
    from .confidence import ConfidenceSettings, _dem_sigma, _follows, confidence_level, draws_of, p_meets_at

    _check_request(batch, i, solve, max_mast_a_m, max_mast_b_m, step_m)
    confidence = confidence_level(confidence)  # (0, 0.999], InputError naming the setting
    settings = (settings if settings is not None else ConfidenceSettings()).validate()
    ref_a, base_a = _reference(batch, "a", i)
    ref_b, base_b = _reference(batch, "b", i)
    problem = _Problem.of(batch, i, solve, step_m, base_a, base_b, max_mast_a_m, max_mast_b_m)
    follow = (_follows(batch, "a", i), _follows(batch, "b", i))
    dem = _dem_sigma(settings, batch.provenance)
    draws = draws_of(batch, i, settings, dem[0], follow)
    need, t = _draw_requirements(batch, i, draws)  # (D, M) line heights needed, t (M,)
    da = draws.antenna_a_m - float(batch.antenna_a_amsl_m[i])  # each draw's shift of antenna a, m
    db = draws.antenna_b_m - float(batch.antenna_b_amsl_m[i])
    rank = int(math.ceil(confidence * len(da) - 1e-9)) - 1  # the order statistic met by that share

    def least_b(a_m: float) -> float:
        top = np.max((need - (base_a + a_m + da)[:, None] * (1.0 - t)) / t, axis=1) - db - base_b
        return float(_up(np.partition(top, rank)[rank], step_m))

    def least_a(b_m: float) -> float:
        top = np.max((need - (base_b + b_m + db)[:, None] * t) / (1.0 - t), axis=1) - da - base_a
        return float(_up(np.partition(top, rank)[rank], step_m))

    limits = problem.limits
    if solve == "both":
        grid_a = _grid(max_mast_a_m, step_m)
        b_for_a = np.array([least_b(a) for a in grid_a])
        ok = b_for_a <= max_mast_b_m + _TOLERANCE_M
        running = np.minimum.accumulate(np.where(ok, b_for_a, np.inf))
        frontier = ok & (b_for_a < np.r_[np.inf, running[:-1]])
        cands = np.column_stack([grid_a[frontier], b_for_a[frontier]])
    elif solve == "a":
        a0 = least_a(problem.now_b)
        cands = np.array([[a0, problem.now_b]]) if a0 <= limits[0] + _TOLERANCE_M else np.zeros((0, 2))
    else:
        b0 = least_b(problem.now_a)
        cands = np.array([[problem.now_a, b0]]) if b0 <= limits[1] + _TOLERANCE_M else np.zeros((0, 2))

    def offsets(pairs: np.ndarray) -> np.ndarray:
        return np.column_stack([base_a + pairs[:, 0] - float(batch.antenna_a_amsl_m[i]),
                                base_b + pairs[:, 1] - float(batch.antenna_b_amsl_m[i])])

    def verify(pairs: np.ndarray) -> list[HeightPair]:
        pairs = np.asarray(pairs, dtype=float).reshape(-1, 2)
        plain = problem.verify(pairs)
        p = p_meets_at(batch, i, settings, offsets(pairs)) if len(pairs) else np.zeros(0)
        return [dataclasses.replace(h, p_meets=float(x)) for h, x in zip(plain, p)]

    pairs = verify(cands)
    # Rounding at the boundary can leave a pair a hair short: raise the solved end a step (as the plain solver).
    for _ in range(3):
        short = [j for j, h in enumerate(pairs) if (h.p_meets or 0.0) < confidence]
        if not short:
            break
        bump = np.array([step_m, 0.0]) if solve == "a" else np.array([0.0, step_m])
        cands = cands.copy()
        cands[short] += bump
        keep = (cands[:, 0] <= limits[0] + _TOLERANCE_M) & (cands[:, 1] <= limits[1] + _TOLERANCE_M)
        cands = cands[keep]
        pairs = verify(cands)
    pairs = [h for h in pairs if (h.p_meets or 0.0) >= confidence]
    chosen = min(pairs, key=lambda h: (round(h.sum_m, 9), round(max(h.antenna_a_m, h.antenna_b_m), 9),
                                       h.antenna_a_m)) if pairs else None
    lower: list[HeightPair] = []
    if chosen is not None:
        tries = []
        if solve in ("a", "both") and chosen.antenna_a_m >= step_m - _TOLERANCE_M:
            tries.append([chosen.antenna_a_m - step_m, chosen.antenna_b_m])
        if solve in ("b", "both") and chosen.antenna_b_m >= step_m - _TOLERANCE_M:
            tries.append([chosen.antenna_a_m, chosen.antenna_b_m - step_m])
        lower = verify(np.array(tries).reshape(-1, 2))
    crit = batch.settings
    return HeightSolution(
        solve=solve, step_m=step_m, reference_a=ref_a, reference_b=ref_b, base_a_m=base_a, base_b_m=base_b,
        max_mast_a_m=max_mast_a_m, max_mast_b_m=max_mast_b_m,
        criterion=crit.criterion.describe(crit.k, crit.k_worst) + f", with probability >= {confidence:g}",
        chosen=chosen, pairs=tuple(pairs), one_step_lower=tuple(lower),
        at_limits=verify(limits[None, :])[0], confidence=confidence,
        confidence_model=batch.confidence.model[i] if getattr(batch, "confidence", None) is not None else None,
    )


def _draw_requirements(batch: LinkBatch, i: int, draws: Any) -> tuple[np.ndarray, np.ndarray]:
    """Line heights each draw needs at the interior samples (both criterion k), (D, 2M), and t (2M,)."""
    from .units import EARTH_RADIUS_M, wavelength_m

    prof = batch.profiles
    st = batch.settings
    n = draws.surface_m.shape[1]
    d1 = prof.distance_m[i, :n]
    length = float(prof.length_m[i])
    d2 = np.maximum(length - d1, 0.0)
    freq = float(np.broadcast_to(np.asarray(batch.radio.freq_ghz, dtype=float), (len(batch),))[i])
    f1 = np.sqrt(wavelength_m(freq) * d1 * d2 / length)
    inside = slice(1, n - 1)
    parts = []
    for k, frac in ((st.k, st.criterion.min_f1_fraction), (st.k_worst, st.criterion.min_f1_fraction_worst)):
        bulge = d1 * d2 / (2.0 * EARTH_RADIUS_M * k)
        parts.append((draws.surface_m + (bulge + frac * f1)[None, :])[:, inside])
    t = (d1 / length)[inside]
    return np.concatenate(parts, axis=1), np.concatenate([t, t])
