"""The sheet's parameter table as rows of text (pure formatting, no drawing).

Every number comes from the link's JSON record (``LinkBatch.record``), so
the sheet and ``terrahop link --json`` always agree.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from ..units import FEET_TO_M
from ..vertical import datum_of_record

__all__ = [
    "Row",
    "HEIGHT_UNITS",
    "format_dms",
    "format_k",
    "height_text",
    "distance_text",
    "DISTANCE_UNITS",
    "vertical_datum_text",
    "above_datum_label",
    "criterion_text",
    "availability_rows",
    "parameter_rows",
]

#: Height units a sheet can show, and metres per unit.
HEIGHT_UNITS = {"m": 1.0, "ft": FEET_TO_M}

#: International mile, m: 5280 ft of 0.3048 m (exact by the 1959 international yard and pound agreement).
MILE_M = 5280.0 * FEET_TO_M

#: Distance unit that goes with each height unit, and metres per unit: a sheet in feet gives
#: distances in miles (the usual pairing where heights are in feet; common practice).
DISTANCE_UNITS = {"m": ("km", 1000.0), "ft": ("mi", MILE_M)}


def distance_text(distance_km: float, units: str = "m", with_km: bool = False) -> str:
    """A distance along the path in the sheet's distance unit (km, or mi with ``units`` "ft"), 3 decimals.

    ``with_km`` adds the kilometres in brackets when the unit is miles.
    """
    if distance_km is None or not math.isfinite(distance_km):
        return "-"
    name, per_m = DISTANCE_UNITS[units]
    text = f"{distance_km * 1000.0 / per_m:.3f} {name}"
    if with_km and name != "km":
        text += f" ({distance_km:.3f} km)"
    return text


@dataclass(frozen=True)
class Row:
    """One table row.  ``right`` None lets ``left`` span both value columns.

    ``kind`` is ``"section"`` for a heading row (``left``/``right`` are then
    column titles) or ``"row"``; ``flag`` is ``"good"``/``"bad"`` to colour a
    verdict, else "".
    """

    label: str
    left: str = ""
    right: str | None = None
    kind: str = "row"
    flag: str = ""


def format_dms(value_deg: float, is_lat: bool, decimals: int = 2) -> str:
    """Degrees-minutes-seconds with hemisphere, e.g. ``30°27'43.73" S``.

    Seconds are rounded first and carried into minutes and degrees, so 59.999"
    never prints as 60.00".
    """
    if not math.isfinite(value_deg):
        return "-"
    hemi = ("N" if value_deg >= 0 else "S") if is_lat else ("E" if value_deg >= 0 else "W")
    scale = 10**decimals
    total = round(abs(value_deg) * 3600.0 * scale)  # in 1/scale arc-seconds
    deg, rest = divmod(total, 3600 * scale)
    minutes, sec = divmod(rest, 60 * scale)
    width = 3 + decimals if decimals else 2
    return f"{deg:d}°{minutes:02d}'{sec / scale:0{width}.{decimals}f}\" {hemi}"


def format_k(k: float) -> str:
    """k-factor as a small fraction when it is one (4/3, 2/3, 1), else 3 significant digits."""
    frac = Fraction(k).limit_denominator(12)
    if abs(float(frac) - k) < 1e-6 * max(1.0, abs(k)):
        return str(frac.numerator) if frac.denominator == 1 else f"{frac.numerator}/{frac.denominator}"
    return f"{k:.3g}"


def height_text(value_m: float, units: str = "m", signed: bool = False) -> str:
    """A height or clearance in the sheet's unit, one decimal."""
    if value_m is None or not math.isfinite(value_m):
        return "-"
    v = value_m / HEIGHT_UNITS[units]
    return f"{v:+.1f} {units}" if signed else f"{v:.1f} {units}"


def vertical_datum_text(record: dict) -> str:
    """Name of the vertical datum of the heights, or a plain statement that the raster gives none."""
    datum = datum_of_record(record)
    if not datum.known:
        return "of the elevation raster (not stated in the file)"
    return datum.record()


def above_datum_label(record: dict) -> str:
    """'above sea level' for a sea-level datum (EGM96, NAVD88...), else 'above the datum'."""
    return datum_of_record(record).short()


def criterion_text(record: dict) -> str:
    """The clearance criterion in words, with k-factors as fractions."""
    inputs = record.get("inputs", {})
    f_d = inputs.get("min_f1_fraction")
    f_w = inputs.get("min_f1_fraction_worst")
    if f_d is None or f_w is None:
        return str(record.get("criterion", "-"))
    return (
        f"{f_d:g} F1 at k = {format_k(record['k'])}, "
        f"{f_w:g} F1 at k = {format_k(record['worst_case']['k'])}"
    )


def _loss_label(key: str) -> str:
    text = {"free_space": "free space", "gases": "atmospheric gases"}.get(key, key.replace("_", " "))
    return text[:1].upper() + text[1:]


def parameter_rows(record: dict, units: str = "m") -> list[Row]:
    """Rows of the parameter table of one link record.

    Sections: sites, path, clearance, losses, link budget.  Heights in
    ``units`` ("m" or "ft").
    """
    if units not in HEIGHT_UNITS:
        raise ValueError(f"units must be one of {', '.join(HEIGHT_UNITS)}, got {units!r}")
    a, b = record["sites"]["a"], record["sites"]["b"]
    radio = record["inputs"]["radio"]
    wc = record["worst_case"]
    k_d, k_w = format_k(record["k"]), format_k(wc["k"])
    rows = [
        Row("Sites", "site a", "site b", kind="section"),
        Row("Name", a["name"], b["name"]),
        Row("Latitude (WGS 84)", f"{a['lat']:.6f}°", f"{b['lat']:.6f}°"),
        Row("", format_dms(a["lat"], True), format_dms(b["lat"], True)),
        Row("Longitude (WGS 84)", f"{a['lon']:.6f}°", f"{b['lon']:.6f}°"),
        Row("", format_dms(a["lon"], False), format_dms(b["lon"], False)),
        Row("Ground elevation", height_text(a["ground_m"], units), height_text(b["ground_m"], units)),
        Row("Antenna above ground", height_text(a["antenna_agl_m"], units),
            height_text(b["antenna_agl_m"], units)),
        Row(f"Antenna {above_datum_label(record)}", height_text(a["antenna_amsl_m"], units),
            height_text(b["antenna_amsl_m"], units)),
    ]
    if "antenna_above_roof_m" in a or "antenna_above_roof_m" in b:
        rows.append(Row("Antenna above roof", height_text(a.get("antenna_above_roof_m", math.nan), units),
                        height_text(b.get("antenna_above_roof_m", math.nan), units)))
    rows += [
        Row("Azimuth (true north)", f"{record['azimuth_a_to_b_deg']:.2f}° to b",
            f"{record['azimuth_b_to_a_deg']:.2f}° to a"),
        Row("Antenna gain", f"{radio['gain_a_dbi']:.1f} dBi", f"{radio['gain_b_dbi']:.1f} dBi"),
        Row("Feeder loss", f"{radio['loss_a_db']:.1f} dB", f"{radio['loss_b_db']:.1f} dB"),
        Row("Path", "", None, kind="section"),
        Row("Path length", distance_text(record["distance_km"], units, with_km=True)),
        Row("Frequency", f"{radio['freq_ghz']:g} GHz"),
        Row("Receiver", f"{radio['bandwidth_mhz']:g} MHz bandwidth, noise figure {radio['noise_figure_db']:g} dB"),
        Row("Diffraction method", str(record["inputs"].get("diffraction_method", "-"))),
        Row("Clearance criterion", criterion_text(record)),
        Row("Clearance", f"design k = {k_d}", f"worst case k = {k_w}", kind="section"),
    ]
    cd, cw = record["clearance"], wc["clearance"]
    rows += [
        Row("Worst point from a", distance_text(cd["worst_distance_km"], units),
            distance_text(cw["worst_distance_km"], units)),
        Row("Clearance at worst point", height_text(cd["worst_clearance_m"], units, signed=True),
            height_text(cw["worst_clearance_m"], units, signed=True)),
        Row("As fraction of F1", f"{cd['worst_f1_fraction']:+.2f} F1", f"{cw['worst_f1_fraction']:+.2f} F1"),
        Row("Line of sight", "clear" if cd["line_of_sight"] else "obstructed",
            "clear" if cw["line_of_sight"] else "obstructed"),
        Row("Verdict", "MEETS the criterion" if record["meets_criterion"] else "FAILS the criterion",
            flag="good" if record["meets_criterion"] else "bad"),
        Row("Losses", f"k = {k_d}", f"k = {k_w}", kind="section"),
    ]
    ld, lw = record["loss_db"], wc["loss_db"]
    numeric = [k for k, v in ld.items() if isinstance(v, (int, float)) and not isinstance(v, bool)]
    keys = [k for k in numeric if k != "total"] + (["total"] if "total" in numeric else [])
    for key in keys:
        rows.append(Row(_loss_label(key), f"{ld[key]:.1f} dB", f"{lw.get(key, float('nan')):.1f} dB"))
    bd, bw = record["budget"], wc["budget"]
    rows += [
        Row("Link budget", f"k = {k_d}", f"k = {k_w}", kind="section"),
        Row("Transmit power (site a)", f"{radio['tx_power_dbm']:.1f} dBm", f"{radio['tx_power_dbm']:.1f} dBm"),
        Row("EIRP", f"{bd['eirp_dbm']:.1f} dBm", f"{bw['eirp_dbm']:.1f} dBm"),
        Row("Received level (site b)", f"{bd['rx_level_dbm']:.1f} dBm", f"{bw['rx_level_dbm']:.1f} dBm"),
        Row("Noise floor (site b)",
            f"{bd['noise_floor_dbm']:.1f} dBm", f"{bw['noise_floor_dbm']:.1f} dBm"),
        Row("SNR", f"{bd['snr_db']:.1f} dB", f"{bw['snr_db']:.1f} dB"),
        Row("Required SNR", f"{radio['required_snr_db']:.1f} dB", f"{radio['required_snr_db']:.1f} dB"),
        Row("Fade margin", f"{bd['fade_margin_db']:+.1f} dB", f"{bw['fade_margin_db']:+.1f} dB",
            flag="good" if bd["fade_margin_db"] >= 0 else "bad"),
    ]
    rows += availability_rows(record)
    from .confidence import confidence_rows

    rows += [Row(*cells) for cells in confidence_rows(record)]
    return rows


def _minutes(value: float) -> str:
    """Minutes with sensible precision: 79, 4.2, 0.055, < 0.01, 0."""
    if not math.isfinite(value):
        return "-"
    if value >= 10:
        return f"{value:.0f}"
    if value >= 1:
        return f"{value:.1f}"
    if value <= 0:
        return "0"
    if value < 0.01:
        return "< 0.01"
    return f"{value:.2g}"


def availability_rows(record: dict) -> list[Row]:
    """Rows of the availability block when the record carries one (ITU-R P.530-17).

    Availability counts rain only; multipath (clear-air) outage is a
    performance figure on its own row; bounds are shown where the rain
    outage lies outside the 0.001-1 % range of the method.
    """
    av = record.get("availability")
    if not isinstance(av, dict):
        return []
    if av.get("estimated") is False:
        return [Row("Availability", "not estimated", flag="bad"), Row("  why", str(av.get("reason", "")).split(";")[0])]
    if "availability_pct" not in av:
        return []
    pct, target = av.get("availability_pct"), av.get("target_availability_pct")
    if pct is not None:
        text = f"{pct:.4f} %"
    elif av.get("availability_above_pct") is not None:
        text = f"above {av['availability_above_pct']:g} %"
    elif av.get("availability_below_pct") is not None:
        text = f"below {av['availability_below_pct']:g} %"
    else:
        text = "-"
    if target is not None:
        text += f" (target {target:g} %)"
    rows = [Row("Availability (rain only)", text,
                flag=("good" if av.get("meets_target") else "bad") if "meets_target" in av else "")]
    rain = av.get("rain") or {}
    if rain.get("outage_min_per_year") is not None:
        rows.append(Row("Rain outage per year", f"{_minutes(rain['outage_min_per_year'])} min"))
    elif rain.get("outage_below_pct") is not None:
        rows.append(Row("Rain outage per year", f"< {rain['outage_below_pct']:g} % (below P.530-17 range)"))
    elif rain.get("outage_above_pct") is not None:
        rows.append(Row("Rain outage per year", f"> {rain['outage_above_pct']:g} % (above P.530-17 range)"))
    mp = av.get("multipath") or {}
    if mp.get("estimated") and mp.get("worst_month_min") is not None:
        rows.append(Row("Multipath (performance)",
                        f"{_minutes(mp['worst_month_min'])} min worst month, "
                        f"{_minutes(mp.get('average_year_min', math.nan))} min/yr"))
    elif mp:
        rows.append(Row("Multipath (performance)", "not estimated"))
    if av.get("required_fade_margin_rain_only_db") is not None and target is not None:
        rows.append(Row("Margin needed, rain", f"{av['required_fade_margin_rain_only_db']:.1f} dB for {target:g} %"))
    if av.get("required_fade_margin_db") is not None and target is not None:
        below = "; rain < 0.001 % there" if av.get("required_fade_margin_rain_below_range") else ""
        rows.append(Row("  rain + multipath", f"{av['required_fade_margin_db']:.1f} dB (average year{below})"))
    return rows
