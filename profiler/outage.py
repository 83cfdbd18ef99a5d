"""Outage of paths from their fade margin: rain and multipath per ITU-R P.530-17.

Given the flat fade margin of each path (dB, the margin left in median
conditions, gases already counted in the budget), this module estimates:

* availability from rain: the percentage of an average year that rain
  attenuation on the path exceeds the margin, by inverting ITU-R P.530-17
  section 2.4.1 (eq. 34) with R0.01 from the planner and gamma_R from
  ITU-R P.838-3.  Outside 0.001-1 % (the range of eq. 34, whose power law
  turns back below 0.001 %) the outage is a bound, never a figure;
* multipath outage, a performance figure kept apart from availability (P.530
  counts rain against availability and clear-air fading against error
  performance): the percentage of the average worst month that the multipath
  fade depth exceeds the margin (sections 2.3.1 and 2.3.2), and of the average
  year with the geoclimatic factor Delta G of section 2.3.4 when the path
  latitude is known;
* the fade margin needed for a target availability: from rain alone (eq. 34
  at p = 100 - target) and with rain plus average-year multipath held within
  the target together (vectorised bisection; common practice).

A path outside one model's range loses only that model's figures.  Which
links get an estimate at all is decided in :mod:`profiler.availability`.
Everything works on arrays of paths (one :class:`PathClimate`); a single hop
is a batch of one.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import IntEnum
from typing import Literal, overload

import numpy as np
from numpy.typing import ArrayLike

from .climate import (
    DEFAULT_DN1_N_PER_KM,
    DEFAULT_RAIN_RATE_MM_H,
    DEFAULT_TARGET_AVAILABILITY_PCT,
    DEFAULT_TERRAIN_ROUGHNESS_M,
    ClimateSettings,
    ClimateValues,
)
from .errors import InputError, ModelValidityError
from .losses.multipath import (
    check_multipath_validity,
    fade_exceedance_envelope_pct,
    shallow_fade_peak,
    geoclimatic_factor,
    multipath_validity_problem,
    occurrence_factor_too_large,
    path_inclination_mrad,
    worst_month_to_year_db,
)
from .losses.rain import (
    rain_attenuation_001_db,
    rain_exceedance_pct,
    rain_percentage_coefficients,
)

__all__ = [
    "MINUTES_PER_YEAR",
    "DEFAULT_RAIN_RATE_MM_H",
    "DEFAULT_DN1_N_PER_KM",
    "DEFAULT_TERRAIN_ROUGHNESS_M",
    "DEFAULT_TARGET_AVAILABILITY_PCT",
    "ClimateSettings",
    "PathClimate",
    "AvailabilityResult",
    "MultipathStatus",
    "MULTIPATH_ESTIMATED",
    "MULTIPATH_OUTSIDE_FREQ",
    "MULTIPATH_P0_TOO_LARGE",
    "path_elevation_deg",
    "outage_components_pct",
    "evaluate_availability",
    "required_fade_margin_db",
    "MINUTES_PER_MONTH",
]

#: Minutes in an average year of 365.25 days.
MINUTES_PER_YEAR = 365.25 * 24.0 * 60.0
#: Minutes in an average worst month (a twelfth of an average year).
MINUTES_PER_MONTH = MINUTES_PER_YEAR / 12.0

class MultipathStatus(IntEnum):
    """Multipath status of a path (stored as int8): estimated, or why not."""

    ESTIMATED = 0
    OUTSIDE_FREQ = 1  # frequency outside 15/d-45 GHz (ITU-R P.530-17 section 2.3)
    P0_TOO_LARGE = 2  # occurrence factor too large for section 2.3.2


MULTIPATH_ESTIMATED = MultipathStatus.ESTIMATED
MULTIPATH_OUTSIDE_FREQ = MultipathStatus.OUTSIDE_FREQ
MULTIPATH_P0_TOO_LARGE = MultipathStatus.P0_TOO_LARGE


@dataclass(frozen=True)
class AvailabilityResult:
    """Availability (rain), multipath outage (performance) and the margins needed, per path.

    ITU-R P.530-17 counts rain outage against availability (section 2.4.1) and
    multipath (clear-air) outage against error performance (section 2.3), so
    they are kept apart: ``availability_pct`` is 100 - rain outage of an
    average year; multipath is given for the average worst month and the
    average year.  Outside 0.001-1 % (the range of eq. 34) the rain outage is
    NaN and ``rain_range_side`` says which side: -1 below 0.001 % (availability
    above 99.999 %), +1 above 1 % (availability below 99 %).  Multipath
    figures are NaN where ``multipath_status`` is not 0.
    """

    fade_margin_db: np.ndarray
    rain_attenuation_001_db: np.ndarray
    rain_outage_pct: np.ndarray
    rain_range_side: np.ndarray
    multipath_status: np.ndarray
    multipath_occurrence_factor_pct: np.ndarray
    multipath_worst_month_pct: np.ndarray
    worst_month_to_year_db: np.ndarray
    multipath_outage_pct: np.ndarray
    availability_pct: np.ndarray
    target_availability_pct: float
    required_fade_margin_db: np.ndarray
    required_margin_rain_below_range: np.ndarray
    required_fade_margin_rain_db: np.ndarray
    meets_target: np.ndarray
    assumptions: tuple[str, ...] = field(default=())

    @property
    def multipath_applicable(self) -> np.ndarray:
        """True where the multipath figures were estimated."""
        return self.multipath_status == MULTIPATH_ESTIMATED

    @property
    def rain_outside_method_range(self) -> np.ndarray:
        """True where the rain outage lies outside 0.001-1 % (ITU-R P.530-17 eq. 34)."""
        return self.rain_range_side != 0

    @property
    def rain_outage_min_per_year(self) -> np.ndarray:
        """Rain outage, minutes per average year (NaN outside the method's range)."""
        return self.rain_outage_pct / 100.0 * MINUTES_PER_YEAR

    @property
    def multipath_outage_min_per_year(self) -> np.ndarray:
        """Multipath outage, minutes per average year."""
        return self.multipath_outage_pct / 100.0 * MINUTES_PER_YEAR

    @property
    def multipath_worst_month_min(self) -> np.ndarray:
        """Multipath outage, minutes in the average worst month."""
        return self.multipath_worst_month_pct / 100.0 * MINUTES_PER_MONTH


def path_elevation_deg(altitude_a_m: ArrayLike, altitude_b_m: ArrayLike, distance_m: ArrayLike) -> np.ndarray:
    """Magnitude of the elevation angle of the straight path between the antennas, degrees (plane geometry)."""
    rise = np.abs(np.asarray(altitude_b_m, dtype=float) - np.asarray(altitude_a_m, dtype=float))
    return np.degrees(np.arctan2(rise, np.asarray(distance_m, dtype=float)))


@dataclass(frozen=True, eq=False)
class PathClimate:
    """The paths and climate an availability estimate is made for, checked once.

    ``distance_m`` path lengths, m; ``freq_ghz``; ``altitude_a_m``,
    ``altitude_b_m`` antenna altitudes above sea level, m (arrays broadcast
    together, or scalars for one path); ``settings`` the climate;
    ``latitude_deg`` (mid-path) enables the worst-month to year conversion
    (ITU-R P.530-17 section 2.3.4); ``multipath_outside_range``: "error"
    raises for a path outside the multipath method, "exclude" leaves its
    multipath figures NaN.
    """

    distance_m: ArrayLike
    freq_ghz: ArrayLike
    altitude_a_m: ArrayLike
    altitude_b_m: ArrayLike
    settings: ClimateSettings = ClimateSettings()
    latitude_deg: ArrayLike | None = None
    multipath_outside_range: Literal["error", "exclude"] = "error"
    #: Per-path R0.01, dN1 and sa (e.g. from the ITU-R maps) in place of the settings' single values.
    values: ClimateValues | None = None

    def __post_init__(self) -> None:
        d, f, ha, hb = np.broadcast_arrays(
            np.asarray(self.distance_m, dtype=float),
            np.asarray(self.freq_ghz, dtype=float),
            np.asarray(self.altitude_a_m, dtype=float),
            np.asarray(self.altitude_b_m, dtype=float),
        )
        if self.multipath_outside_range not in ("error", "exclude"):
            raise InputError(
                f"multipath_outside_range must be 'error' or 'exclude', got {self.multipath_outside_range!r}")
        if np.any(~(d > 0.0)):
            raise InputError(f"path length must be positive metres, got {d[~(d > 0.0)].flat[0]!r}")
        if np.any(~np.isfinite(ha)) or np.any(~np.isfinite(hb)):
            raise InputError("antenna altitudes must be finite metres above sea level")
        for name, value in (("distance_m", d), ("freq_ghz", f), ("altitude_a_m", ha), ("altitude_b_m", hb)):
            object.__setattr__(self, name, value)

    @classmethod
    def of(cls, args: tuple, kwargs: dict) -> "PathClimate":
        """A PathClimate given as such, or made from the arguments of its constructor."""
        if len(args) == 1 and isinstance(args[0], PathClimate) and not kwargs:
            return args[0]
        return cls(*args, **kwargs)


@dataclass(frozen=True)
class _ClimateTerms:
    """Margin-independent quantities of each path, computed once."""

    freq_ghz: np.ndarray
    a001_db: np.ndarray
    p0_year_pct: np.ndarray  # multipath occurrence factor converted to the average year
    p0_month_pct: np.ndarray
    delta_g_db: np.ndarray
    multipath_status: np.ndarray
    peak_year: tuple[np.ndarray, np.ndarray]
    peak_month: tuple[np.ndarray, np.ndarray]

    @property
    def multipath_applicable(self) -> np.ndarray:
        return self.multipath_status == MULTIPATH_ESTIMATED


def _climate_terms(path: PathClimate) -> _ClimateTerms:
    # PathClimate.__post_init__ stored these as float arrays; asarray only narrows the type (no copy).
    d, f, ha, hb = (np.asarray(x, dtype=float)
                    for x in (path.distance_m, path.freq_ghz, path.altitude_a_m, path.altitude_b_m))
    settings = path.settings
    elevation = path_elevation_deg(ha, hb, d)
    values = path.values
    rain_rate = settings.rain_rate_mm_h if values is None else values.rain_rate_mm_h
    dn1 = settings.dn1_n_per_km if values is None else values.dn1_n_per_km
    sa = settings.terrain_roughness_m if values is None else values.terrain_roughness_m
    a001 = rain_attenuation_001_db(d, f, rain_rate, elevation, settings.tilt_deg)
    if path.multipath_outside_range == "error":
        check_multipath_validity(d, f)
    d_km = d / 1000.0
    k = geoclimatic_factor(dn1, sa)
    ep = path_inclination_mrad(ha, hb, d)
    h_low = np.minimum(ha, hb)
    # ITU-R P.530-17 eq. 7 at A = 0 (the validity check is done above, per path).
    p0 = k * d_km**3.4 * (1.0 + ep) ** -1.03 * f**0.8 * np.power(10.0, -0.00076 * h_low)
    status = np.where(multipath_validity_problem(d, f), MULTIPATH_OUTSIDE_FREQ,
                      np.where(occurrence_factor_too_large(p0), MULTIPATH_P0_TOO_LARGE, MULTIPATH_ESTIMATED))
    status = np.asarray(status, dtype=np.int8)
    if path.multipath_outside_range == "error" and np.any(status != MULTIPATH_ESTIMATED):
        raise ModelValidityError(
            f"multipath occurrence factor p0 = {p0[status != 0].flat[0]:.3g} % is too large for "
            "ITU-R P.530-17 section 2.3.2"
        )
    if path.latitude_deg is None:
        delta_g = np.zeros(d.shape)
    else:
        delta_g = np.broadcast_to(worst_month_to_year_db(path.latitude_deg, d, ep), d.shape).copy()
    ok = status == MULTIPATH_ESTIMATED
    p0 = np.where(ok, p0, np.nan)
    p0_year = p0 * np.power(10.0, -delta_g / 10.0)
    return _ClimateTerms(
        freq_ghz=f,
        a001_db=a001,
        p0_year_pct=p0_year,
        p0_month_pct=p0,
        delta_g_db=delta_g,
        multipath_status=status,
        peak_year=shallow_fade_peak(np.where(ok, p0_year, 1.0)),
        peak_month=shallow_fade_peak(np.where(ok, p0, 1.0)),
    )


def _multipath_pct(m_pos: np.ndarray, positive: np.ndarray, p0: np.ndarray, peak, ok: np.ndarray) -> np.ndarray:
    pw = fade_exceedance_envelope_pct(m_pos, np.where(ok, p0, 1.0), peak)
    return np.where(ok, np.where(positive, pw, 100.0), np.nan)


@overload
def _components(
    margin_db: np.ndarray, pc: _ClimateTerms, worst_month: Literal[True] = ...,
    rain_mode: Literal["bound", "clip"] = ...,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]: ...
@overload
def _components(
    margin_db: np.ndarray, pc: _ClimateTerms, worst_month: Literal[False],
    rain_mode: Literal["bound", "clip"] = ...,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, None]: ...
def _components(
    margin_db: np.ndarray, pc: _ClimateTerms, worst_month: bool = True, rain_mode: Literal["bound", "clip"] = "bound",
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray | None]:
    """(rain %, rain range side, multipath annual %, multipath worst-month % or None) at given margins.

    ``rain_mode="bound"``: rain NaN outside 0.001-1 %; ``"clip"``: the limit crossed.
    Multipath is NaN where it is not estimated.
    """
    m = np.broadcast_to(np.asarray(margin_db, dtype=float), pc.a001_db.shape)
    positive = m > 0.0
    m_pos = np.where(positive, m, 0.0)
    rain, side = rain_exceedance_pct(np.where(positive, m, 1.0), pc.a001_db, pc.freq_ghz, rain_mode)
    rain = np.where(positive, rain, 100.0)
    side = np.where(positive, side, 0).astype(np.int8)
    ok = pc.multipath_applicable
    mp_year = _multipath_pct(m_pos, positive, pc.p0_year_pct, pc.peak_year, ok)
    if not worst_month:
        return rain, side, mp_year, None
    return rain, side, mp_year, _multipath_pct(m_pos, positive, pc.p0_month_pct, pc.peak_month, ok)


def outage_components_pct(fade_margin_db: ArrayLike, *path, **climate) -> tuple[np.ndarray, np.ndarray]:
    """Annual outage from rain and from multipath, % each, for fade margins in dB.

    Rain: ITU-R P.530-17 section 2.4.1 inverted (P.838-3 gamma_R at the path
    elevation and polarisation), NaN outside 0.001-1 %.  Multipath: ITU-R
    P.530-17 sections 2.3.1, 2.3.2 (falling envelope) and 2.3.4 (Delta G; worst
    month taken as the year when ``latitude_deg`` is None), NaN where not
    estimated.  A margin of 0 dB or less counts as 100 %.  ``path``, ``climate``:
    a :class:`PathClimate` or the arguments that make one.
    """
    pc = _climate_terms(PathClimate.of(path, climate))
    rain, _, mp_year, _ = _components(np.asarray(fade_margin_db, dtype=float), pc, worst_month=False)
    return rain, mp_year


def _solve_margin(target_outage_pct: float, pc: _ClimateTerms, iterations: int = 64) -> np.ndarray:
    """Smallest fade margin at which rain plus average-year multipath outage is at most the target, dB.

    Vectorised bisection.  A rain outage below 0.001 % (outside ITU-R P.530-17
    eq. 34) counts as 0.001 %, its bound, so the margin found is enough
    whatever the rain share there; one above 1 % counts as 100 %.  Multipath
    not estimated counts as 0.  NaN where no margin up to 400 dB suffices.
    """

    def total(m: np.ndarray) -> np.ndarray:
        rain, side, mp, _ = _components(m, pc, worst_month=False, rain_mode="clip")
        rain = np.where(side > 0, 100.0, rain)
        return rain + np.nan_to_num(mp, nan=0.0)

    shape = pc.a001_db.shape
    lo = np.zeros(shape)
    hi = np.full(shape, 400.0)
    unreachable = total(hi) > target_outage_pct
    for _ in range(iterations):
        mid = (lo + hi) / 2.0
        ok = total(mid) <= target_outage_pct
        hi = np.where(ok, mid, hi)
        lo = np.where(ok, lo, mid)
    return np.where(unreachable, np.nan, hi)


def required_fade_margin_db(*path, **climate) -> np.ndarray:
    """Fade margin at which rain plus average-year multipath outage stays within 100 - target, dB.

    Both mechanisms held within the target together (common practice; ITU-R
    P.530-17 sections 2.3 and 2.4.1 give each term).  See :func:`_solve_margin`
    for the rain bound; NaN where no margin up to 400 dB reaches the target.
    ``path``, ``climate``: a :class:`PathClimate` or the arguments that make one.
    """
    path_climate = PathClimate.of(path, climate)
    return _solve_margin(100.0 - path_climate.settings.target_availability_pct, _climate_terms(path_climate))


def _rain_margin_for_pct(pc: _ClimateTerms, p_pct: float) -> np.ndarray:
    """Rain attenuation exceeded for p % of an average year, A_p, dB (ITU-R P.530-17 eq. 34, 0.001 <= p <= 1)."""
    _, c1, c2, c3 = rain_percentage_coefficients(pc.freq_ghz)
    x = np.log10(p_pct)
    return pc.a001_db * c1 * np.power(10.0, -(c2 + c3 * x) * x)


def _assumptions(settings: ClimateSettings, latitude_given: bool, values: ClimateValues | None = None,
                 i: int = 0) -> tuple[str, ...]:
    """The summary's assumptions; with ``values``, those of path ``i`` (its values and their origins)."""
    if values is None:
        rain_text = (f"R0.01 = {settings.rain_rate_mm_h:g} mm/h"
                     + (" (default: give the site's value from ITU-R P.837)"
                        if "rain_rate_mm_h" in settings.defaults_used() else ""))
        dn1_text = (f"dN1 = {settings.dn1_n_per_km:g} N-units/km"
                    + (" (default)" if "dn1_n_per_km" in settings.defaults_used() else ""))
        sa_text = (f"sa = {settings.terrain_roughness_m:g} m"
                   + (" (default)" if "terrain_roughness_m" in settings.defaults_used() else ""))
    else:
        rain_text = f"R0.01 = {float(values.rain_rate_mm_h[i]):.4g} mm/h ({values.rain_origin})"
        dn1_text = f"dN1 = {float(values.dn1_n_per_km[i]):.4g} N-units/km ({values.dn1_origin})"
        sa_text = f"sa = {float(values.terrain_roughness_m[i]):.4g} m ({values.sa_origin(i)})"
    notes = [
        "rain: ITU-R P.838-3 specific attenuation, ITU-R P.530-17 section 2.4.1 path statistics, " + rain_text,
        f"polarisation {settings.polarisation} (tilt {settings.tilt_deg:g} deg)"
        + (" (default)" if "polarisation" in settings.defaults_used() else ""),
        f"multipath: ITU-R P.530-17 sections 2.3.1-2.3.2 with {dn1_text}, {sa_text}",
        "availability counts rain outage only; multipath (clear-air) outage counts against error "
        "performance (ITU-R P.530-17 sections 2.3 and 2.4) and is reported apart",
        "margin needed: rain outage plus average-year multipath outage within 100 % - target "
        "(common practice); a year has " f"{MINUTES_PER_YEAR:.0f} minutes",
    ]
    if latitude_given:
        notes.append("multipath converted from the average worst month to the average year (ITU-R P.530-17 section 2.3.4)")
    else:
        notes.append("multipath outage of the average worst month used for the whole year (no latitude given; pessimistic)")
    return tuple(notes)


def evaluate_availability(fade_margin_db: ArrayLike, *path, solve_required: bool = True,
                          **climate) -> AvailabilityResult:
    """Availability from rain, multipath outage and the margins needed, for many paths.

    ``fade_margin_db`` is the flat fade margin at median conditions;
    ``path``, ``climate``: a :class:`PathClimate` or the arguments that make
    one (distance_m, freq_ghz, altitude_a_m, altitude_b_m, settings,
    latitude_deg, multipath_outside_range).  With
    ``multipath_outside_range="exclude"`` paths outside the multipath method
    (15/d-45 GHz, or p0 too large for section 2.3.2) get NaN multipath
    figures instead of an error.
    ``solve_required=False`` leaves ``required_fade_margin_db`` NaN (callers
    that do not report it, such as screening, skip its iterative solution).
    Sources: ITU-R P.838-3; ITU-R P.530-17 sections 2.3 and 2.4.1.
    """
    margin = np.asarray(fade_margin_db, dtype=float)
    if np.any(np.isnan(margin)):
        raise InputError("fade margin is NaN; compute the link budget first")
    path_climate = PathClimate.of(path, climate)
    settings = path_climate.settings
    pc = _climate_terms(path_climate)
    margin = np.broadcast_to(margin, pc.a001_db.shape)
    rain, side, mp_year, mp_month = _components(margin, pc)
    target = settings.target_availability_pct
    outage_target = 100.0 - target
    if solve_required:
        required = _solve_margin(outage_target, pc)
        _, need_side = rain_exceedance_pct(np.where(np.isfinite(required), required, 1.0), pc.a001_db, pc.freq_ghz)
        need_below = np.isfinite(required) & (need_side < 0)
    else:
        required = np.full(pc.a001_db.shape, np.nan)
        need_below = np.zeros(pc.a001_db.shape, dtype=bool)
    availability = 100.0 - rain
    # Below the range the availability is above 99.999 % >= any accepted target; above it, below 99 %.
    meets = np.where(side < 0, True, np.where(side > 0, False, availability >= target * (1 - 1e-15)))
    return AvailabilityResult(
        fade_margin_db=margin.copy(),
        rain_attenuation_001_db=pc.a001_db,
        rain_outage_pct=rain,
        rain_range_side=side,
        multipath_status=pc.multipath_status,
        multipath_occurrence_factor_pct=pc.p0_month_pct,
        multipath_worst_month_pct=mp_month,
        worst_month_to_year_db=pc.delta_g_db,
        multipath_outage_pct=mp_year,
        availability_pct=availability,
        target_availability_pct=target,
        required_fade_margin_db=required,
        required_margin_rain_below_range=need_below,
        required_fade_margin_rain_db=_rain_margin_for_pct(pc, outage_target),
        meets_target=np.asarray(meets, dtype=bool),
        assumptions=_assumptions(settings, path_climate.latitude_deg is not None),
    )
