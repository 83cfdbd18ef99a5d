"""Availability of a hop from its fade margin: rain and multipath outage per ITU-R P.530-17.

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

Links whose path fails the clearance criterion or whose budget does not
close get no estimate (the fading methods assume a clear line-of-sight path),
and a path outside one model's range loses only that model's figures.
Everything works on arrays of paths; a single hop is a batch of one.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field, fields
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError, ModelValidityError
from .losses.atmosphere import DEFAULT_PRESSURE_HPA, DEFAULT_TEMPERATURE_C, DEFAULT_WATER_VAPOUR_G_M3
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
    P530_RAIN_MAX_PCT,
    P530_RAIN_MIN_PCT,
    polarisation_tilt_deg,
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
    "AvailabilityResult",
    "path_elevation_deg",
    "outage_components_pct",
    "evaluate_availability",
    "required_fade_margin_db",
    "AVAILABILITY_MIN_FREQ_GHZ",
    "AVAILABILITY_MAX_FREQ_GHZ",
    "LinkAvailability",
    "availability_for_links",
    "availability_note",
    "MINUTES_PER_MONTH",
]

#: Minutes in an average year of 365.25 days.
MINUTES_PER_YEAR = 365.25 * 24.0 * 60.0
#: Default R0.01, mm/h: rain climatic zone K of ITU-R P.837-1 (superseded), typical of
#: temperate continental climates (from memory).  Give the site's value from ITU-R P.837.
DEFAULT_RAIN_RATE_MM_H = 42.0
#: Default dN1, N-units/km: a temperate inland value (common practice); take the
#: site's value from the ITU-R P.453 maps.
DEFAULT_DN1_N_PER_KM = -200.0
#: Default sa, m: moderately hilly terrain (common practice); compute it from the
#: terrain within 110 km x 110 km around the path (ITU-R P.530-17 section 2.3.1).
DEFAULT_TERRAIN_ROUGHNESS_M = 40.0
#: Default target availability, % of an average year (common practice).
DEFAULT_TARGET_AVAILABILITY_PCT = 99.99

_POLARISATIONS = ("horizontal", "vertical", "circular")


@dataclass(frozen=True)
class ClimateSettings:
    """Climate and availability inputs of a hop, with stated defaults.

    rain_rate_mm_h: R0.01, rain rate exceeded 0.01 % of an average year (1-min).
    polarisation: 'horizontal', 'vertical', 'circular' or a tilt angle in degrees (kept as text).
    target_availability_pct: availability aimed at, 99-99.999 % (P.530 rain range).
    dn1_n_per_km: refractivity gradient dN1 (ITU-R P.453).
    terrain_roughness_m: sa, terrain height standard deviation (ITU-R P.530).
    pressure_hpa, temperature_c, water_vapour_g_m3: atmosphere for ITU-R P.676.
    """

    rain_rate_mm_h: float = DEFAULT_RAIN_RATE_MM_H
    polarisation: str = "horizontal"
    target_availability_pct: float = DEFAULT_TARGET_AVAILABILITY_PCT
    dn1_n_per_km: float = DEFAULT_DN1_N_PER_KM
    terrain_roughness_m: float = DEFAULT_TERRAIN_ROUGHNESS_M
    pressure_hpa: float = DEFAULT_PRESSURE_HPA
    temperature_c: float = DEFAULT_TEMPERATURE_C
    water_vapour_g_m3: float = DEFAULT_WATER_VAPOUR_G_M3
    #: Names of the settings the planner gave; None: any value equal to its default counts as a default.
    given: frozenset[str] | None = field(default=None, compare=False)

    def __post_init__(self) -> None:
        numeric = {f.name: getattr(self, f.name) for f in fields(self) if f.name not in ("polarisation", "given")}
        for name, value in numeric.items():
            try:
                number = float(value)
            except (TypeError, ValueError):
                raise InputError(f"{name} must be a number, got {value!r}") from None
            if not np.isfinite(number):
                raise InputError(f"{name} must be a finite number, got {value!r}")
            object.__setattr__(self, name, number)
        tau = polarisation_tilt_deg(self.polarisation)  # raises InputError if unknown
        if isinstance(self.polarisation, str) and self.polarisation.strip().lower() in _POLARISATIONS:
            object.__setattr__(self, "polarisation", self.polarisation.strip().lower())
        else:
            object.__setattr__(self, "polarisation", f"{tau:g}")
        if self.rain_rate_mm_h < 0.0:
            raise InputError(f"rain_rate_mm_h must be zero or positive, got {self.rain_rate_mm_h:g}")
        if self.rain_rate_mm_h > 300.0:
            raise InputError(
                f"rain_rate_mm_h {self.rain_rate_mm_h:g} is above 300 mm/h; R0.01 on earth lies below about 250 mm/h"
            )
        if not 0.0 < self.target_availability_pct < 100.0:
            raise InputError(
                f"target_availability_pct must lie between 0 and 100 %, got {self.target_availability_pct:g}"
            )
        outage = 100.0 - self.target_availability_pct
        if not (P530_RAIN_MIN_PCT * (1 - 1e-9) <= outage <= P530_RAIN_MAX_PCT * (1 + 1e-9)):
            raise ModelValidityError(
                f"target availability {self.target_availability_pct:g} % means an outage of {outage:.6g} %, "
                "outside 0.001-1 %, the range of the ITU-R P.530-17 rain method (targets 99-99.999 %)"
            )
        if self.terrain_roughness_m < 0.0:
            raise InputError(f"terrain_roughness_m must be zero or positive, got {self.terrain_roughness_m:g}")
        if not -2000.0 <= self.dn1_n_per_km <= 200.0:
            raise InputError(
                f"dn1_n_per_km {self.dn1_n_per_km:g} is implausible; ITU-R P.453 maps give about -850 to 0 N-units/km"
            )
        if self.pressure_hpa <= 0.0:
            raise InputError(f"pressure_hpa must be positive, got {self.pressure_hpa:g}")
        if self.temperature_c <= -273.15:
            raise InputError(f"temperature_c must be above -273.15 degC, got {self.temperature_c:g}")
        if self.water_vapour_g_m3 < 0.0:
            raise InputError(f"water_vapour_g_m3 must be zero or positive, got {self.water_vapour_g_m3:g}")

    @property
    def tilt_deg(self) -> float:
        """Polarisation tilt tau, degrees (ITU-R P.838-3)."""
        return polarisation_tilt_deg(self.polarisation)

    def as_dict(self) -> dict[str, float | str]:
        """Plain mapping of every setting (for JSON ``inputs``)."""
        out = asdict(self)
        out.pop("given")
        return out

    def defaults_used(self) -> tuple[str, ...]:
        """Names of the settings left at their defaults (not given by the planner)."""
        names = [f.name for f in fields(self) if f.name != "given"]
        if self.given is not None:
            return tuple(n for n in names if n not in self.given)
        return tuple(n for n in names if getattr(self, n) == getattr(ClimateSettings, n))


#: Minutes in an average worst month (a twelfth of an average year).
MINUTES_PER_MONTH = MINUTES_PER_YEAR / 12.0

#: Multipath status of a path: estimated, frequency outside 15/d-45 GHz, p0 too large.
MULTIPATH_ESTIMATED, MULTIPATH_OUTSIDE_FREQ, MULTIPATH_P0_TOO_LARGE = 0, 1, 2


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


@dataclass(frozen=True)
class _PathClimate:
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


def _path_climate(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    settings: ClimateSettings,
    latitude_deg: ArrayLike | None,
    multipath_outside_range: Literal["error", "exclude"],
) -> _PathClimate:
    d, f, ha, hb = np.broadcast_arrays(
        np.asarray(distance_m, dtype=float),
        np.asarray(freq_ghz, dtype=float),
        np.asarray(altitude_a_m, dtype=float),
        np.asarray(altitude_b_m, dtype=float),
    )
    if multipath_outside_range not in ("error", "exclude"):
        raise InputError(f"multipath_outside_range must be 'error' or 'exclude', got {multipath_outside_range!r}")
    if np.any(~(d > 0.0)):
        raise InputError(f"path length must be positive metres, got {d[~(d > 0.0)].flat[0]!r}")
    if np.any(~np.isfinite(ha)) or np.any(~np.isfinite(hb)):
        raise InputError("antenna altitudes must be finite metres above sea level")
    elevation = path_elevation_deg(ha, hb, d)
    a001 = rain_attenuation_001_db(d, f, settings.rain_rate_mm_h, elevation, settings.tilt_deg)
    if multipath_outside_range == "error":
        check_multipath_validity(d, f)
    d_km = d / 1000.0
    k = geoclimatic_factor(settings.dn1_n_per_km, settings.terrain_roughness_m)
    ep = path_inclination_mrad(ha, hb, d)
    h_low = np.minimum(ha, hb)
    # ITU-R P.530-17 eq. 7 at A = 0 (the validity check is done above, per path).
    p0 = k * d_km**3.4 * (1.0 + ep) ** -1.03 * f**0.8 * np.power(10.0, -0.00076 * h_low)
    status = np.where(multipath_validity_problem(d, f), MULTIPATH_OUTSIDE_FREQ,
                      np.where(occurrence_factor_too_large(p0), MULTIPATH_P0_TOO_LARGE, MULTIPATH_ESTIMATED))
    status = np.asarray(status, dtype=np.int8)
    if multipath_outside_range == "error" and np.any(status != MULTIPATH_ESTIMATED):
        raise ModelValidityError(
            f"multipath occurrence factor p0 = {p0[status != 0].flat[0]:.3g} % is too large for "
            "ITU-R P.530-17 section 2.3.2"
        )
    if latitude_deg is None:
        delta_g = np.zeros(d.shape)
    else:
        delta_g = np.broadcast_to(worst_month_to_year_db(latitude_deg, d, ep), d.shape).copy()
    ok = status == MULTIPATH_ESTIMATED
    p0 = np.where(ok, p0, np.nan)
    p0_year = p0 * np.power(10.0, -delta_g / 10.0)
    return _PathClimate(
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


def _components(
    margin_db: np.ndarray, pc: _PathClimate, worst_month: bool = True, rain_mode: str = "bound",
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


def outage_components_pct(
    fade_margin_db: ArrayLike,
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    settings: ClimateSettings = ClimateSettings(),
    latitude_deg: ArrayLike | None = None,
    multipath_outside_range: Literal["error", "exclude"] = "error",
) -> tuple[np.ndarray, np.ndarray]:
    """Annual outage from rain and from multipath, % each, for fade margins in dB.

    Rain: ITU-R P.530-17 section 2.4.1 inverted (P.838-3 gamma_R at the path
    elevation and polarisation), NaN outside 0.001-1 %.  Multipath: ITU-R
    P.530-17 sections 2.3.1, 2.3.2 (falling envelope) and 2.3.4 (Delta G; worst
    month taken as the year when ``latitude_deg`` is None), NaN where not
    estimated.  A margin of 0 dB or less counts as 100 %.
    """
    pc = _path_climate(distance_m, freq_ghz, altitude_a_m, altitude_b_m, settings, latitude_deg, multipath_outside_range)
    rain, _, mp_year, _ = _components(np.asarray(fade_margin_db, dtype=float), pc, worst_month=False)
    return rain, mp_year


def _solve_margin(target_outage_pct: float, pc: _PathClimate, iterations: int = 64) -> np.ndarray:
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


def required_fade_margin_db(
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    settings: ClimateSettings = ClimateSettings(),
    latitude_deg: ArrayLike | None = None,
    multipath_outside_range: Literal["error", "exclude"] = "error",
) -> np.ndarray:
    """Fade margin at which rain plus average-year multipath outage stays within 100 - target, dB.

    Both mechanisms held within the target together (common practice; ITU-R
    P.530-17 sections 2.3 and 2.4.1 give each term).  See :func:`_solve_margin`
    for the rain bound; NaN where no margin up to 400 dB reaches the target.
    """
    pc = _path_climate(distance_m, freq_ghz, altitude_a_m, altitude_b_m, settings, latitude_deg, multipath_outside_range)
    return _solve_margin(100.0 - settings.target_availability_pct, pc)


def _rain_margin_for_pct(pc: _PathClimate, p_pct: float) -> np.ndarray:
    """Rain attenuation exceeded for p % of an average year, A_p, dB (ITU-R P.530-17 eq. 34, 0.001 <= p <= 1)."""
    _, c1, c2, c3 = rain_percentage_coefficients(pc.freq_ghz)
    x = np.log10(p_pct)
    return pc.a001_db * c1 * np.power(10.0, -(c2 + c3 * x) * x)


def _assumptions(settings: ClimateSettings, latitude_given: bool) -> tuple[str, ...]:
    notes = [
        "rain: ITU-R P.838-3 specific attenuation, ITU-R P.530-17 section 2.4.1 path statistics, "
        f"R0.01 = {settings.rain_rate_mm_h:g} mm/h"
        + (" (default: give the site's value from ITU-R P.837)" if "rain_rate_mm_h" in settings.defaults_used() else ""),
        f"polarisation {settings.polarisation} (tilt {settings.tilt_deg:g} deg)"
        + (" (default)" if "polarisation" in settings.defaults_used() else ""),
        "multipath: ITU-R P.530-17 sections 2.3.1-2.3.2 with "
        f"dN1 = {settings.dn1_n_per_km:g} N-units/km"
        + (" (default)" if "dn1_n_per_km" in settings.defaults_used() else "")
        + f", sa = {settings.terrain_roughness_m:g} m"
        + (" (default)" if "terrain_roughness_m" in settings.defaults_used() else ""),
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


def evaluate_availability(
    fade_margin_db: ArrayLike,
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    settings: ClimateSettings = ClimateSettings(),
    latitude_deg: ArrayLike | None = None,
    multipath_outside_range: Literal["error", "exclude"] = "error",
    solve_required: bool = True,
) -> AvailabilityResult:
    """Availability from rain, multipath outage and the margins needed, for many paths.

    ``fade_margin_db`` is the flat fade margin at median conditions; antenna
    altitudes are above sea level (m); ``latitude_deg`` (mid-path) enables the
    worst-month to year conversion.  With ``multipath_outside_range="exclude"``
    paths outside the multipath method (15/d-45 GHz, or p0 too large for
    section 2.3.2) get NaN multipath figures instead of an error.
    ``solve_required=False`` leaves ``required_fade_margin_db`` NaN (callers
    that do not report it, such as screening, skip its iterative solution).
    Sources: ITU-R P.838-3; ITU-R P.530-17 sections 2.3 and 2.4.1.
    """
    margin = np.asarray(fade_margin_db, dtype=float)
    if np.any(np.isnan(margin)):
        raise InputError("fade margin is NaN; compute the link budget first")
    pc = _path_climate(distance_m, freq_ghz, altitude_a_m, altitude_b_m, settings, latitude_deg, multipath_outside_range)
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
        assumptions=_assumptions(settings, latitude_deg is not None),
    )


#: Frequency range over which terrahop estimates availability, GHz (ITU-R P.838-3 from
#: 1 GHz; the ITU-R P.530-17 rain method up to 100 GHz).
AVAILABILITY_MIN_FREQ_GHZ = 1.0
AVAILABILITY_MAX_FREQ_GHZ = 100.0


#: Why a link's availability was not estimated (0: it was).  Stored as int8 in screening.
AVAILABILITY_ESTIMATED = 0
AVAILABILITY_NO_PROFILE = 1
AVAILABILITY_FREQ_OUTSIDE = 2
AVAILABILITY_NOT_CLEAR = 3
AVAILABILITY_DOES_NOT_CLOSE = 4
AVAILABILITY_NOT_CLEAR_NOT_CLOSING = 5
AVAILABILITY_NO_GEOMETRY = 6

#: Reason sentence of each status (figures are added per link where known).
AVAILABILITY_REASONS = {
    AVAILABILITY_NO_PROFILE: "no profile for this path",
    AVAILABILITY_FREQ_OUTSIDE: "the frequency is outside 1-100 GHz, the range of the ITU-R P.838-3 / "
                               "P.530-17 rain method",
    AVAILABILITY_NOT_CLEAR: "the path fails the clearance criterion; the fading methods of ITU-R P.530-17 "
                            "(sections 2.3, 2.4) assume a clear line-of-sight path",
    AVAILABILITY_DOES_NOT_CLOSE: "the link does not close (fade margin below 0 dB at the design k)",
    AVAILABILITY_NOT_CLEAR_NOT_CLOSING: "the link does not close (fade margin below 0 dB at the design k) "
                                        "and the path fails the clearance criterion",
    AVAILABILITY_NO_GEOMETRY: "fade margin or path geometry not available",
}

#: Rain range side: text of the bound a planner reads (ITU-R P.530-17 eq. 34 covers 0.001-1 %).
RAIN_BELOW_RANGE_TEXT = ("rain outage below 0.001 % of the year, outside the 0.001-1 % range of "
                         "ITU-R P.530-17 section 2.4.1: availability above 99.999 %")
RAIN_ABOVE_RANGE_TEXT = ("rain outage above 1 % of the year, outside the 0.001-1 % range of "
                         "ITU-R P.530-17 section 2.4.1: availability below 99 %")
#: Multipath status: why its figures are missing.
MULTIPATH_REASONS = {
    MULTIPATH_OUTSIDE_FREQ: "the frequency lies outside 15/d-45 GHz (d in km), the range of ITU-R P.530-17 "
                            "section 2.3",
    MULTIPATH_P0_TOO_LARGE: "the occurrence factor p0 is too large for ITU-R P.530-17 section 2.3.2 "
                            "(very long path or extreme dN1)",
}


def availability_note(status: int, rain_side: int, multipath_status: int) -> str:
    """One line on what the availability figures of a link mean or why they are missing (screening)."""
    if status != AVAILABILITY_ESTIMATED:
        return "availability not estimated: " + AVAILABILITY_REASONS.get(int(status), "unknown reason")
    parts = []
    if rain_side < 0:
        parts.append(RAIN_BELOW_RANGE_TEXT)
    elif rain_side > 0:
        parts.append(RAIN_ABOVE_RANGE_TEXT)
    if multipath_status != MULTIPATH_ESTIMATED:
        parts.append("multipath not estimated: " + MULTIPATH_REASONS.get(int(multipath_status), "unknown reason"))
    return "; ".join(parts)


def _none_if_nan(value: float) -> float | None:
    value = float(value)
    return value if np.isfinite(value) else None


@dataclass(frozen=True)
class LinkAvailability:
    """Availability of each link of a batch: results for the rows that could be estimated.

    ``rows[i]`` is the index of link i in ``result`` (-1 when not estimated),
    ``status[i]`` one of the ``AVAILABILITY_*`` codes and ``reasons[i]`` says
    why not; ``notes[i]`` holds assumptions particular to link i.
    """

    settings: ClimateSettings
    result: AvailabilityResult | None
    rows: np.ndarray
    reasons: tuple[str | None, ...]
    notes: tuple[tuple[str, ...], ...]
    inclination_mrad: np.ndarray
    latitude_deg: np.ndarray
    distance_m: np.ndarray
    status: np.ndarray | None = None

    def rain_side(self) -> np.ndarray:
        """Rain range side per link (0 where not estimated)."""
        out = np.zeros(len(self.rows), dtype=np.int8)
        ok = self.rows >= 0
        if self.result is not None:
            out[ok] = self.result.rain_range_side[self.rows[ok]]
        return out

    def multipath_status(self) -> np.ndarray:
        """Multipath status per link (0 where availability is not estimated)."""
        out = np.zeros(len(self.rows), dtype=np.int8)
        ok = self.rows >= 0
        if self.result is not None:
            out[ok] = self.result.multipath_status[self.rows[ok]]
        return out

    def record(self, i: int) -> dict:
        """JSON-ready ``availability`` block of link i (keys carry their units; None where not estimated)."""
        s = self.settings
        j = int(self.rows[i])
        if j < 0 or self.result is None:
            return {"estimated": False, "reason": self.reasons[i], "target_availability_pct": s.target_availability_pct}
        r = self.result
        side = int(r.rain_range_side[j])
        mp_ok = bool(r.multipath_applicable[j])
        need = _none_if_nan(r.required_fade_margin_db[j])
        return {
            "estimated": True,
            "method": "ITU-R P.530-17 sections 2.3 (multipath) and 2.4.1 (rain), ITU-R P.838-3",
            "includes": "rain outage only (ITU-R P.530-17 counts rain against availability and multipath "
                        "against error performance; multipath is under 'multipath')",
            "fade_margin_db": float(r.fade_margin_db[j]),
            "availability_pct": _none_if_nan(r.availability_pct[j]),
            "availability_above_pct": 100.0 - P530_RAIN_MIN_PCT if side < 0 else None,
            "availability_below_pct": 100.0 - P530_RAIN_MAX_PCT if side > 0 else None,
            "target_availability_pct": s.target_availability_pct,
            "meets_target": bool(r.meets_target[j]),
            "required_fade_margin_db": need,
            "required_fade_margin_includes": "rain + multipath (average year), rain below 0.001 % counted as 0.001 %",
            "required_fade_margin_rain_below_range": bool(r.required_margin_rain_below_range[j]),
            "required_fade_margin_rain_only_db": float(r.required_fade_margin_rain_db[j]),
            "rain": {
                "rain_rate_mm_h": s.rain_rate_mm_h,
                "polarisation": s.polarisation,
                "tilt_deg": s.tilt_deg,
                "attenuation_001_db": float(r.rain_attenuation_001_db[j]),
                "outage_pct": _none_if_nan(r.rain_outage_pct[j]),
                "outage_min_per_year": _none_if_nan(r.rain_outage_min_per_year[j]),
                "outage_below_pct": P530_RAIN_MIN_PCT if side < 0 else None,
                "outage_above_pct": P530_RAIN_MAX_PCT if side > 0 else None,
                "outside_method_range": side != 0,
                "note": RAIN_BELOW_RANGE_TEXT if side < 0 else RAIN_ABOVE_RANGE_TEXT if side > 0 else None,
            },
            "multipath": {
                "estimated": mp_ok,
                "reason": None if mp_ok else MULTIPATH_REASONS.get(int(r.multipath_status[j])),
                "counts_against": "error performance (not availability)",
                "dn1_n_per_km": s.dn1_n_per_km,
                "terrain_roughness_m": s.terrain_roughness_m,
                "geoclimatic_factor": float(geoclimatic_factor(s.dn1_n_per_km, s.terrain_roughness_m)),
                "inclination_mrad": float(self.inclination_mrad[i]),
                "latitude_deg": float(self.latitude_deg[i]),
                "occurrence_factor_worst_month_pct": _none_if_nan(r.multipath_occurrence_factor_pct[j]),
                "worst_month_pct": _none_if_nan(r.multipath_worst_month_pct[j]),
                "worst_month_min": _none_if_nan(r.multipath_worst_month_min[j]),
                "average_year_pct": _none_if_nan(r.multipath_outage_pct[j]),
                "average_year_min": _none_if_nan(r.multipath_outage_min_per_year[j]),
                "worst_month_to_year_db": float(r.worst_month_to_year_db[j]),
            },
            "assumptions": [*self.notes[i]],
        }


def availability_for_links(
    fade_margin_db: ArrayLike,
    distance_m: ArrayLike,
    freq_ghz: ArrayLike,
    altitude_a_m: ArrayLike,
    altitude_b_m: ArrayLike,
    latitude_deg: ArrayLike,
    valid: ArrayLike,
    settings: ClimateSettings = ClimateSettings(),
    *,
    meets_criterion: ArrayLike | None = None,
    solve_required: bool = True,
) -> LinkAvailability:
    """Availability of many links at once, skipping (with a reason) those it cannot estimate.

    Not estimated, with a reason: links marked not ``valid`` (no profile),
    outside 1-100 GHz (ITU-R P.838-3, P.530-17 rain), failing the clearance
    criterion (``meets_criterion`` False: P.530-17's fading methods assume a
    clear line-of-sight path) or with a fade margin below 0 dB (the link does
    not close).  Multipath is left out (and said so) where its method does not
    apply; paths over 60 km carry a note.  Nothing here raises for one link.
    ``solve_required=False``: see :func:`evaluate_availability`.
    """
    import warnings

    from .errors import ModelValidityWarning
    from .losses.rain import P530_RAIN_TESTED_MAX_DISTANCE_KM

    d, f, ha, hb, lat, ok = np.broadcast_arrays(
        np.asarray(distance_m, dtype=float),
        np.asarray(freq_ghz, dtype=float),
        np.asarray(altitude_a_m, dtype=float),
        np.asarray(altitude_b_m, dtype=float),
        np.asarray(latitude_deg, dtype=float),
        np.asarray(valid, dtype=bool),
    )
    clear = np.broadcast_to(np.asarray(True if meets_criterion is None else meets_criterion, dtype=bool), d.shape)
    margin = np.broadcast_to(np.asarray(fade_margin_db, dtype=float), d.shape)
    n = d.shape[0] if d.ndim else 1
    d, f, ha, hb, lat, ok, margin, clear = (np.atleast_1d(x) for x in (d, f, ha, hb, lat, ok, margin, clear))
    in_band = (f >= AVAILABILITY_MIN_FREQ_GHZ) & (f <= AVAILABILITY_MAX_FREQ_GHZ)
    geometry = np.isfinite(margin) & (d > 0) & np.isfinite(ha) & np.isfinite(hb) & (np.abs(lat) <= 90.0)
    closes = margin >= 0.0
    status = np.full(n, AVAILABILITY_ESTIMATED, dtype=np.int8)
    status[~clear & ~closes] = AVAILABILITY_NOT_CLEAR_NOT_CLOSING
    status[~clear & closes] = AVAILABILITY_NOT_CLEAR
    status[clear & ~closes] = AVAILABILITY_DOES_NOT_CLOSE
    status[~geometry] = AVAILABILITY_NO_GEOMETRY
    status[~in_band] = AVAILABILITY_FREQ_OUTSIDE
    status[~ok] = AVAILABILITY_NO_PROFILE
    usable = status == AVAILABILITY_ESTIMATED
    reasons: list[str | None] = [None] * n
    for i in np.flatnonzero(~usable):  # sentences for the few links left out only
        code = int(status[i])
        text = AVAILABILITY_REASONS[code]
        if code == AVAILABILITY_FREQ_OUTSIDE:
            text = f"{f[i]:g} GHz is outside 1-100 GHz, the range of the ITU-R P.838-3 / P.530-17 rain method"
        elif code in (AVAILABILITY_DOES_NOT_CLOSE, AVAILABILITY_NOT_CLEAR_NOT_CLOSING):
            text = text.replace("below 0 dB", f"{margin[i]:+.1f} dB")
        reasons[i] = text
    rows = np.full(n, -1, dtype=int)
    idx = np.flatnonzero(usable)
    rows[idx] = np.arange(idx.size)
    result = None
    shared: tuple[str, ...] = ()
    if idx.size:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ModelValidityWarning)  # recorded per link below
            result = evaluate_availability(
                margin[idx], d[idx], f[idx], ha[idx], hb[idx], settings,
                latitude_deg=lat[idx], multipath_outside_range="exclude", solve_required=solve_required,
            )
        atmosphere = ("pressure_hpa", "temperature_c", "water_vapour_g_m3")
        shared = (
            "fade margin taken from the budget at the design k (median conditions, gases and any diffraction "
            "loss included; how diffraction loss varies with refraction is not part of this estimate)",
            f"gases: ITU-R P.676-12 Annex 1 at {settings.pressure_hpa:g} hPa, {settings.temperature_c:g} degC, "
            f"{settings.water_vapour_g_m3:g} g/m^3"
            + (" (defaults)" if all(a in settings.defaults_used() for a in atmosphere) else ""),
            *result.assumptions,
        )
    notes: list[tuple[str, ...]] = [shared if j >= 0 else () for j in rows.tolist()]
    special = np.zeros(n, dtype=bool)
    if result is not None:
        special[idx] = (~result.multipath_applicable | result.rain_outside_method_range
                        | result.required_margin_rain_below_range
                        | (d[idx] > P530_RAIN_TESTED_MAX_DISTANCE_KM * 1000.0))
    for i in np.flatnonzero(special):  # links with notes of their own
        j = rows[i]
        extra = []
        mp = int(result.multipath_status[j])
        if mp == MULTIPATH_OUTSIDE_FREQ:
            extra.append(
                f"multipath not estimated: {f[i]:g} GHz on a {d[i] / 1000:.2f} km path lies outside "
                "15/d-45 GHz, the range of ITU-R P.530-17 section 2.3"
            )
        elif mp != MULTIPATH_ESTIMATED:
            extra.append("multipath not estimated: " + MULTIPATH_REASONS[mp])
        if result.rain_outside_method_range[j]:
            extra.append(RAIN_BELOW_RANGE_TEXT if result.rain_range_side[j] < 0 else RAIN_ABOVE_RANGE_TEXT)
        if result.required_margin_rain_below_range[j]:
            extra.append("at the margin needed the rain outage lies below 0.001 %, outside ITU-R P.530-17 "
                         "section 2.4.1; it is counted there as 0.001 %")
        if d[i] > P530_RAIN_TESTED_MAX_DISTANCE_KM * 1000.0:
            extra.append(
                f"path longer than {P530_RAIN_TESTED_MAX_DISTANCE_KM:g} km, the length to which the ITU-R P.530 rain "
                "method was tested (from memory); rain outage less certain, and its effective path length is "
                "held from falling with distance (see README)"
            )
        notes[i] = shared + tuple(extra)
    return LinkAvailability(
        settings=settings,
        result=result,
        rows=rows,
        reasons=tuple(reasons),
        notes=tuple(notes),
        inclination_mrad=path_inclination_mrad(ha, hb, np.where(d > 0, d, np.nan)),
        latitude_deg=lat,
        distance_m=d,
        status=status,
    )
