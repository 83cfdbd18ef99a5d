"""Reflections of many links: the sweep over k, the level curve, diversity figures and the record.

Part of :mod:`profiler.reflection`: :func:`reflections_for_links` runs
:func:`~profiler.reflection.search.find_reflections` at every k of the sweep,
follows the facet nearest the design k over a dense level curve and fills a
:class:`LinkReflections` (``record(i)``, ``warning(i)``, screening ``columns()``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np
from numpy.typing import ArrayLike

from ..units import wavelength_m
from .point import reflection_point_m
from .search import FacetReflections, find_reflections, reflecting_surface
from .settings import ReflectionSettings, sweep_k_values
from .surfaces import complex_permittivity, resolve_surface, water_type_for
from .two_ray import (DIVERSITY_VALIDITY, Curve, curve_inverse_k, diversity_spacing_m, facet_curve,
                      space_diversity_improvement)

__all__ = ["LinkReflections", "reflections_for_links"]

_STAGE_REASONS = {
    0: "no point on the path where the grazing angles from both antennas are equal over the surface",
    1: "the surface where a reflected ray could land is rough by the Rayleigh criterion (diffuse, not specular)",
    2: "the ground blocks the incident or the reflected ray at every smooth reflection point",
}


@dataclass(frozen=True)
class LinkReflections:
    """Reflections of many links: the sweep over k, the level curve, diversity figures; ``record(i)`` per link."""

    k_values: tuple[float, ...]
    sweep: tuple[FacetReflections, ...]
    design_k: float
    worst_k: float
    length_m: np.ndarray
    freq_ghz: np.ndarray
    antenna_a_m: np.ndarray
    antenna_b_m: np.ndarray
    fade_margin_db: np.ndarray
    curves: tuple[Curve | None, ...]
    facet_k: np.ndarray  # k of the facet the curve follows (NaN: none)
    swing_db: np.ndarray
    deepest_null_db: np.ndarray
    deepest_null_k: np.ndarray
    highest_db: np.ndarray
    spacing_a_m: np.ndarray
    spacing_b_m: np.ndarray
    improvement: np.ndarray
    improvement_note: tuple[str | None, ...]
    smooth_point_m: np.ndarray  # (paths, k values): the cubic's point over the facet's level
    settings: ReflectionSettings
    ground: str
    polarisation: str
    valid: np.ndarray

    @property
    def design(self) -> FacetReflections:
        return self.sweep[self.k_values.index(self.design_k)]

    def found(self) -> np.ndarray:
        """True where a reflection exists at some k of the sweep."""
        return np.any([s.found for s in self.sweep], axis=0) & self.valid

    def columns(self) -> dict[str, np.ndarray]:
        """Screening columns: reflection_point_km (design k), reflection_swing_db, over_water."""
        des = self.design
        found = self.found()
        over = np.any([s.over_water & s.found for s in self.sweep], axis=0)
        return {
            "reflection_point_km": np.where(des.found, des.point_m / 1000.0, np.nan),
            "reflection_swing_db": np.where(found, self.swing_db, np.nan),
            "over_water": np.where(self.valid, over, False),
        }

    def warning(self, i: int) -> str | None:
        """The swing warning of link i when the level swings by more than the fade margin, else None."""
        if not self.found()[i] or not self.swing_db[i] > self.fade_margin_db[i]:
            return None
        where = self._where(i)
        spacing = self.spacing_b_m[i]
        fix = (f"; space diversity needs about {spacing:.1f} m between the antennas at site b "
               f"(or move the reflection onto rough or blocked ground)") if np.isfinite(spacing) else ""
        return (f"ground reflection{where}: the received level swings {self.swing_db[i]:.1f} dB as k varies "
                f"from {self.settings.k_min:g} to infinity (deepest null {self.deepest_null_db[i]:.1f} dB at "
                f"k={_k_text(self.deepest_null_k[i])}), more than the fade margin of "
                f"{self.fade_margin_db[i]:.1f} dB{fix}")

    def _where(self, i: int) -> str:
        k = self.facet_k[i]
        if not np.isfinite(k) and not np.isinf(k):
            return ""
        s = self.sweep[self.k_values.index(float(k))]
        surface = "water" if s.over_water[i] else "flat ground"
        return f" from {surface} {s.point_m[i] / 1000.0:.2f} km from site a (k={_k_text(k)})"

    def record(self, i: int) -> dict:
        """The JSON ``reflection`` block of link i."""
        inputs = {
            "k_min": self.settings.k_min, "k_max": self.settings.k_max, "k_values": [_k_json(k) for k in self.k_values],
            "ground": self.ground, "water_type": water_type_for(self.ground),
            "water_file": self.settings.water_file, "sea_level_water": self.settings.sea_level_water,
            "polarisation": self.polarisation,
        }
        if not self.valid[i]:
            return {"found": False, "reason": "path not profiled", "inputs": inputs}
        if not self.found()[i]:
            stage = int(max(s.stage[i] for s in self.sweep))
            return {"found": False, "reason": _STAGE_REASONS[min(stage, 2)] + " (at every k of the sweep)",
                    "inputs": inputs}
        des = self.design
        sweep = [self._at_k(j, i) for j in range(len(self.k_values))]
        curve = self.curves[i]
        out: dict[str, Any] = {
            "found": True,
            "reason": None,
            "at_design_k": sweep[self.k_values.index(self.design_k)] if des.found[i] else None,
            "at_worst_k": sweep[self.k_values.index(self.worst_k)],
            "points_at_design_k": self._points(i),
            "sweep": sweep,
            "curve_k": _k_json(self.facet_k[i]),
            "swing_db": _num(self.swing_db[i]),
            "deepest_null_db": _num(self.deepest_null_db[i]),
            "deepest_null_k": _k_json(self.deepest_null_k[i]),
            "highest_level_db": _num(self.highest_db[i]),
            "fade_margin_db": _num(self.fade_margin_db[i]),
            "swing_exceeds_fade_margin": bool(self.swing_db[i] > self.fade_margin_db[i]),
            "diversity": {
                "spacing_a_m": _num(self.spacing_a_m[i]),
                "spacing_b_m": _num(self.spacing_b_m[i]),
                "improvement_factor": _num(self.improvement[i]),
                "improvement_note": self.improvement_note[i],
                "sources": "spacing lambda d / (4 h'), two-ray geometry (common practice); improvement "
                           "ITU-R P.530-17 s. 6.2.1 (from memory)",
            },
            "curve": None if curve is None else {
                "inverse_k": [round(float(u), 6) for u in curve.inverse_k],
                "level_change_db": [round(float(v), 3) for v in curve.level_db],
            },
            "inputs": inputs,
        }
        return out

    def _at_k(self, j: int, i: int) -> dict:
        s, k = self.sweep[j], self.k_values[j]
        smooth = self.smooth_point_m[i, j]
        base = {"k": _k_json(k), "smooth_earth_point_km": _num(smooth / 1000.0)}
        if not s.found[i]:
            return {**base, "found": False}
        g = s.coefficient[i]
        lam = float(wavelength_m(self.freq_ghz[i]))
        phase = np.angle(g * np.exp(-2j * np.pi * s.path_difference_m[i] / lam), deg=True)
        return {
            **base, "found": True,
            "point_km": float(s.point_m[i]) / 1000.0,
            "first_fresnel_zone_km": [float(s.start_m[i]) / 1000.0, float(s.end_m[i]) / 1000.0],
            "surface_m": float(s.plane_m[i]),
            "surface_slope": float(s.slope[i]),
            "over_water": bool(s.over_water[i]),
            "grazing_angle_deg": math.degrees(float(s.grazing_rad[i])),
            "roughness_rms_m": float(s.roughness_m[i]),
            "fresnel_coefficient_magnitude": float(abs(s.fresnel[i])),
            "fresnel_coefficient_phase_deg": float(np.angle(s.fresnel[i], deg=True)),
            "divergence_factor": float(s.divergence[i]),
            "roughness_factor": float(s.roughness[i]),
            "reflection_coefficient_magnitude": float(abs(g)),
            "path_difference_m": float(s.path_difference_m[i]),
            "path_difference_wavelengths": float(s.path_difference_m[i]) / lam,
            "phase_deg": float(phase),
            "level_change_db": float(s.level_db[i]),
        }

    def _points(self, i: int) -> list[dict]:
        """Every separate reflection point at the design k (the strongest first), km from site a."""
        rows = sorted((c for c in self.design.candidates if c[0] == i), key=lambda c: -c[2])
        kept: list[tuple] = []
        for c in rows:
            if all(not (k[4] <= c[1] <= k[5]) for k in kept):
                kept.append(c)
        return [{"point_km": c[1] / 1000.0, "reflection_coefficient_magnitude": c[2], "over_water": bool(c[3]),
                 "first_fresnel_zone_km": [c[4] / 1000.0, c[5] / 1000.0]} for c in kept]


def _num(v: Any) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def _k_json(k: Any) -> float | str | None:
    k = float(k)
    if math.isinf(k):
        return "infinity"
    return k if math.isfinite(k) else None


def _k_text(k: Any) -> str:
    k = float(k)
    return "infinity" if math.isinf(k) else f"{k:.3g}"


def reflections_for_links(
    profiles: Any, antenna_a_m: np.ndarray, antenna_b_m: np.ndarray, freq_ghz: ArrayLike, *,
    k: float, k_worst: float, fade_margin_db: ArrayLike, polarisation: str, ground: str,
    settings: ReflectionSettings = ReflectionSettings(), water: np.ndarray | None = None,
    climate: Any = None,
) -> LinkReflections:
    """Reflections of every path of ``profiles`` (profiler.profile.Profiles) over the k sweep.

    ``water``: (paths, samples) True where a water layer covers the sample;
    ``fade_margin_db``: per path, at the design k (for the warning and the
    P.530 improvement); ``climate``: ClimateSettings (dN1, sa for p0), or None.
    """
    settings.validate()
    ground = resolve_surface(ground)
    k_values = sweep_k_values(float(settings.k_min), float(settings.k_max), (k, k_worst))
    surface, mask = reflecting_surface(profiles.ground_m, profiles.clutter_m, profiles.n_samples, water,
                                       settings.sea_level_water)
    valid = np.asarray(profiles.valid, dtype=bool)
    P = len(valid)
    f = np.array(np.broadcast_to(np.asarray(freq_ghz, dtype=float), (P,)))
    ha = np.asarray(antenna_a_m, dtype=float)
    hb = np.asarray(antenna_b_m, dtype=float)
    d = np.asarray(profiles.length_m, dtype=float)
    margin = np.array(np.broadcast_to(np.asarray(fade_margin_db, dtype=float), (P,)))
    sweep = tuple(find_reflections(profiles.distance_m, surface, profiles.n_samples, d, ha, hb, f, kv,
                                   mask, polarisation, ground, valid) for kv in k_values)
    nan = np.full(P, np.nan)
    curves: list[Curve | None] = [None] * P
    facet_k, swing, null, null_k, high = nan.copy(), nan.copy(), nan.copy(), nan.copy(), nan.copy()
    spacing_a, spacing_b, improvement = nan.copy(), nan.copy(), nan.copy()
    notes: list[str | None] = [None] * P
    smooth = np.full((P, len(k_values)), np.nan)
    order = sorted(range(len(k_values)), key=lambda j: abs(math.log(k_values[j] / k)) if math.isfinite(k_values[j])
                   else math.inf)
    found_any = np.any([s.found for s in sweep], axis=0) & valid
    p0 = _p0(d, f, ha, hb, climate) if found_any.any() else nan
    for i in map(int, np.flatnonzero(found_any)):
        j = next(j for j in order if sweep[j].found[i])
        s = sweep[j]
        facet_k[i] = k_values[j]
        facet = {name: float(getattr(s, name)[i]) for name in ("intercept_m", "slope", "start_m", "end_m",
                                                               "roughness_m")}
        if s.over_water[i]:  # the whole water body reflects, not only the zone at this k
            facet["start_m"], facet["end_m"] = _water_run(profiles.distance_m[i], mask[i], s.point_m[i],
                                                          facet["start_m"], facet["end_m"])
        level = float(s.plane_m[i])
        smooth[i] = reflection_point_m(ha[i] - level, hb[i] - level, d[i], np.array(k_values))
        eta = complex_permittivity(water_type_for(ground) if (s.over_water[i] and ground in ("land", "wet-ground",
                                   "dry-ground")) else ground, f[i])
        d1 = float(s.point_m[i])
        psi = float(s.grazing_rad[i])
        u = curve_inverse_k(d[i], psi * d1, psi * (d[i] - d1), d1, f[i], settings.k_min, settings.k_max)
        curve = facet_curve(d[i], ha[i], hb[i], f[i], facet, u, polarisation, complex(eta))
        # the facet's curve counts only where the search found this facet's rays clear at the nearest swept k
        curve = _checked_curve(curve, sweep, k_values, i, facet)
        curves[i] = curve
        swing[i] = float(curve.level_db.max() - curve.level_db.min())
        jn = int(np.argmin(curve.level_db))
        null[i] = float(curve.level_db[jn])
        null_k[i] = math.inf if curve.inverse_k[jn] == 0 else 1.0 / float(curve.inverse_k[jn])
        high[i] = float(curve.level_db.max())
        des = sweep[k_values.index(k)]
        at = des if des.found[i] else s
        d1 = float(at.point_m[i])
        psi = float(at.grazing_rad[i])
        spacing_b[i] = float(diversity_spacing_m(psi * d1, d[i], f[i]))
        spacing_a[i] = float(diversity_spacing_m(psi * (d[i] - d1), d[i], f[i]))
        improvement[i], notes[i] = _improvement(spacing_b[i], f[i], d[i], p0[i], margin[i])
    return LinkReflections(
        k_values=k_values, sweep=sweep, design_k=k, worst_k=k_worst, length_m=d, freq_ghz=f, antenna_a_m=ha,
        antenna_b_m=hb, fade_margin_db=margin, curves=tuple(curves), facet_k=facet_k, swing_db=swing,
        deepest_null_db=null, deepest_null_k=null_k, highest_db=high, spacing_a_m=spacing_a, spacing_b_m=spacing_b,
        improvement=improvement, improvement_note=tuple(notes), smooth_point_m=smooth, settings=settings,
        ground=ground, polarisation=polarisation, valid=valid,
    )


def _water_run(x: np.ndarray, mask: np.ndarray, point_m: float, start: float, end: float) -> tuple[float, float]:
    """The extent of the run of water samples holding the point, joined to [start, end]."""
    j = int(np.argmin(np.abs(x - point_m)))
    if not mask[j]:
        return start, end
    a = j
    while a > 0 and mask[a - 1]:
        a -= 1
    b = j
    while b + 1 < mask.size and mask[b + 1]:
        b += 1
    return min(start, float(x[a])), max(end, float(x[b]))


def _checked_curve(curve: Curve, sweep: Sequence[FacetReflections], k_values: Sequence[float], i: int,
                   facet: dict) -> Curve:
    """Level 0 where the nearest swept k (in 1/k) found no clear reflection on this facet."""
    u_swept = np.array([0.0 if math.isinf(k) else 1.0 / k for k in k_values])
    on_facet = np.array([bool(s.found[i]) and facet["start_m"] - 1.0 <= s.point_m[i] <= facet["end_m"] + 1.0
                         for s in sweep])
    nearest = np.argmin(np.abs(curve.inverse_k[:, None] - u_swept[None, :]), axis=1)
    ok = on_facet[nearest]
    return Curve(curve.inverse_k, np.where(ok, curve.level_db, 0.0),
                 np.where(ok, curve.path_difference_m, np.nan))


def _p0(d: np.ndarray, f: np.ndarray, ha: np.ndarray, hb: np.ndarray, climate: Any) -> np.ndarray:
    """Multipath occurrence factor p0 % (ITU-R P.530-17 eq. 10, profiler.losses.multipath); NaN where invalid."""
    from ..climate import ClimateSettings
    from ..losses.multipath import multipath_occurrence_factor_pct, multipath_validity_problem

    c = climate if climate is not None else ClimateSettings()
    bad = np.asarray(multipath_validity_problem(d, f), dtype=bool)
    dd = np.where(bad, 10_000.0, d)
    ff = np.where(bad, 10.0, f)
    p0 = multipath_occurrence_factor_pct(dd, ff, ha, hb, c.dn1_n_per_km, c.terrain_roughness_m)
    return np.where(bad, np.nan, p0)


def _improvement(spacing_m: float, f: float, d_m: float, p0: float, margin_db: float) -> tuple[float, str | None]:
    """P.530 improvement factor with the spacing found, and a note when outside its validity or not computed."""
    if not (np.isfinite(p0) and margin_db > 0 and np.isfinite(spacing_m) and spacing_m > 0):
        return math.nan, ("not computed: needs a positive fade margin and the multipath occurrence factor "
                          "of ITU-R P.530-17 s. 2.3 (path length and frequency within its range)")
    value = float(space_diversity_improvement(spacing_m, f, d_m / 1000.0, p0, margin_db))
    out = [name for name, v in (("spacing", spacing_m), ("freq_ghz", f), ("distance_km", d_m / 1000.0))
           if not (DIVERSITY_VALIDITY["spacing_m" if name == "spacing" else name][0] <= v
                   <= DIVERSITY_VALIDITY["spacing_m" if name == "spacing" else name][1])]
    note = None
    if out:
        note = ("outside the validity of ITU-R P.530-17 s. 6.2.1 (S 3-23 m, f 2-11 GHz, d 43-240 km): "
                + ", ".join(out) + "; an indication only")
    return value, note
