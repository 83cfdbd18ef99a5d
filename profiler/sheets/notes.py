"""The words of a profile sheet's notes: drawing notes, obstructions crossed, data sources.

Pure text from a :class:`SheetContent` (no matplotlib); :mod:`profiler.sheets.page` draws it.
"""

from __future__ import annotations

import math

from .content import CLUTTER_KINDS, SheetContent
from .table import DISTANCE_UNITS, height_text, vertical_datum_text

__all__ = ["drawing_notes", "obstruction_note", "source_lines", "continuation_pages", "feature_height",
           "span_text", "CONT_ROWS", "CONT_COLUMNS"]

#: Rasters listed in full in the provenance block; more are named in one line.
MAX_SOURCES_LISTED = 3
#: Obstructions named one by one in the drawing notes; all of them go on continuation pages when more.
MAX_CROSSED_LISTED = 3
#: Obstructions listed per column, and columns per continuation page.
CONT_ROWS = 38
CONT_COLUMNS = 2


def drawing_notes(c: SheetContent, units: str = "m") -> list[str]:
    """The paragraphs of the drawing notes: datum, sampling, obstructions, then the link's warnings."""
    r = c.record
    unit_word = "metres" if units == "m" else "feet"
    notes = [
        f"Horizontal positions: WGS 84 (EPSG:4326), decimal degrees and degrees-minutes-seconds. "
        f"Distances along the geodesic from site a. Heights in {unit_word} above the vertical datum "
        f"{vertical_datum_text(r)}.",
        f"Terrain sampled every {r['inputs'].get('sample_spacing_m', float('nan')):.1f} m "
        f"({r['inputs'].get('samples', '-')} samples), bilinear between raster cells. "
        f"Antenna heights are to the antenna centre. Site a transmits, site b receives.",
    ]
    notes.append(obstruction_note(c, units))
    for wmsg in r.get("warnings", []) or []:
        notes.append(f"Warning: {wmsg}")
    return notes


def source_lines(c: SheetContent) -> list[str]:
    """Lines of the data-sources block: rasters (file, CRS, cell, unit, datum, checksum), other files, the run."""
    r = c.record
    lines = []
    shown = c.sources if len(c.sources) <= MAX_SOURCES_LISTED else c.sources[: MAX_SOURCES_LISTED - 1]
    for s in shown:
        lines.append(f"{s['file']}  ·  {s['crs']}  ·  cell {s['cell_size']}  ·  vertical unit {s['vertical_unit']}")
        lines.append(f"    vertical datum: {s['vertical_datum']}")
        lines.append(f"    SHA-256 {s['sha256']}")
    rest = c.sources[len(shown):]
    if rest:
        names = ", ".join(s["file"] for s in rest)
        lines.append(f"and {len(rest)} more raster(s): {names}")
    for s in c.other_sources[:MAX_SOURCES_LISTED]:
        lines.append(f"{s['file']}  ·  {s['what']}")
        lines.append(f"    SHA-256 {s['sha256']}")
    if len(c.other_sources) > MAX_SOURCES_LISTED:
        names = ", ".join(s["file"] for s in c.other_sources[MAX_SOURCES_LISTED:])
        lines.append(f"and {len(c.other_sources) - MAX_SOURCES_LISTED} more file(s): {names}")
    prov = r.get("provenance", {})
    lines.append(f"Computed {prov.get('computed_at', '-')} with {prov.get('software_version', c.title.software)}.")
    return lines


def feature_height(f: dict, units: str) -> str:
    if f.get("height_m") is not None:
        text = f"{height_text(f['height_m'], units)} high"
        if f.get("allowance_m"):
            text += f" + {height_text(f['allowance_m'], units)} allowance"
        return text
    if f.get("top_m") is not None:
        return f"top at {height_text(f['top_m'], units)}"
    return "height not given"


def span_text(f: dict, units: str) -> str:
    """'0.176-0.394 km' (or mi): where along the path a feature is crossed."""
    name, per_m = DISTANCE_UNITS[units]
    k = 1000.0 / per_m
    return f"{f.get('from_km', math.nan) * k:.3f}-{f.get('to_km', math.nan) * k:.3f} {name}"


def obstruction_note(c: SheetContent, units: str = "m") -> str:
    crossed = (c.record.get("clutter") or {}).get("crossed") or []
    if crossed:
        parts = []
        for f in crossed[:MAX_CROSSED_LISTED]:
            what = " ".join(str(v) for v in (f.get("kind", ""), f.get("feature", "")) if v not in ("", None))
            span = span_text(f, units)
            parts.append(f"{what or 'obstruction'} at {span}, {feature_height(f, units)}")
        more = (f"; and {len(crossed) - MAX_CROSSED_LISTED} more: all {len(crossed)} are listed on the "
                f"continuation page{'s' if continuation_pages(c) > 1 else ''} of this sheet"
                if len(crossed) > MAX_CROSSED_LISTED else "")
        return f"Obstructions crossed, from site a: {'; '.join(parts)}{more}. They count in the clearance."
    d = c.drawing
    present = d.clutter_m > 0
    if not present.any():
        return "Obstructions: none given; the profile is bare terrain (no buildings or trees)."
    if d.clutter_kind is None:
        kinds = "obstructions"
    else:
        names = [CLUTTER_KINDS.get(int(k), "other obstructions") for k in sorted(set(d.clutter_kind[present]))]
        kinds = ", ".join(dict.fromkeys(names))
    return (
        f"Obstructions: {kinds} stand on the ground along {present.sum()} samples, up to "
        f"{height_text(float(d.clutter_m.max()), units)} high, and count in the clearance."
    )


def continuation_pages(content: SheetContent) -> int:
    """Continuation pages a sheet needs to list every obstruction crossed (0 when the notes hold them)."""
    crossed = (content.record.get("clutter") or {}).get("crossed") or []
    if len(crossed) <= MAX_CROSSED_LISTED:
        return 0
    per_page = CONT_ROWS * CONT_COLUMNS
    return -(-len(crossed) // per_page)
