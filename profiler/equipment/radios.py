"""Radio profiles: TOML files describing a radio's bands, channel widths and modulation steps.

The layout is terrahop's own (README, "Radio profiles"; commented example
``examples/radio-18ghz.toml``)::

    name = "..."                       # required
    noise_figure_db = 6.5              # required
    tx_power_dbm = 21                  # optional: the power of every step without its own
    threshold_error_ratio = 1e-6       # optional: the error ratio of every rx_threshold_dbm
    notes = "..."                      # optional

    [[band]]                           # one or more
    low_ghz = 17.7
    high_ghz = 19.7
    max_eirp_dbm = 55                  # optional: EIRP limit in this band
    label = "..."                      # optional

    [[channel]]                        # one per channel width
    width_mhz = 28
    noise_bandwidth_mhz = 25           # optional: the channel width otherwise
    steps = [                          # lowest (most robust) first
      { label = "QPSK", capacity_mbps = 40, rx_threshold_dbm = -86 },
      { label = "256QAM", capacity_mbps = 160, required_snr_db = 27, tx_power_dbm = 19 },
    ]

Each step gives its threshold as ``rx_threshold_dbm`` (the received level at
which the radio reaches ``threshold_error_ratio``) or as ``required_snr_db``,
not both.  Loading and checking only: no numbers of a link here (pure, no
printing).  Every error names the file and the key.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..budget import noise_floor_dbm
from ..errors import InputError
from ..toml_files import read_toml
from ..validation import LIMITS, Limit

__all__ = [
    "RadioBand", "ModulationStep", "RadioChannel", "RadioProfile", "StepTable", "EirpLimit",
    "read_radio_profile", "step_table", "PROFILE_KEYS", "BAND_KEYS", "CHANNEL_KEYS", "STEP_KEYS",
]

PROFILE_KEYS = {"name", "notes", "noise_figure_db", "tx_power_dbm", "threshold_error_ratio", "band", "channel"}
BAND_KEYS = {"low_ghz", "high_ghz", "max_eirp_dbm", "label"}
CHANNEL_KEYS = {"width_mhz", "noise_bandwidth_mhz", "steps"}
STEP_KEYS = {"label", "capacity_mbps", "rx_threshold_dbm", "required_snr_db", "threshold_error_ratio", "tx_power_dbm"}

#: Ranges of the profile's own numbers (the others share profiler.validation.LIMITS).
_LIMITS: dict[str, Limit] = {
    "low_ghz": LIMITS["freq_ghz"],
    "high_ghz": LIMITS["freq_ghz"],
    "width_mhz": LIMITS["bandwidth_mhz"],
    "noise_bandwidth_mhz": LIMITS["bandwidth_mhz"],
    "noise_figure_db": LIMITS["noise_figure_db"],
    "tx_power_dbm": LIMITS["tx_power_dbm"],
    "required_snr_db": LIMITS["required_snr_db"],
    "capacity_mbps": Limit(0.0, 1.0e6, "Mbit/s", "a capacity is positive; 1 Tbit/s exceeds any radio "
                           "(common practice)", low_open=True),
    "rx_threshold_dbm": Limit(-150.0, 0.0, "dBm", "receive thresholds of fixed-link radios lie near -100 to "
                              "-30 dBm (common practice)"),
    "threshold_error_ratio": Limit(0.0, 0.5, "", "an error ratio lies between 0 and 0.5", low_open=True),
    "max_eirp_dbm": Limit(-50.0, 150.0, "dBm", "as max_eirp_dbm in profiler.validation"),
}


@dataclass(frozen=True)
class RadioBand:
    """A frequency band the radio works in, GHz, and its EIRP limit (dBm) if the profile gives one."""

    low_ghz: float
    high_ghz: float
    max_eirp_dbm: float | None = None
    label: str = ""

    def holds(self, freq_ghz: float) -> bool:
        return self.low_ghz <= freq_ghz <= self.high_ghz

    def describe(self) -> str:
        return f"{self.low_ghz:g}-{self.high_ghz:g} GHz" + (f" ({self.label})" if self.label else "")


@dataclass(frozen=True)
class ModulationStep:
    """One modulation step as the profile gives it: label, capacity (Mbit/s) and threshold.

    Exactly one of ``rx_threshold_dbm`` (at ``threshold_error_ratio``) and
    ``required_snr_db`` is set; ``tx_power_dbm`` is the step's own power or None.
    """

    label: str
    capacity_mbps: float
    rx_threshold_dbm: float | None = None
    required_snr_db: float | None = None
    threshold_error_ratio: float | None = None
    tx_power_dbm: float | None = None


@dataclass(frozen=True)
class RadioChannel:
    """A channel width (MHz), its noise bandwidth (MHz, None: the width) and its steps, lowest first."""

    width_mhz: float
    steps: tuple[ModulationStep, ...]
    noise_bandwidth_mhz: float | None = None

    @property
    def noise_mhz(self) -> float:
        """Noise bandwidth used for the noise floor, MHz: the given one, else the channel width (common practice)."""
        return self.width_mhz if self.noise_bandwidth_mhz is None else self.noise_bandwidth_mhz


@dataclass(frozen=True)
class RadioProfile:
    """A radio profile file, checked: name, noise figure (dB), bands, channels."""

    path: str
    name: str
    noise_figure_db: float
    bands: tuple[RadioBand, ...]
    channels: tuple[RadioChannel, ...]
    tx_power_dbm: float | None = None
    notes: str = ""

    @property
    def widths_mhz(self) -> tuple[float, ...]:
        return tuple(c.width_mhz for c in self.channels)

    def channel(self, width_mhz: float | None) -> RadioChannel:
        """The channel of this width; with None, the only one.  InputError listing the widths otherwise."""
        widths = ", ".join(f"{w:g}" for w in self.widths_mhz)
        if width_mhz is None:
            if len(self.channels) == 1:
                return self.channels[0]
            raise InputError(f"{self.path}: the radio has several channel widths ({widths} MHz); "
                             "choose one with {parameter} (or channel_mhz in a link file's [radio] table)",
                             parameter="channel_mhz", value_word="MHZ")
        for c in self.channels:
            if math.isclose(c.width_mhz, float(width_mhz), rel_tol=0, abs_tol=1e-9):
                return c
        raise InputError(f"{self.path}: no channel of {float(width_mhz):g} MHz in radio {self.name!r} "
                         f"(key channel.width_mhz); it has {widths} MHz")

    def band(self, freq_ghz: float) -> RadioBand:
        """The first band holding ``freq_ghz``; InputError naming the bands otherwise."""
        for b in self.bands:
            if b.holds(float(freq_ghz)):
                return b
        bands = ", ".join(b.describe() for b in self.bands)
        raise InputError(f"{self.path}: {float(freq_ghz):g} GHz lies outside the bands of radio {self.name!r} "
                         f"(key band): {bands}")


@dataclass(frozen=True)
class StepTable:
    """The steps of one channel as arrays (steps,), thresholds turned into SNRs.

    ``required_snr_db`` = ``rx_threshold_dbm`` - noise floor, the noise floor
    being 10 log10(k T0 B) + NF with B the noise bandwidth
    (:func:`profiler.budget.noise_floor_dbm`, kT0 of ITU-R P.372); either figure
    follows from the other the same way.  ``tx_power_dbm`` is each step's power
    after any cap; ``threshold_given`` says which figure the profile gave
    ("rx_threshold_dbm" or "required_snr_db") and ``error_ratio`` its error
    ratio (NaN for an SNR).
    """

    labels: tuple[str, ...]
    capacity_mbps: np.ndarray
    required_snr_db: np.ndarray
    rx_threshold_dbm: np.ndarray
    tx_power_dbm: np.ndarray
    threshold_given: tuple[str, ...]
    error_ratio: np.ndarray
    noise_bandwidth_mhz: float
    noise_floor_dbm: float

    def __len__(self) -> int:
        return len(self.labels)


@dataclass(frozen=True)
class EirpLimit:
    """The EIRP a link may radiate, dBm, and where the limit came from (a flag, a link file, a profile band)."""

    max_eirp_dbm: float
    source: str


def step_table(profile: RadioProfile, channel: RadioChannel, tx_power_cap_dbm: float | None,
               fallback_tx_power_dbm: float) -> StepTable:
    """The steps of ``channel`` as a :class:`StepTable`.

    A step's power is its own, else the profile's, else ``fallback_tx_power_dbm``
    (the link's); ``tx_power_cap_dbm`` (a power the planner gives with a
    profile) lowers every step above it and may not exceed the profile's
    highest power (InputError).
    """
    noise_mhz = channel.noise_mhz
    noise = float(noise_floor_dbm(noise_mhz, profile.noise_figure_db))
    own = [s.tx_power_dbm if s.tx_power_dbm is not None else profile.tx_power_dbm for s in channel.steps]
    if tx_power_cap_dbm is not None and all(p is not None for p in own):
        highest = max(p for p in own if p is not None)
        if tx_power_cap_dbm > highest + 1e-9:
            raise InputError(
                f"{profile.path}: the radio's highest transmit power is {highest:g} dBm; a power given with "
                f"a radio profile ({{parameter}} {tx_power_cap_dbm:g}) may only lower it",
                parameter="tx_power_dbm")
    power = np.array([fallback_tx_power_dbm if p is None else p for p in own], dtype=float)
    if tx_power_cap_dbm is not None:
        power = np.minimum(power, float(tx_power_cap_dbm))
    snr: np.ndarray = np.array([_required_snr_db(s, noise) for s in channel.steps], dtype=float)
    return StepTable(
        labels=tuple(s.label for s in channel.steps),
        capacity_mbps=np.array([s.capacity_mbps for s in channel.steps], dtype=float),
        required_snr_db=snr,
        rx_threshold_dbm=snr + noise,
        tx_power_dbm=power,
        threshold_given=tuple("required_snr_db" if s.required_snr_db is not None else "rx_threshold_dbm"
                              for s in channel.steps),
        error_ratio=np.array([np.nan if s.threshold_error_ratio is None else s.threshold_error_ratio
                              for s in channel.steps], dtype=float),
        noise_bandwidth_mhz=noise_mhz,
        noise_floor_dbm=noise,
    )


def _required_snr_db(step: ModulationStep, noise_floor_dbm: float) -> float:
    """The SNR a step needs, dB: given, or its receive threshold less the noise floor."""
    if step.required_snr_db is not None:
        return step.required_snr_db
    assert step.rx_threshold_dbm is not None  # read_radio_profile makes sure one of the two is set
    return step.rx_threshold_dbm - noise_floor_dbm


# --- reading -------------------------------------------------------------------


def read_radio_profile(path: str | os.PathLike) -> RadioProfile:
    """Read and check a radio profile; InputError or DataFileError naming the file and the key."""
    p, data = read_toml(path, "radio profile")
    where = str(p)
    _unknown(where, "", data, PROFILE_KEYS)
    for key in ("name", "noise_figure_db", "band", "channel"):
        if key not in data:
            raise InputError(f"{where}: key {key} missing (a radio profile needs name, noise_figure_db, "
                             "[[band]] and [[channel]])")
    name = _text(where, "name", data["name"])
    notes = _text(where, "notes", data.get("notes", ""))
    nf = _number(where, "noise_figure_db", data["noise_figure_db"])
    tx = _number(where, "tx_power_dbm", data["tx_power_dbm"]) if "tx_power_dbm" in data else None
    ratio = (_number(where, "threshold_error_ratio", data["threshold_error_ratio"])
             if "threshold_error_ratio" in data else None)
    bands = tuple(_band(where, i, b) for i, b in enumerate(_tables(where, "band", data["band"]), 1))
    channels = tuple(_channel(where, i, c, ratio, nf)
                     for i, c in enumerate(_tables(where, "channel", data["channel"]), 1))
    seen: set[float] = set()
    for c in channels:
        if c.width_mhz in seen:
            raise InputError(f"{where}: channel.width_mhz {c.width_mhz:g} MHz is given twice")
        seen.add(c.width_mhz)
    profile = RadioProfile(path=where, name=name, noise_figure_db=nf, bands=bands, channels=channels,
                           tx_power_dbm=tx, notes=notes)
    if tx is None:
        for c in channels:
            given = [s.tx_power_dbm is not None for s in c.steps]
            if any(given) and not all(given):
                j = given.index(False) + 1
                raise InputError(f"{where}: channel {c.width_mhz:g} MHz, step {j} ({c.steps[j - 1].label}): key "
                                 "tx_power_dbm missing; give it in every step or once at the top of the file")
    for c in channels:
        _check_order(profile, c)
    return profile


def _unknown(where: str, table: str, section: dict, allowed: set[str]) -> None:
    unknown = sorted(set(section) - allowed)
    if unknown:
        at = f" in {table}" if table else ""
        raise InputError(f"{where}: unknown key(s){at}: {', '.join(unknown)}; allowed: {', '.join(sorted(allowed))}")


def _tables(where: str, key: str, value: Any) -> list[dict]:
    if isinstance(value, dict):
        value = [value]
    if not isinstance(value, list) or not value or not all(isinstance(v, dict) for v in value):
        raise InputError(f"{where}: key {key} must be one or more tables ([[{key}]])")
    return value


def _text(where: str, key: str, value: Any) -> str:
    if not isinstance(value, str):
        raise InputError(f"{where}: key {key} must be text in quotes, got {value!r}")
    return value


def _number(where: str, key: str, value: Any, name: str | None = None) -> float:
    """A finite number within the range of ``name`` (default ``key``); InputError naming the file and key."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        shown = str(value).lower() if isinstance(value, bool) else repr(value)
        raise InputError(f"{where}: key {key} must be a number, got {shown}")
    number = float(value)
    limit = _LIMITS.get(name or key.rsplit(".", 1)[-1])
    if not math.isfinite(number):
        raise InputError(f"{where}: key {key} must be a finite number, got {value!r}")
    if limit is not None and not bool(limit.holds(np.float64(number))):
        raise InputError(f"{where}: key {key} must lie {limit.describe()}, got {number:g}")
    return number


def _band(where: str, i: int, section: dict) -> RadioBand:
    table = f"band {i}"
    _unknown(where, table, section, BAND_KEYS)
    for key in ("low_ghz", "high_ghz"):
        if key not in section:
            raise InputError(f"{where}: key band.{key} missing in band {i}")
    low = _number(where, "band.low_ghz", section["low_ghz"])
    high = _number(where, "band.high_ghz", section["high_ghz"])
    if not low < high:
        raise InputError(f"{where}: band {i}: band.low_ghz ({low:g}) must be below band.high_ghz ({high:g})")
    eirp = _number(where, "band.max_eirp_dbm", section["max_eirp_dbm"]) if "max_eirp_dbm" in section else None
    return RadioBand(low, high, eirp, _text(where, "band.label", section.get("label", "")))


def _channel(where: str, i: int, section: dict, ratio: float | None, nf: float) -> RadioChannel:
    _unknown(where, f"channel {i}", section, CHANNEL_KEYS)
    for key in ("width_mhz", "steps"):
        if key not in section:
            raise InputError(f"{where}: key channel.{key} missing in channel {i}")
    width = _number(where, "channel.width_mhz", section["width_mhz"])
    noise = (_number(where, "channel.noise_bandwidth_mhz", section["noise_bandwidth_mhz"])
             if "noise_bandwidth_mhz" in section else None)
    steps = section["steps"]
    if not isinstance(steps, list) or not steps or not all(isinstance(s, dict) for s in steps):
        raise InputError(f"{where}: channel {width:g} MHz: key channel.steps must be a list of one or more "
                         "tables { label = ..., capacity_mbps = ..., rx_threshold_dbm = ... }")
    return RadioChannel(width, tuple(_step(where, width, j, s, ratio) for j, s in enumerate(steps, 1)), noise)


def _step(where: str, width: float, j: int, section: dict, ratio: float | None) -> ModulationStep:
    at = f"{where}: channel {width:g} MHz, step {j}"
    _unknown(at, "", section, STEP_KEYS)
    if "label" not in section:
        raise InputError(f"{at}: key label missing")
    label = _text(at, "label", section["label"])
    at = f"{where}: channel {width:g} MHz, step {j} ({label})"
    if "capacity_mbps" not in section:
        raise InputError(f"{at}: key capacity_mbps missing")
    capacity = _number(at, "capacity_mbps", section["capacity_mbps"])
    has_rx, has_snr = "rx_threshold_dbm" in section, "required_snr_db" in section
    if has_rx == has_snr:
        raise InputError(f"{at}: give the threshold as one of rx_threshold_dbm (with threshold_error_ratio) "
                         "or required_snr_db" + (", not both" if has_rx else "; threshold missing"))
    step_ratio = (_number(at, "threshold_error_ratio", section["threshold_error_ratio"])
                  if "threshold_error_ratio" in section else None)
    if has_rx:
        step_ratio = step_ratio if step_ratio is not None else ratio
        if step_ratio is None:
            raise InputError(f"{at}: rx_threshold_dbm needs the error ratio it is stated at: key "
                             "threshold_error_ratio (in the step or at the top of the file)")
    return ModulationStep(
        label=label,
        capacity_mbps=capacity,
        rx_threshold_dbm=_number(at, "rx_threshold_dbm", section["rx_threshold_dbm"]) if has_rx else None,
        required_snr_db=_number(at, "required_snr_db", section["required_snr_db"]) if has_snr else None,
        threshold_error_ratio=step_ratio,
        tx_power_dbm=_number(at, "tx_power_dbm", section["tx_power_dbm"]) if "tx_power_dbm" in section else None,
    )


def _check_order(profile: RadioProfile, channel: RadioChannel) -> None:
    """Steps lowest first: capacity and threshold rise, transmit power never rises (InputError otherwise).

    With the power not rising, each step's fade margin is below the one
    before, so "the share of the year at or above a step" is the share at
    which that step's own margin holds.
    """
    table = step_table(profile, channel, None, 0.0)
    where = f"{profile.path}: channel {channel.width_mhz:g} MHz"
    for j in range(1, len(table)):
        prev, this = table.labels[j - 1], table.labels[j]
        pair = f"step {j + 1} ({this}) after step {j} ({prev})"
        if not table.capacity_mbps[j] > table.capacity_mbps[j - 1]:
            raise InputError(f"{where}: steps out of order: {pair} must carry more (key capacity_mbps, "
                             f"{table.capacity_mbps[j]:g} <= {table.capacity_mbps[j - 1]:g}); list the lowest step first")
        if not table.required_snr_db[j] > table.required_snr_db[j - 1]:
            key = table.threshold_given[j]
            raise InputError(f"{where}: steps out of order: {pair} must need more (key {key}: "
                             f"SNR {table.required_snr_db[j]:.2f} dB <= {table.required_snr_db[j - 1]:.2f} dB "
                             f"with the noise floor {table.noise_floor_dbm:.2f} dBm); list the lowest step first")
        if table.tx_power_dbm[j] > table.tx_power_dbm[j - 1]:
            raise InputError(f"{where}: steps out of order: {pair} has more power (key tx_power_dbm, "
                             f"{table.tx_power_dbm[j]:g} > {table.tx_power_dbm[j - 1]:g} dBm); a higher step "
                             "may keep or lower the power, not raise it")
