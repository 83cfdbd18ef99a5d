"""What installers need at each mast: tilt, true and magnetic azimuth, the level to align to, heights.

Pure and batch first: arrays of many paths in, arrays out (the World
Magnetic Model is evaluated point by point through ``pygeomag``, which reads
its coefficient file from the package, not from the network).

Tilt (elevation angle of the ray to the far antenna).  The radio ray is a
straight line over an earth of effective radius k a (a = 6371 km), the model
the profile uses (ITU-R P.453-14 section 2.3; ITU-R P.526-15 section 2).  In
the triangle earth centre - antenna a - antenna b, with r_a = k a + h_a,
r_b = k a + h_b and the central angle theta = d / (k a):

    tilt_a = atan2(r_b cos(theta) - r_a, r_b sin(theta))

(plane trigonometry, exact on the sphere).  For small angles it becomes
(h_b - h_a) / d - d / (2 k a) radians, the form ITU-R P.452 uses for the
elevation angle of a line-of-sight path (ITU-R P.452-17, Attachment 2 to
Annex 1, section 5.1.1, from memory for the clause).  Positive is up.

Azimuths are the geodesic's (pyproj.Geod on WGS84, already in the record);
magnetic azimuth = true azimuth - declination, declination east positive
(World Magnetic Model, NOAA NCEI and the British Geological Survey; model
and epoch named in every output).
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError, ModelValidityError
from ..units import EARTH_RADIUS_M

__all__ = [
    "tilt_deg",
    "tilt_small_angle_deg",
    "MagneticModel",
    "magnetic_model",
    "parse_date",
    "check_date",
    "declination_deg",
    "Installation",
    "installation_figures",
    "RECIPROCITY_NOTE",
]

#: How the level to align to is obtained, said in every output.
RECIPROCITY_NOTE = (
    "clear-air received level at the design k (no rain, no fading); at site a it is the level site a would "
    "receive with site b sending the same transmit power (reciprocity: the same path loss both ways)"
)
#: Horizontal field strength below which WMM declination is unreliable (the model's "blackout zone"), nT,
#: and below which a compass is degraded ("caution zone"); as pygeomag states them.
BLACKOUT_NT = 2000.0
CAUTION_NT = 6000.0


def tilt_deg(distance_m: ArrayLike, height_from_m: ArrayLike, height_to_m: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Elevation angle at one antenna of the straight ray to the other, degrees (positive up).

    Exact on an earth of radius k x 6371 km (module docstring); heights in metres
    above the same datum, ``distance_m`` along the surface.
    """
    re = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    d = np.asarray(distance_m, dtype=float)
    ha = np.asarray(height_from_m, dtype=float)
    hb = np.asarray(height_to_m, dtype=float)
    rb = re + hb
    theta = d / re
    # r_b cos(theta) - r_a written as (h_b - h_a) - 2 r_b sin^2(theta/2): the same, without the
    # cancellation of two numbers near k a (6-600 km) that differ by metres.
    rise = (hb - ha) - 2.0 * rb * np.sin(theta / 2.0) ** 2
    return np.degrees(np.arctan2(rise, rb * np.sin(theta)))


def tilt_small_angle_deg(distance_m: ArrayLike, height_from_m: ArrayLike, height_to_m: ArrayLike,
                         k: ArrayLike) -> np.ndarray:
    """Small-angle tilt, degrees: (h_to - h_from) / d - d / (2 k a) (ITU-R P.452-17, see module docstring)."""
    d = np.asarray(distance_m, dtype=float)
    re = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    return np.degrees((np.asarray(height_to_m, dtype=float) - np.asarray(height_from_m, dtype=float)) / d
                      - d / (2.0 * re))


@dataclass(frozen=True)
class MagneticModel:
    """The magnetic model used: name (e.g. WMM-2025), epoch and validity in decimal years, release date."""

    name: str
    epoch: float
    valid_from: float
    valid_to: float
    release_date: str

    def describe(self) -> str:
        return (f"{self.name} (World Magnetic Model, epoch {self.epoch:.1f}, valid "
                f"{self.valid_from:.1f}-{self.valid_to:.1f})")


_GEOMAG: Any = None


def _geomag() -> Any:
    """The pygeomag model object (WMM coefficients shipped with the package), made once."""
    global _GEOMAG
    if _GEOMAG is None:
        from pygeomag import GeoMag

        _GEOMAG = GeoMag()  # the package's current WMM coefficient file
    return _GEOMAG


def magnetic_model() -> MagneticModel:
    """Name, epoch and validity of the World Magnetic Model ``pygeomag`` carries."""
    g = _geomag()
    lo, hi = g.life_span
    return MagneticModel(str(g.model), float(lo), float(lo), float(hi), str(g.release_date))


def parse_date(text: Any, what: str = "date") -> _dt.date:
    """A date given as YYYY-MM-DD (or a date object); InputError otherwise."""
    if isinstance(text, _dt.datetime):
        return text.date()
    if isinstance(text, _dt.date):
        return text
    try:
        return _dt.date.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(f"{what} must be a date written YYYY-MM-DD, got {text!r}") from None


def decimal_year(date: _dt.date) -> float:
    """Year plus the fraction of it passed at the start of ``date`` (as the WMM software counts it)."""
    start = _dt.date(date.year, 1, 1)
    days = (_dt.date(date.year + 1, 1, 1) - start).days
    return date.year + (date - start).days / days


def check_date(date: _dt.date, what: str = "date") -> float:
    """Decimal year of ``date``; ModelValidityError when the magnetic model does not cover it."""
    model = magnetic_model()
    year = decimal_year(date)
    if not (model.valid_from <= year <= model.valid_to):
        raise ModelValidityError(
            f"{what} {date.isoformat()} is outside the magnetic model {model.name}, valid "
            f"{model.valid_from:.1f}-{model.valid_to:.1f}; give a date within it (the declination changes "
            "by up to a few tenths of a degree a year)")
    return year


@dataclass(frozen=True)
class Declination:
    """Declination (east positive), its WMM uncertainty and the horizontal field, per point."""

    declination_deg: np.ndarray
    uncertainty_deg: np.ndarray
    horizontal_nt: np.ndarray


def declination_deg(lat_deg: ArrayLike, lon_deg: ArrayLike, date: _dt.date,
                    altitude_m: ArrayLike = 0.0) -> Declination:
    """Magnetic declination from the World Magnetic Model at many points, degrees east of true north.

    ``altitude_m`` above mean sea level (WMM accepts it for the ellipsoid as well;
    the difference is far below the model's error).  ModelValidityError outside its dates.
    """
    year = check_date(date)
    lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
    lon = np.broadcast_to(np.asarray(lon_deg, dtype=float), lat.shape)
    alt_km = np.broadcast_to(np.asarray(altitude_m, dtype=float), lat.shape) / 1000.0
    g = _geomag()
    dec = np.full(lat.shape, np.nan)
    unc = np.full(lat.shape, np.nan)
    hor = np.full(lat.shape, np.nan)
    for i in range(lat.size):
        if not (math.isfinite(lat[i]) and math.isfinite(lon[i])):
            continue
        alt = float(alt_km[i]) if math.isfinite(alt_km[i]) else 0.0
        r = g.calculate(float(lat[i]), float(lon[i]), max(alt, -1.0), year)
        dec[i], hor[i] = r.d, r.h
        try:
            unc[i] = r.calculate_uncertainty().d
        except (ValueError, ZeroDivisionError):  # no error model for this date or a zero field
            pass
    return Declination(dec, unc, hor)


@dataclass(frozen=True)
class Installation:
    """Installer figures of many links; arrays of shape (paths,), site a then site b.

    ``tilt_*_deg`` at the design k and at the worst-case k; azimuths true and
    magnetic (true - declination); ``rx_*_dbm`` the level to align to
    (:data:`RECIPROCITY_NOTE`); heights above ground and above the rasters' datum.
    """

    date: _dt.date
    model: MagneticModel
    k: float
    k_worst: float
    tilt_a_deg: np.ndarray
    tilt_b_deg: np.ndarray
    tilt_a_worst_deg: np.ndarray
    tilt_b_worst_deg: np.ndarray
    azimuth_a_deg: np.ndarray
    azimuth_b_deg: np.ndarray
    declination_a: Declination
    declination_b: Declination
    rx_a_dbm: np.ndarray
    rx_b_dbm: np.ndarray
    agl_a_m: np.ndarray
    agl_b_m: np.ndarray
    amsl_a_m: np.ndarray
    amsl_b_m: np.ndarray
    vertical_datum: str = ""

    @property
    def magnetic_a_deg(self) -> np.ndarray:
        return (self.azimuth_a_deg - self.declination_a.declination_deg) % 360.0

    @property
    def magnetic_b_deg(self) -> np.ndarray:
        return (self.azimuth_b_deg - self.declination_b.declination_deg) % 360.0

    def record(self, i: int) -> dict:
        """The JSON ``installation`` block of link i."""
        m = self.model
        out: dict[str, Any] = {
            "magnetic_model": m.name,
            "magnetic_model_epoch": m.epoch,
            "magnetic_model_valid": f"{m.valid_from:.1f}-{m.valid_to:.1f}",
            "date": self.date.isoformat(),
            "k": self.k,
            "k_worst": self.k_worst,
            "vertical_datum": self.vertical_datum,
            "rx_level_from": RECIPROCITY_NOTE,
        }
        for tag in ("a", "b"):
            dec: Declination = getattr(self, f"declination_{tag}")
            hor = float(dec.horizontal_nt[i])
            end: dict[str, Any] = {
                "tilt_deg": float(getattr(self, f"tilt_{tag}_deg")[i]),
                "tilt_worst_deg": float(getattr(self, f"tilt_{tag}_worst_deg")[i]),
                "azimuth_true_deg": float(getattr(self, f"azimuth_{tag}_deg")[i]),
                "azimuth_magnetic_deg": float(getattr(self, f"magnetic_{tag}_deg")[i]),
                "declination_deg": float(dec.declination_deg[i]),
                "declination_uncertainty_deg": _finite_or_none(dec.uncertainty_deg[i]),
                "rx_level_dbm": float(getattr(self, f"rx_{tag}_dbm")[i]),
                "antenna_agl_m": float(getattr(self, f"agl_{tag}_m")[i]),
                "antenna_amsl_m": float(getattr(self, f"amsl_{tag}_m")[i]),
            }
            if hor < CAUTION_NT:
                zone = "unreliable (blackout zone)" if hor < BLACKOUT_NT else "degraded (caution zone)"
                end["declination_note"] = (f"horizontal field {hor:.0f} nT: compass bearings are {zone} near "
                                           "the magnetic pole; align by true azimuth")
            out[tag] = end
        return out


def _finite_or_none(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def installation_figures(batch: Any, date: _dt.date) -> Installation:
    """Installer figures of every link of a :class:`profiler.link_batch.LinkBatch` on ``date``.

    Distances, azimuths and antenna elevations are the engine's own; the level to
    align to is the design-k budget (:data:`RECIPROCITY_NOTE`).
    """
    lines = batch.profiles.lines
    d = np.asarray(lines.length_m, dtype=float)
    ha = np.asarray(batch.antenna_a_amsl_m, dtype=float)
    hb = np.asarray(batch.antenna_b_amsl_m, dtype=float)
    s = batch.settings
    from ..link_types import site_arrays  # lazy: keeps this module importable without the link types

    lat_a, lon_a, agl_a = site_arrays(batch.sites_a)
    lat_b, lon_b, agl_b = site_arrays(batch.sites_b)
    with np.errstate(invalid="ignore", divide="ignore"):
        rx = np.asarray(batch.design.budget.rx_level_dbm, dtype=float)
        return Installation(
            date=date, model=magnetic_model(), k=s.k, k_worst=s.k_worst,
            tilt_a_deg=tilt_deg(d, ha, hb, s.k), tilt_b_deg=tilt_deg(d, hb, ha, s.k),
            tilt_a_worst_deg=tilt_deg(d, ha, hb, s.k_worst), tilt_b_worst_deg=tilt_deg(d, hb, ha, s.k_worst),
            azimuth_a_deg=np.asarray(lines.azimuth_a_to_b_deg, dtype=float) % 360.0,
            azimuth_b_deg=np.asarray(lines.azimuth_b_to_a_deg, dtype=float) % 360.0,
            declination_a=declination_deg(lat_a, lon_a, date, ha),
            declination_b=declination_deg(lat_b, lon_b, date, hb),
            rx_a_dbm=rx.copy(), rx_b_dbm=rx,
            agl_a_m=agl_a, agl_b_m=agl_b, amsl_a_m=ha, amsl_b_m=hb,
            vertical_datum=str(batch.provenance.get("vertical_datum", "")),
        )
