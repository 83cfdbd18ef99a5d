"""KML 2.2 and KMZ output of links and sites, for globe viewers (OGC KML 2.2, OGC 07-147r2).

Written with fastkml (a maintained KML library from the Python registry):
one ``Document`` holding a style per verdict, a ``Sites`` folder of points
and one folder per verdict of links.  Links are geodesic polylines
(:mod:`profiler.io.geolines`: vertices at most 1 km apart, cut at the
antimeridian into a ``MultiGeometry`` of two ``LineString``\\ s, since KML 2.2
says nothing on how a viewer joins longitudes across +-180), drawn on the
ground (``tessellate``, ``clampToGround``).  A link that could not be
profiled keeps its placemark (name, problem) without a geometry.  Each
placemark carries a description table and ``ExtendedData`` of its key
numbers; the document's ``ExtendedData`` holds the run description as JSON
(``run_json``).  KMZ is a ZIP archive holding ``doc.kml`` as its first entry,
which viewers take as the root document (as OGC 07-147r2 describes KMZ; the
clause is from memory, not checked).

Colours are terrahop's own colour-blind-safe set (the Okabe-Ito hues of
:data:`profiler.sheets.style.COLOURS`, as on the sheets); lines also differ
by width, so a verdict does not hang on colour alone.
"""

from __future__ import annotations

import html
import os
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable, Sequence

import numpy as np

from ..errors import InputError
from .columns import Verdict
from .run_description import run_json, unwritable_reason

__all__ = ["KmlLink", "KmlSite", "write_kml", "VERDICT_STYLE", "kml_colour", "check_kml_path", "KML_SUFFIXES",
           "links_from_records", "sites_from_records"]

KML_SUFFIXES = (".kml", ".kmz")

#: Colour key of :data:`profiler.sheets.style.COLOURS` and line width (px) of each verdict.
VERDICT_STYLE: dict[Verdict, tuple[str, float]] = {
    Verdict.VIABLE: ("good", 4.0),  # bluish green
    Verdict.MARGINAL: ("criterion", 3.0),  # orange
    Verdict.BUDGET_SHORT: ("worst_k", 3.0),  # reddish purple
    Verdict.CLEARANCE_SHORT: ("bad", 2.0),  # vermillion
    Verdict.OBSTRUCTED: ("ink", 1.5),  # near black
    Verdict.ERROR: ("datum", 1.0),  # grey
}
#: What each verdict means, for the folders' descriptions.
VERDICT_MEANING: dict[Verdict, str] = {
    Verdict.VIABLE: "meets the clearance criterion with at least the minimum fade margin",
    Verdict.MARGINAL: "meets the criterion and closes, with less than the minimum fade margin",
    Verdict.BUDGET_SHORT: "meets the criterion but does not close: fade margin below 0 dB",
    Verdict.CLEARANCE_SHORT: "line of sight, but the Fresnel-zone clearance criterion fails",
    Verdict.OBSTRUCTED: "no line of sight at the design k",
    Verdict.ERROR: "could not be profiled (no line drawn)",
}


def kml_colour(hex_rgb: str, alpha: int = 255) -> str:
    """KML colour ``aabbggrr`` (``kml:colorType`` of the KML 2.2 schema: alpha, blue, green, red) of ``#RRGGBB``."""
    h = hex_rgb.lstrip("#")
    return f"{alpha:02x}{h[4:6]}{h[2:4]}{h[0:2]}".lower()


@dataclass(frozen=True)
class KmlLink:
    """One link to draw: its verdict, line parts ((n, 2) lon, lat arrays; empty: no line) and key numbers."""

    name: str
    verdict: Verdict
    parts: Sequence[np.ndarray]
    numbers: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class KmlSite:
    """One site: name, position (degrees) and key numbers."""

    name: str
    lon_deg: float
    lat_deg: float
    numbers: dict[str, Any] = field(default_factory=dict)


def check_kml_path(path: str | os.PathLike, flag: str = "--kml") -> Path:
    """Raise InputError unless ``path`` ends in .kml or .kmz and its folder exists and is writable."""
    path = Path(path)
    if path.suffix.lower() not in KML_SUFFIXES:
        raise InputError(f"{flag} {path}: unknown extension {path.suffix!r}; use .kml or .kmz")
    reason = unwritable_reason(path)
    if reason is not None:
        raise InputError(f"{flag} {path}: {reason}")
    return path


def _text(value: Any) -> str:
    if value is None or (isinstance(value, float) and not np.isfinite(value)):
        return "unknown"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (float, np.floating)):
        return repr(float(value))  # already rounded per profiler.io.rounding; the shortest text of it
    if isinstance(value, np.integer):
        return str(int(value))
    return str(value)


def _description(numbers: dict[str, Any], heading: str = "") -> str:
    """An HTML table of the key numbers (viewers show a placemark's description as HTML)."""
    rows = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(_text(v))}</td></tr>" for k, v in numbers.items())
    top = f"<p>{html.escape(heading)}</p>" if heading else ""
    return f"{top}<table>{rows}</table>"


def _extended(numbers: dict[str, Any]):
    """``ExtendedData`` of the known numbers; an unknown one (None, NaN) is left out, KML's way of saying NULL."""
    from fastkml import Data, ExtendedData

    known = {k: v for k, v in numbers.items()
             if v is not None and not (isinstance(v, (float, np.floating)) and not np.isfinite(v))}
    return ExtendedData(elements=[Data(name=k, value=_text(v)) for k, v in known.items()])


def _styles() -> list:
    from fastkml import LabelStyle, LineStyle, Style

    from ..sheets.style import COLOURS

    styles = [
        Style(id=f"verdict-{v.value}", styles=[LineStyle(color=kml_colour(COLOURS[key]), width=width)])
        for v, (key, width) in VERDICT_STYLE.items()
    ]
    # No IconStyle: one needs an icon image, and we ship none; viewers draw their own point symbol.
    styles.append(Style(id="site", styles=[LabelStyle(color=kml_colour(COLOURS["ink"]), scale=0.8)]))
    return styles


def _link_placemark(link: KmlLink):
    from fastkml import Placemark, StyleUrl
    from fastkml.enums import AltitudeMode
    from fastkml.geometry import LineString, MultiGeometry
    from pygeoif.geometry import LineString as GeoLine

    lines = [LineString(geometry=GeoLine([(float(p[0]), float(p[1])) for p in part]), tessellate=True,
                        altitude_mode=AltitudeMode.clamp_to_ground) for part in link.parts]
    geometry: Any = None
    if len(lines) == 1:
        geometry = lines[0]
    elif lines:
        geometry = MultiGeometry(kml_geometries=lines)
    return Placemark(name=link.name, description=_description(link.numbers, f"verdict: {link.verdict.value}"),
                     style_url=StyleUrl(url=f"#verdict-{link.verdict.value}"), extended_data=_extended(link.numbers),
                     kml_geometry=geometry)


def _site_placemark(site: KmlSite):
    from fastkml import Placemark, StyleUrl
    from fastkml.geometry import Point
    from pygeoif.geometry import Point as GeoPoint

    return Placemark(name=site.name, description=_description(site.numbers), style_url=StyleUrl(url="#site"),
                     extended_data=_extended(site.numbers),
                     kml_geometry=Point(geometry=GeoPoint(float(site.lon_deg), float(site.lat_deg))))


def kml_document(title: str, links: Iterable[KmlLink], sites: Iterable[KmlSite], description: dict | None) -> str:
    """The KML 2.2 text of a document of sites and links (folders by verdict, in verdict order)."""
    from fastkml import KML, Data, Document, ExtendedData, Folder

    by_verdict: dict[Verdict, list] = {v: [] for v in Verdict}
    for link in links:
        by_verdict[link.verdict].append(_link_placemark(link))
    site_marks = [_site_placemark(s) for s in sites]
    folders = [Folder(id="sites", name=f"Sites ({len(site_marks)})", features=site_marks)]
    for v in Verdict:
        marks = by_verdict[v]
        if marks:
            folders.append(Folder(id=f"folder-{v.value}", name=f"{v.value} ({len(marks)})",
                                  description=VERDICT_MEANING[v], features=marks))
    extended = None
    if description is not None:
        extended = ExtendedData(elements=[Data(name="run_json", display_name="how this file was made",
                                               value=run_json(description))])
    document = Document(id="terrahop", name=title, styles=_styles(), features=folders, extended_data=extended,
                        description="terrahop link plan: lines follow the WGS84 geodesic between the sites; "
                                    "folders by verdict.")
    return KML(features=[document]).to_string(prettyprint=True)


def write_kml(path: str | os.PathLike, title: str, links: Iterable[KmlLink], sites: Iterable[KmlSite],
              description: dict | None = None) -> Path:
    """Write a .kml or .kmz (a zip of ``doc.kml``) file; return its path."""
    path = Path(path)
    text = kml_document(title, links, sites, description)
    body = ('<?xml version="1.0" encoding="UTF-8"?>\n' + text).encode("utf-8")
    if path.suffix.lower() == ".kmz":
        with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
            zf.writestr("doc.kml", body)
    else:
        path.write_bytes(body)
    return path


# --------------------------------------------------------------------------- from link records

def record_numbers(record: dict) -> dict[str, Any]:
    """Key numbers of a ``terrahop link --json`` record: distance, clearance, margins at both k, availability."""
    from .rounding import round_value

    budget = record.get("budget") or {}
    worst = record.get("worst_case") or {}
    clear = record.get("clearance") or {}
    avail = record.get("availability") or {}
    numbers = {
        "distance_km": record.get("distance_km"),
        "azimuth_a_to_b_deg": record.get("azimuth_a_to_b_deg"),
        "worst_clearance_m": clear.get("worst_clearance_m"),
        "worst_f1_fraction": clear.get("worst_f1_fraction"),
        "wc_worst_clearance_m": (worst.get("clearance") or {}).get("worst_clearance_m"),
        "fade_margin_db": budget.get("fade_margin_db"),
        "k": record.get("k"),
        "wc_worst_f1_fraction": (worst.get("clearance") or {}).get("worst_f1_fraction"),
        "wc_fade_margin_db": (worst.get("budget") or {}).get("fade_margin_db"),
        "k_worst": worst.get("k"),
        "meets_criterion": record.get("meets_criterion"),
        "availability_pct": avail.get("availability_pct"),
        "availability_above_pct": avail.get("availability_above_pct"),
        "meets_availability": avail.get("meets_target"),
    }
    if numbers["availability_pct"] is None and numbers["availability_above_pct"] is None:
        numbers.pop("availability_above_pct")
    elif numbers["availability_pct"] is None:
        numbers.pop("availability_pct")
    else:
        numbers.pop("availability_above_pct")
    if "error" in record:
        numbers = {"problem": record["error"]}
    return {k: round_value(k, v) for k, v in numbers.items()}


def _ends(record: dict, fallback: Any) -> tuple[dict, dict]:
    """The two sites of a record ({name, lat, lon, ...}); an error record has none, so ``fallback`` gives them."""
    if "sites" in record:
        return record["sites"]["a"], record["sites"]["b"]
    a, b = fallback
    return ({"name": a.name, "lat": a.lat_deg, "lon": a.lon_deg}, {"name": b.name, "lat": b.lat_deg, "lon": b.lon_deg})


def links_from_records(records: Sequence[dict], verdicts: Sequence[Verdict], ends: Sequence[Any] | None = None
                       ) -> list[KmlLink]:
    """KML links of link records (``terrahop link --json``) with their verdicts.

    ``ends[i]`` is the (site a, site b) pair of :class:`profiler.link.Site` of
    record i, used when the record is an error (it names no sites).
    """
    from .geolines import geodesic_parts

    out = []
    for i, (record, verdict) in enumerate(zip(records, verdicts)):
        a, b = _ends(record, ends[i] if ends is not None else None)
        parts: list = []
        if verdict is not Verdict.ERROR:
            parts = geodesic_parts(a["lon"], a["lat"], b["lon"], b["lat"])[0]
        name = record.get("name") or f"{a['name']} - {b['name']}"
        out.append(KmlLink(name, verdict, parts, record_numbers(record)))
    return out


def sites_from_records(records: Sequence[dict], ends: Sequence[Any] | None = None) -> list[KmlSite]:
    """The sites of link records, each position once (first name kept)."""
    from .rounding import round_value

    seen: dict[tuple[float, float], KmlSite] = {}
    for i, record in enumerate(records):
        for s in _ends(record, ends[i] if ends is not None else None):
            key = (round(float(s["lat"]), 7), round(float(s["lon"]), 7))
            if key not in seen:
                numbers = {"lat": s["lat"], "lon": s["lon"], "ground_m": s.get("ground_m"),
                           "antenna_agl_m": s.get("antenna_agl_m")}
                seen[key] = KmlSite(s["name"], float(s["lon"]), float(s["lat"]),
                                    {k: round_value(k, v) for k, v in numbers.items()})
    return list(seen.values())
