"""Availability of each link of a batch: which links can be estimated, the estimate, and its notes.

Links whose path fails the clearance criterion or whose budget does not
close get no estimate (the fading methods of ITU-R P.530-17 assume a clear
line-of-sight path), nor those outside 1-100 GHz or without a profile; each
says why.  The estimate itself (rain and multipath outage per ITU-R P.530-17
and P.838-3, the margins needed) is :mod:`profiler.outage`, re-exported here
with the climate settings (:mod:`profiler.climate`) so the old import paths
keep working.  Nothing here raises for one link.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from enum import IntEnum

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
from .errors import ModelValidityWarning
from .losses.multipath import geoclimatic_factor, path_inclination_mrad
from .losses.rain import P530_RAIN_MAX_PCT, P530_RAIN_MIN_PCT, P530_RAIN_TESTED_MAX_DISTANCE_KM
from .outage import (
    MINUTES_PER_MONTH,
    MINUTES_PER_YEAR,
    MULTIPATH_ESTIMATED,
    MULTIPATH_OUTSIDE_FREQ,
    MULTIPATH_P0_TOO_LARGE,
    AvailabilityResult,
    MultipathStatus,
    _assumptions,
    PathClimate,
    evaluate_availability,
    outage_components_pct,
    path_elevation_deg,
    required_fade_margin_db,
)

__all__ = [
    "MINUTES_PER_YEAR",
    "MINUTES_PER_MONTH",
    "DEFAULT_RAIN_RATE_MM_H",
    "DEFAULT_DN1_N_PER_KM",
    "DEFAULT_TERRAIN_ROUGHNESS_M",
    "DEFAULT_TARGET_AVAILABILITY_PCT",
    "ClimateSettings",
    "PathClimate",
    "AvailabilityResult",
    "AvailabilityStatus",
    "MultipathStatus",
    "MULTIPATH_ESTIMATED",
    "MULTIPATH_OUTSIDE_FREQ",
    "MULTIPATH_P0_TOO_LARGE",
    "path_elevation_deg",
    "outage_components_pct",
    "evaluate_availability",
    "required_fade_margin_db",
    "AVAILABILITY_MIN_FREQ_GHZ",
    "AVAILABILITY_MAX_FREQ_GHZ",
    "LinkAvailability",
    "availability_for_links",
    "availability_note",
]


#: Frequency range over which terrahop estimates availability, GHz (ITU-R P.838-3 from
#: 1 GHz; the ITU-R P.530-17 rain method up to 100 GHz).
AVAILABILITY_MIN_FREQ_GHZ = 1.0
AVAILABILITY_MAX_FREQ_GHZ = 100.0


class AvailabilityStatus(IntEnum):
    """Why a link's availability was not estimated (ESTIMATED: it was).  Stored as int8 in screening."""

    ESTIMATED = 0
    NO_PROFILE = 1
    FREQ_OUTSIDE = 2
    NOT_CLEAR = 3
    DOES_NOT_CLOSE = 4
    NOT_CLEAR_NOT_CLOSING = 5
    NO_GEOMETRY = 6


AVAILABILITY_ESTIMATED = AvailabilityStatus.ESTIMATED
AVAILABILITY_NO_PROFILE = AvailabilityStatus.NO_PROFILE
AVAILABILITY_FREQ_OUTSIDE = AvailabilityStatus.FREQ_OUTSIDE
AVAILABILITY_NOT_CLEAR = AvailabilityStatus.NOT_CLEAR
AVAILABILITY_DOES_NOT_CLOSE = AvailabilityStatus.DOES_NOT_CLOSE
AVAILABILITY_NOT_CLEAR_NOT_CLOSING = AvailabilityStatus.NOT_CLEAR_NOT_CLOSING
AVAILABILITY_NO_GEOMETRY = AvailabilityStatus.NO_GEOMETRY

#: Reason sentence of each status (figures are added per link where known).  Keyed by the
#: enum members, looked up with the plain int codes of the result arrays (IntEnum hashes as int).
AVAILABILITY_REASONS: dict[int, str] = {
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
#: Multipath status: why its figures are missing (keyed like AVAILABILITY_REASONS).
MULTIPATH_REASONS: dict[int, str] = {
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
    #: Per-link R0.01, dN1 and sa with their origins (``--climate itu``); None: the settings' values.
    values: ClimateValues | None = None

    def climate_inputs(self, i: int) -> dict:
        """``inputs.climate`` of link i: the settings, with link i's own values and origins when there are."""
        if self.values is None:
            return self.settings.as_dict()
        return self.values.inputs(self.settings, i)

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
        v = self.values
        rain_rate = s.rain_rate_mm_h if v is None else float(v.rain_rate_mm_h[i])
        dn1 = s.dn1_n_per_km if v is None else float(v.dn1_n_per_km[i])
        sa = s.terrain_roughness_m if v is None else float(v.terrain_roughness_m[i])
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
                "rain_rate_mm_h": rain_rate,
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
                "dn1_n_per_km": dn1,
                "terrain_roughness_m": sa,
                "geoclimatic_factor": float(geoclimatic_factor(dn1, sa)),
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
    values: ClimateValues | None = None,
) -> LinkAvailability:
    """Availability of many links at once, skipping (with a reason) those it cannot estimate.

    Not estimated, with a reason: links marked not ``valid`` (no profile),
    outside 1-100 GHz (ITU-R P.838-3, P.530-17 rain), failing the clearance
    criterion (``meets_criterion`` False: P.530-17's fading methods assume a
    clear line-of-sight path) or with a fade margin below 0 dB (the link does
    not close).  Multipath is left out (and said so) where its method does not
    apply; paths over 60 km carry a note.  Nothing here raises for one link.
    ``solve_required=False``: see :func:`evaluate_availability`.
    ``values``: per-link R0.01, dN1 and sa (:func:`profiler.climate_maps.climate_for_paths`).
    """
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
    status = _link_status(d, f, ha, hb, lat, ok, margin, clear)
    usable = status == AVAILABILITY_ESTIMATED
    rows = np.full(n, -1, dtype=int)
    idx = np.flatnonzero(usable)
    rows[idx] = np.arange(idx.size)
    result = None
    notes: list[tuple[str, ...]] = [()] * n
    if idx.size:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ModelValidityWarning)  # recorded per link below
            result = evaluate_availability(
                margin[idx], d[idx], f[idx], ha[idx], hb[idx], settings,
                latitude_deg=lat[idx], multipath_outside_range="exclude", solve_required=solve_required,
                values=None if values is None else values.take(idx),
            )
        notes = _link_notes(settings, result, rows, d, f, values)
    return LinkAvailability(
        settings=settings,
        result=result,
        rows=rows,
        reasons=_reasons(status, f, margin),
        notes=tuple(notes),
        inclination_mrad=path_inclination_mrad(ha, hb, np.where(d > 0, d, np.nan)),
        latitude_deg=lat,
        distance_m=d,
        status=status,
        values=values,
    )


def _link_status(d: np.ndarray, f: np.ndarray, ha: np.ndarray, hb: np.ndarray, lat: np.ndarray,
                 ok: np.ndarray, margin: np.ndarray, clear: np.ndarray) -> np.ndarray:
    """:class:`AvailabilityStatus` of each link, int8; the later rules win (no profile first of all)."""
    in_band = (f >= AVAILABILITY_MIN_FREQ_GHZ) & (f <= AVAILABILITY_MAX_FREQ_GHZ)
    geometry = np.isfinite(margin) & (d > 0) & np.isfinite(ha) & np.isfinite(hb) & (np.abs(lat) <= 90.0)
    closes = margin >= 0.0
    status = np.full(d.shape[0], AVAILABILITY_ESTIMATED, dtype=np.int8)
    status[~clear & ~closes] = AVAILABILITY_NOT_CLEAR_NOT_CLOSING
    status[~clear & closes] = AVAILABILITY_NOT_CLEAR
    status[clear & ~closes] = AVAILABILITY_DOES_NOT_CLOSE
    status[~geometry] = AVAILABILITY_NO_GEOMETRY
    status[~in_band] = AVAILABILITY_FREQ_OUTSIDE
    status[~ok] = AVAILABILITY_NO_PROFILE
    return status


def _reasons(status: np.ndarray, f: np.ndarray, margin: np.ndarray) -> tuple[str | None, ...]:
    """Why each link was not estimated, with its figures (None where it was)."""
    reasons: list[str | None] = [None] * status.shape[0]
    for i in np.flatnonzero(status != AVAILABILITY_ESTIMATED):  # sentences for the few links left out only
        code = AvailabilityStatus(int(status[i]))
        if code == AVAILABILITY_FREQ_OUTSIDE:
            text = f"{f[i]:g} GHz is outside 1-100 GHz, the range of the ITU-R P.838-3 / P.530-17 rain method"
        elif code == AVAILABILITY_DOES_NOT_CLOSE:
            text = f"the link does not close (fade margin {margin[i]:+.1f} dB at the design k)"
        elif code == AVAILABILITY_NOT_CLEAR_NOT_CLOSING:
            text = (f"the link does not close (fade margin {margin[i]:+.1f} dB at the design k) "
                    "and the path fails the clearance criterion")
        else:
            text = AVAILABILITY_REASONS[code]
        reasons[i] = text
    return tuple(reasons)


def _link_notes(settings: ClimateSettings, result: AvailabilityResult, rows: np.ndarray,
                d: np.ndarray, f: np.ndarray, values: ClimateValues | None = None) -> list[tuple[str, ...]]:
    """Assumptions of each estimated link: those all share, then its own (empty where not estimated)."""
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
    if values is not None:  # each link its own climate values and their origins
        for i in np.flatnonzero(rows >= 0):
            notes[i] = shared[:2] + _assumptions(settings, True, values, int(i))
        shared_of = {int(i): notes[i] for i in np.flatnonzero(rows >= 0)}
    else:
        shared_of = {}
    idx = np.flatnonzero(rows >= 0)
    long_path = d > P530_RAIN_TESTED_MAX_DISTANCE_KM * 1000.0
    special = np.zeros(rows.shape[0], dtype=bool)
    special[idx] = (~result.multipath_applicable | result.rain_outside_method_range
                    | result.required_margin_rain_below_range | long_path[idx])
    for i in np.flatnonzero(special):  # links with notes of their own
        notes[i] = (shared_of.get(int(i), shared)
                    + _own_notes(result, int(rows[i]), float(d[i]), float(f[i]), bool(long_path[i])))
    return notes


def _own_notes(result: AvailabilityResult, j: int, d: float, f: float, long_path: bool) -> tuple[str, ...]:
    """Notes particular to the link at row ``j`` of ``result`` (path length ``d`` m, ``f`` GHz)."""
    extra = []
    mp = int(result.multipath_status[j])
    if mp == MULTIPATH_OUTSIDE_FREQ:
        extra.append(
            f"multipath not estimated: {f:g} GHz on a {d / 1000:.2f} km path lies outside "
            "15/d-45 GHz, the range of ITU-R P.530-17 section 2.3"
        )
    elif mp != MULTIPATH_ESTIMATED:
        extra.append("multipath not estimated: " + MULTIPATH_REASONS[mp])
    if result.rain_outside_method_range[j]:
        extra.append(RAIN_BELOW_RANGE_TEXT if result.rain_range_side[j] < 0 else RAIN_ABOVE_RANGE_TEXT)
    if result.required_margin_rain_below_range[j]:
        extra.append("at the margin needed the rain outage lies below 0.001 %, outside ITU-R P.530-17 "
                     "section 2.4.1; it is counted there as 0.001 %")
    if long_path:
        extra.append(
            f"path longer than {P530_RAIN_TESTED_MAX_DISTANCE_KM:g} km, the length to which the ITU-R P.530 rain "
            "method was tested (from memory); rain outage less certain, and its effective path length is "
            "held from falling with distance (see README)"
        )
    return tuple(extra)
