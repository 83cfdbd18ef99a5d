"""Antenna files: gain, half-power beamwidth, polarisation, an optional radiation envelope.

Our own TOML layout (one antenna per file, or the same keys as a table
``[antenna_a]`` / ``[antenna_b]`` of a link file)::

    name = "0.6 m dish"
    gain_dbi = 38.5              # give gain_dbi, or diameter_m (with efficiency), or both
    diameter_m = 0.6
    efficiency = 0.55            # with diameter_m only; default 0.55 (common practice)
    beamwidth_deg = 2.0          # half-power, optional; else about 70 lambda / D (needs diameter_m)
    polarisation = "vertical"    # vertical, horizontal, dual, slant-45, circular
    band_ghz = [17.7, 19.7]      # optional band of validity, GHz
    notes = "free text"

    [envelope]                   # optional, kept for interference work (not used by the budget)
    angle_deg   = [0, 1, 2, 5, 10, 180]
    relative_db = [0, -3, -15, -25, -35, -50]

Gain of an aperture of diameter D at wavelength lambda:
G = efficiency (pi D / lambda)^2, i.e. G = 4 pi A_e / lambda^2 with the
effective aperture A_e = efficiency pi D^2 / 4 (Kraus and Marhefka, *Antennas
for All Applications*, 3rd ed., McGraw-Hill 2002, chapter 2, effective
aperture and directivity; chapter-level citation from memory).  ITU-R F.699
(from memory) relates the two the same way when only the gain is known:
20 log10(D / lambda) ~= G_max - 7.7 dB, which is this formula with an
efficiency of about 0.6.

Pure: :func:`parse_antenna` checks a table; :func:`read_antenna_file` is the
one function here that reads a file.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from ..errors import InputError
from ..toml_files import read_toml
from ..units import wavelength_m
from ..validation import LIMITS

__all__ = [
    "Antenna",
    "Envelope",
    "ANTENNA_KEYS",
    "DEFAULT_EFFICIENCY",
    "BEAMWIDTH_FACTOR_DEG",
    "POLARISATIONS",
    "aperture_gain_dbi",
    "aperture_beamwidth_deg",
    "parse_antenna",
    "read_antenna_file",
    "antenna_from_link_table",
]

#: Aperture efficiency of a parabolic dish when not given (common practice: 0.5 to 0.6 for front-fed dishes).
DEFAULT_EFFICIENCY = 0.55
#: Half-power beamwidth of a dish, degrees per (D / lambda): about 70 (textbook rule of thumb, Kraus and
#: Marhefka, *Antennas for All Applications*, 3rd ed., reflector antennas; from memory).
BEAMWIDTH_FACTOR_DEG = 70.0
#: Polarisation words accepted (their own; "dual" for a dual-polarised feed, "slant-45" for +/-45 degrees).
POLARISATIONS = ("vertical", "horizontal", "dual", "slant-45", "circular")
#: Keys of an antenna table.
ANTENNA_KEYS = frozenset({"name", "gain_dbi", "diameter_m", "efficiency", "beamwidth_deg", "polarisation",
                          "band_ghz", "notes", "envelope"})
#: Keys of an ``[envelope]`` table.
ENVELOPE_KEYS = frozenset({"angle_deg", "relative_db"})


def aperture_gain_dbi(diameter_m: ArrayLike, freq_ghz: ArrayLike, efficiency: ArrayLike = DEFAULT_EFFICIENCY) -> np.ndarray:
    """Gain of a circular aperture, dBi: 10 log10(efficiency (pi D / lambda)^2) (source: module docstring)."""
    lam = wavelength_m(freq_ghz)
    ratio = np.asarray(efficiency, dtype=float) * (math.pi * np.asarray(diameter_m, dtype=float) / lam) ** 2
    return 10.0 * np.log10(ratio)


def aperture_beamwidth_deg(diameter_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Half-power beamwidth of a dish, degrees: about 70 lambda / D (:data:`BEAMWIDTH_FACTOR_DEG`)."""
    return BEAMWIDTH_FACTOR_DEG * wavelength_m(freq_ghz) / np.asarray(diameter_m, dtype=float)


@dataclass(frozen=True)
class Envelope:
    """Radiation envelope: the gain relative to boresight (dB, <= 0) not exceeded beyond each angle (degrees)."""

    angle_deg: tuple[float, ...]
    relative_db: tuple[float, ...]

    def relative_db_at(self, angle_deg: ArrayLike) -> np.ndarray:
        """Envelope at off-axis angles (degrees, folded into 0-180), linear between the points, dB."""
        a = np.abs((np.asarray(angle_deg, dtype=float) + 180.0) % 360.0 - 180.0)
        return np.interp(a, self.angle_deg, self.relative_db)


@dataclass(frozen=True)
class Antenna:
    """One antenna: gain (given, or from the aperture), beamwidth, polarisation, band, envelope.

    ``source`` names where it came from (a file, or ``FILE [antenna_a]``) for messages and records.
    """

    name: str
    source: str
    gain_dbi: float | None = None
    diameter_m: float | None = None
    efficiency: float | None = None
    beamwidth_deg: float | None = None
    polarisation: str | None = None
    band_ghz: tuple[float, float] | None = None
    envelope: Envelope | None = None
    notes: str = ""

    @property
    def efficiency_used(self) -> float:
        """The aperture efficiency that goes into the gain: given, else :data:`DEFAULT_EFFICIENCY`."""
        return DEFAULT_EFFICIENCY if self.efficiency is None else self.efficiency

    def check_frequency(self, freq_ghz: float) -> None:
        """InputError when ``freq_ghz`` lies outside the stated band, or the stated gain exceeds the aperture's."""
        f = float(freq_ghz)
        if self.band_ghz is not None and not (self.band_ghz[0] <= f <= self.band_ghz[1]):
            raise InputError(f"{self.source}: the link frequency {f:g} GHz is outside the antenna's band_ghz "
                             f"{self.band_ghz[0]:g}-{self.band_ghz[1]:g} GHz")
        if self.gain_dbi is not None and self.diameter_m is not None:
            _check_gain_fits(self.source, self.gain_dbi, self.diameter_m, f)

    def gain_dbi_at(self, freq_ghz: float) -> float:
        """Boresight gain at a frequency, dBi: the stated gain, else the aperture gain (module docstring)."""
        self.check_frequency(freq_ghz)
        if self.gain_dbi is not None:
            return float(self.gain_dbi)
        assert self.diameter_m is not None  # parse_antenna refuses an antenna with neither
        gain = float(aperture_gain_dbi(self.diameter_m, freq_ghz, self.efficiency_used))
        limit = LIMITS["gain_a_dbi"]
        if not limit.low <= gain <= limit.high:
            raise InputError(f"{self.source}: diameter_m {self.diameter_m:g} gives {gain:.1f} dBi at {float(freq_ghz):g} "
                             f"GHz, outside the gains terrahop takes ({limit.describe()})")
        return gain

    def beamwidth_deg_at(self, freq_ghz: float) -> float | None:
        """Half-power beamwidth, degrees: given, else 70 lambda / D; None with neither a beamwidth nor a diameter."""
        if self.beamwidth_deg is not None:
            return float(self.beamwidth_deg)
        if self.diameter_m is not None:
            return float(aperture_beamwidth_deg(self.diameter_m, freq_ghz))
        return None

    def gain_source(self) -> str:
        """How the gain is obtained, in words for the record."""
        if self.gain_dbi is not None:
            return "gain_dbi as stated"
        tag = "" if self.efficiency is not None else " (default, common practice)"
        return f"aperture: efficiency {self.efficiency_used:g}{tag} x (pi D / lambda)^2, D = {self.diameter_m:g} m"

    def record(self, freq_ghz: float) -> dict:
        """JSON-ready description at a frequency: source, gain used and how, beamwidth, polarisation."""
        beam = self.beamwidth_deg_at(freq_ghz)
        return {
            "name": self.name,
            "file": self.source,
            "gain_dbi": self.gain_dbi_at(freq_ghz),
            "gain_from": self.gain_source(),
            "diameter_m": self.diameter_m,
            "beamwidth_deg": beam,
            "beamwidth_from": ("as stated" if self.beamwidth_deg is not None
                               else "70 lambda / D" if beam is not None else "not stated"),
            "polarisation": self.polarisation,
            "band_ghz": list(self.band_ghz) if self.band_ghz is not None else None,
            "envelope_points": len(self.envelope.angle_deg) if self.envelope is not None else 0,
        }


def _check_gain_fits(source: str, gain_dbi: float, diameter_m: float, freq_ghz: float) -> None:
    """A stated gain that a dish of the stated diameter cannot give (efficiency above 1) is refused."""
    implied = 10.0 ** (gain_dbi / 10.0) / float((math.pi * diameter_m / wavelength_m(freq_ghz)) ** 2)
    if implied > 1.0:
        raise InputError(
            f"{source}: gain_dbi {gain_dbi:g} and diameter_m {diameter_m:g} disagree at {freq_ghz:g} GHz "
            f"(a {diameter_m:g} m aperture gives at most {float(aperture_gain_dbi(diameter_m, freq_ghz, 1.0)):.1f} dBi; "
            f"efficiency would be {implied:.2f})")


def _number(source: str, table: dict, key: str, *, low: float, high: float = math.inf,
            low_open: bool = True) -> float | None:
    if key not in table:
        return None
    value = table[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{source}: {key} must be a number, got {value!r}")
    below = value <= low if low_open else value < low
    if below or value > high:
        lo = f"above {low:g}" if low_open else f"at least {low:g}"
        hi = f" and at most {high:g}" if math.isfinite(high) else ""
        raise InputError(f"{source}: {key} must be {lo}{hi}, got {value!r}")
    return float(value)


def _band(source: str, value: Any) -> tuple[float, float] | None:
    if value is None:
        return None
    ok = (isinstance(value, list) and len(value) == 2
          and all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value))
    if not ok or not (0 < value[0] < value[1]):
        raise InputError(f"{source}: band_ghz must be two frequencies [low, high] in GHz, low < high, got {value!r}")
    return float(value[0]), float(value[1])


def _envelope(source: str, value: Any) -> Envelope | None:
    """Check an [envelope] table: angles from 0 to at most 180 degrees, rising; levels <= 0 dB, never rising."""
    if value is None:
        return None
    if not isinstance(value, dict):
        raise InputError(f"{source}: envelope must be a table with angle_deg and relative_db lists")
    unknown = set(value) - ENVELOPE_KEYS
    if unknown:
        raise InputError(f"{source}: unknown key(s) in [envelope]: {', '.join(sorted(unknown))}; "
                         f"allowed: {', '.join(sorted(ENVELOPE_KEYS))}")
    lists = {}
    for key in sorted(ENVELOPE_KEYS):
        v = value.get(key)
        if not isinstance(v, list) or not v or not all(
                isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) for x in v):
            raise InputError(f"{source}: [envelope] {key} must be a list of numbers")
        lists[key] = [float(x) for x in v]
    angles, levels = lists["angle_deg"], lists["relative_db"]
    if len(angles) != len(levels):
        raise InputError(f"{source}: [envelope] angle_deg has {len(angles)} values but relative_db has {len(levels)}")
    if len(angles) < 2:
        raise InputError(f"{source}: [envelope] needs at least two points")
    if angles[0] != 0.0 or levels[0] != 0.0:
        raise InputError(f"{source}: [envelope] must start at angle_deg 0 with relative_db 0 (boresight)")
    for i in range(1, len(angles)):
        if not angles[i] > angles[i - 1]:
            raise InputError(f"{source}: [envelope] angle_deg out of order at point {i + 1} "
                             f"({angles[i]:g} after {angles[i - 1]:g}); angles must rise")
        if levels[i] > levels[i - 1]:
            raise InputError(f"{source}: [envelope] relative_db rises at point {i + 1} ({levels[i]:g} after "
                             f"{levels[i - 1]:g}); an envelope never rises away from boresight")
    if angles[-1] > 180.0:
        raise InputError(f"{source}: [envelope] angle_deg must not pass 180, got {angles[-1]:g}")
    return Envelope(tuple(angles), tuple(levels))


def parse_antenna(table: dict[str, Any], source: str) -> Antenna:
    """Check an antenna table (keys :data:`ANTENNA_KEYS`) and return the :class:`Antenna`; ``source`` names it.

    Rules: gain_dbi or diameter_m (or both: the stated gain is used, and it may not
    exceed what the aperture gives, efficiency 1); efficiency in (0, 1] and only with
    diameter_m and without gain_dbi; beamwidth in (0, 180]; polarisation one of
    :data:`POLARISATIONS`; envelope as :class:`Envelope` says.
    """
    if not isinstance(table, dict):
        raise InputError(f"{source}: an antenna must be a table of keys")
    unknown = set(table) - ANTENNA_KEYS
    if unknown:
        raise InputError(f"{source}: unknown key(s) {', '.join(sorted(unknown))}; "
                         f"allowed: {', '.join(sorted(ANTENNA_KEYS))}")
    name = table.get("name", Path(source.split(" [")[0]).stem or "antenna")
    notes = table.get("notes", "")
    for key, value in (("name", name), ("notes", notes)):
        if not isinstance(value, str):
            raise InputError(f"{source}: {key} must be text in quotes, got {value!r}")
    gain_limit = LIMITS["gain_a_dbi"]  # the one range of a gain (profiler.validation)
    gain = _number(source, table, "gain_dbi", low=gain_limit.low, high=gain_limit.high, low_open=False)
    diameter = _number(source, table, "diameter_m", low=0.0, high=100.0)
    efficiency = _number(source, table, "efficiency", low=0.0, high=1.0)
    beam = _number(source, table, "beamwidth_deg", low=0.0, high=180.0)
    if gain is None and diameter is None:
        raise InputError(f"{source}: give gain_dbi, or diameter_m (with efficiency, default "
                         f"{DEFAULT_EFFICIENCY:g}); neither is there")
    if efficiency is not None and diameter is None:
        raise InputError(f"{source}: efficiency needs diameter_m (it turns the aperture into a gain)")
    if efficiency is not None and gain is not None:
        raise InputError(f"{source}: give efficiency or gain_dbi, not both (with diameter_m either one "
                         "sets the gain)")
    pol = table.get("polarisation")
    if pol is not None:
        if not isinstance(pol, str) or pol.strip().lower() not in POLARISATIONS:
            raise InputError(f"{source}: polarisation must be one of {', '.join(POLARISATIONS)}, got {pol!r}")
        pol = pol.strip().lower()
    band = _band(source, table.get("band_ghz"))
    if band is not None and gain is not None and diameter is not None:
        for f in band:
            _check_gain_fits(source, gain, diameter, f)
    return Antenna(name=name, source=source, gain_dbi=gain, diameter_m=diameter, efficiency=efficiency,
                   beamwidth_deg=beam, polarisation=pol, band_ghz=band,
                   envelope=_envelope(source, table.get("envelope")), notes=notes)


def read_antenna_file(path: str | os.PathLike) -> Antenna:
    """Read an antenna TOML file; DataFileError if missing, InputError naming the file and key if wrong."""
    p, table = read_toml(path, "antenna file")
    return parse_antenna(table, str(p))


def antenna_from_link_table(table: dict[str, Any], link_file: str, section: str) -> Antenna:
    """The antenna of a link file's ``[antenna_a]``/``[antenna_b]`` table: inline keys, or ``file`` alone.

    ``file`` is relative to the link file and may not be mixed with inline keys.
    """
    if "file" in table:
        if set(table) != {"file"}:
            others = ", ".join(sorted(set(table) - {"file"}))
            raise InputError(f"{link_file}: [{section}] gives file and also {others}; give one or the other")
        name = table["file"]
        if not isinstance(name, str):
            raise InputError(f"{link_file}: [{section}] file must be a path in quotes, got {name!r}")
        path = Path(name) if os.path.isabs(name) else Path(link_file).parent / name
        return read_antenna_file(path)
    return parse_antenna(table, f"{link_file} [{section}]")
