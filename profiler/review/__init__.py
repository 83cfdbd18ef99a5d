"""The review page of a screening result: one self-contained HTML file to explore links offline.

:func:`build_review_page` reads a screening GeoPackage, recomputes the
profiles of the best-ranked links with the link engine (see
:mod:`profiler.review.profiles` for why they are recomputed), shades the
terrain, and writes a page that needs no server and fetches nothing
(unless a basemap URL is given).  No click here: the command is
:mod:`profiler.cli.review`.
"""

from __future__ import annotations

import hashlib
import os
import re
import tempfile
from dataclasses import dataclass, field
from typing import Any, Sequence
from urllib.parse import urlsplit

import numpy as np

from ..errors import DataFileError, InputError
from .result import VERDICT_ORDER, ScreeningResult, read_result

__all__ = ["build_review_page", "ReviewSummary", "check_tiles_url", "DEFAULT_MAX_PROFILES", "read_result",
           "ScreeningResult", "terrain_of_run"]

#: Profiles kept on a page unless told otherwise (about 0.35 MB of page per 1,000 without clutter).
DEFAULT_MAX_PROFILES = 10_000
#: What the page generator writes in its <meta name="generator">; an existing file without it is not replaced.
GENERATOR_MARK = b'<meta name="generator" content="terrahop review'


@dataclass
class ReviewSummary:
    """What a build made: counts, the output path, its size in bytes, and the notes shown on the page."""

    output: str
    n_links: int
    n_profiles: int
    size_bytes: int
    notes: list[str] = field(default_factory=list)
    terrain: list[str] = field(default_factory=list)


_PLACEHOLDERS = ("{z}", "{x}", "{y}")


def check_tiles_url(url: str) -> str:
    """The basemap template if it is an http(s) URL holding {z}, {x} and {y}; InputError otherwise."""
    text = url.strip()
    parts = urlsplit(text)
    others = re.sub(r"\{[zxy]\}", "", text)
    ok = (parts.scheme in ("http", "https") and parts.netloc and all(p in text for p in _PLACEHOLDERS)
          and "{" not in others and "}" not in others and not re.search(r"[\s\"'<>\\]", text)
          and "{" not in parts.netloc)
    if not ok:
        raise InputError(
            "{parameter} must be an http(s) address with {z}, {x} and {y} in it, such as "
            "https://tiles.example.org/{z}/{x}/{y}.png; got " + repr(url),
            parameter="tiles", value_word="URL")
    return text


def _sha256(path: str) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def terrain_of_run(run: dict[str, Any] | None) -> tuple[list[str], list[str], list[str]]:
    """(dem paths, surface paths, notes) named in a run description; notes say what is missing or changed."""
    dem: list[str] = []
    surface: list[str] = []
    notes: list[str] = []
    if not run or not isinstance(run.get("terrain"), list):
        return dem, surface, notes
    for item in run["terrain"]:
        if not isinstance(item, dict) or not isinstance(item.get("path"), str):
            continue
        path = item["path"]
        if not os.path.isfile(path):
            notes.append(f"the terrain raster named by the run, {path}, is not found; give --dem to draw relief "
                         "and profiles")
            continue
        want = item.get("sha256")
        if isinstance(want, str) and want and _sha256(path) != want.lower():
            notes.append(f"the terrain raster {path} has changed since the screening (its SHA-256 differs): "
                         "relief and profiles may not match the figures")
        (surface if item.get("role") == "surface" else dem).append(path)
    return dem, surface, notes


def _check_output(output: str, inputs: Sequence[str], overwrite: bool) -> str:
    """The output path, refused if it is an input, not .html, in a missing folder or a file not made by us."""
    out = os.path.abspath(output)
    if not out.lower().endswith((".html", ".htm")):
        raise InputError(f"the review page must be an .html file; got {output}", parameter="output",
                         value_word="FILE")
    folder = os.path.dirname(out)
    if not os.path.isdir(folder):
        raise DataFileError(f"cannot write the review page {output}: the folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise DataFileError(f"cannot write the review page {output}: the folder {folder} is not writable")
    for p in inputs:
        if os.path.exists(out) and os.path.exists(p) and os.path.samefile(out, p):
            raise InputError(f"the review page {output} would replace the input {p}; choose another -o")
    if os.path.isdir(out):
        raise DataFileError(f"cannot write the review page {output}: it is a folder")
    if os.path.exists(out) and not overwrite:
        try:
            with open(out, "rb") as fh:
                head = fh.read(4096)
        except OSError as exc:
            raise DataFileError(f"cannot write the review page {output}: {exc.strerror or exc}") from None
        if GENERATOR_MARK not in head:
            raise InputError(f"{output} exists and is not a terrahop review page; choose another -o or add "
                             "--overwrite")
    return out


def build_review_page(
    result_path: str | os.PathLike,
    output: str | os.PathLike,
    *,
    dem: Sequence[str | os.PathLike] = (),
    surface: Sequence[str | os.PathLike] = (),
    tiles: str | None = None,
    max_profiles: int = DEFAULT_MAX_PROFILES,
    points: int | None = None,
    vertical_unit: str | None = None,
    overwrite: bool = False,
    title: str | None = None,
) -> ReviewSummary:
    """Write the review page of the screening result ``result_path`` to ``output`` (an .html file).

    ``dem`` (and ``surface``) override the terrain named in the result's run
    description; ``max_profiles`` bounds the profiles stored (the best ranked
    first); ``tiles`` is an XYZ basemap template the viewer's browser fetches.
    The page is written to a temporary file beside ``output`` and renamed, so
    a failed build leaves no half page.
    """
    from .._version import __version__
    from ..units import EARTH_RADIUS_M, wavelength_m
    from .basemap import relief_image
    from .page import COLUMN_INFO, TABLE_COLUMNS, b64, render_page, verdict_colours
    from .profiles import DEFAULT_POINTS, STEP_M, freq_ghz_of, recompute_profiles

    if tiles is not None:
        tiles = check_tiles_url(tiles)
    if isinstance(max_profiles, bool) or int(max_profiles) != max_profiles or max_profiles < 0:
        raise InputError(f"{{parameter}} must be a whole number, 0 or more; got {max_profiles!r}",
                         parameter="max_profiles", value_word="N")
    points = DEFAULT_POINTS if points is None else int(points)
    src = os.fspath(result_path)
    dem_paths: list[str] = [os.fspath(p) for p in dem]
    surface_paths: list[str] = [os.fspath(p) for p in surface]
    for p in dem_paths + surface_paths:
        if not os.path.isfile(p):
            raise DataFileError(f"raster not found: {p}")
    out = _check_output(os.fspath(output), [src, *dem_paths, *surface_paths], overwrite)
    result = read_result(src)
    notes: list[str] = []
    if not dem_paths:
        dem_paths, run_surface, run_notes = terrain_of_run(result.run)
        surface_paths = surface_paths or run_surface
        notes += run_notes
        if not dem_paths and not run_notes:
            notes.append("no terrain: the result names no terrain rasters (no run description) and no --dem was "
                         "given, so the page has no relief and no profiles")
    freq = freq_ghz_of(result)
    packed = None
    relief = None
    if dem_paths:
        from ..terrain import ElevationModel

        model = ElevationModel(dem_paths, vertical_unit=vertical_unit)
        relief = relief_image(model.sources, result.site_lon, result.site_lat)
        if freq is None:
            notes.append("the frequency could not be found in the result, so no profiles are drawn")
        elif max_profiles > 0 and result.n_links:
            packed = recompute_profiles(result, dem_paths, surface_paths, limit=int(max_profiles), points=points,
                                        freq_ghz=freq, vertical_unit=vertical_unit)
            if packed.mismatch:
                notes.append(
                    f"the profiles recomputed from the terrain given differ from the screening for {packed.mismatch} "
                    f"link(s) (worst clearance up to {packed.largest_mismatch_m:.2f} m apart): this terrain may not be "
                    "the one screened, or the screening counted obstruction layers the page does not redraw")
    profiled = int(np.count_nonzero(result.verdict_code != VERDICT_ORDER.index("error")))
    n_prof = int(packed.link.size) if packed is not None else 0
    if packed is not None and n_prof < profiled:
        no_profile = (f"No profile stored for this link: the page holds the profiles of the {n_prof:,} best-ranked "
                      f"links of {profiled:,} (terrahop review --profiles N keeps more, at about "
                      f"{_mb_per_1000(points, surface_paths):.2f} MB of page per 1,000).")
        notes.append(f"profiles are stored for the {n_prof:,} best-ranked links of {profiled:,}; the others show "
                     "their figures only (--profiles N keeps more)")
    elif packed is None:
        no_profile = ("No profile on this page: " + (notes[-1] if notes else "no terrain was given") + ".")
    else:
        no_profile = "No profile for this link."
    numbers = {c: v for c, v in result.numbers.items() if c in COLUMN_INFO}
    data: dict[str, Any] = {
        "source": os.path.basename(src),
        "n_links": result.n_links,
        "verdicts": list(VERDICT_ORDER),
        "colours": verdict_colours(),
        "palette": {k: v for k, v in _palette().items()},
        "earth_radius_m": EARTH_RADIUS_M,
        "sites": {"names": result.site_names, "lon": b64(result.site_lon, "f8"), "lat": b64(result.site_lat, "f8")},
        "links": {"a": b64(result.a, "i4"), "b": b64(result.b, "i4"), "rank": b64(result.rank, "i4"),
                  "verdict": b64(np.where(result.verdict_code < 0, 255, result.verdict_code), "u1")},
        "columns": [{"name": c, "label": COLUMN_INFO[c][0], "short": COLUMN_INFO[c][1], "unit": COLUMN_INFO[c][2],
                     "digits": COLUMN_INFO[c][3], "data": b64(v, "f4")} for c, v in numbers.items()],
        "table_columns": [c for c in TABLE_COLUMNS if c in numbers],
        "problems": {str(k): v for k, v in result.problems.items()},
        "profiles": None,
        "no_profile_note": no_profile,
        "relief": {"uri": relief.data_uri, "bounds": list(relief.bounds)} if relief is not None else None,
        "tiles": tiles,
        "tiles_host": urlsplit(tiles).netloc if tiles else None,
        "run": result.run,
        "notes": notes,
        "csv_name": os.path.splitext(os.path.basename(out))[0] + "-selection.csv",
    }
    if packed is not None:
        data["profiles"] = {
            "points": packed.points, "step_m": STEP_M, "link": b64(packed.link, "i4"), "base": b64(packed.base_m, "f4"),
            "ground": b64(packed.ground, "u2"), "clutter": b64(packed.clutter, "u2") if packed.clutter is not None else None,
            "freq_ghz": freq, "wavelength_m": float(wavelength_m(float(freq or 0.0))),
        }
        for i, why in (packed.problems or {}).items():
            data["problems"].setdefault(str(i), why)
    html = render_page(_json_safe(data), title=title or f"terrahop review: {os.path.basename(src)}",
                       version=__version__, tiles=tiles)
    folder = os.path.dirname(out)
    fd, tmp = tempfile.mkstemp(prefix=".review-", suffix=".html.tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(html)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes it private; a page is an ordinary file
        os.replace(tmp, out)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return ReviewSummary(output=out, n_links=result.n_links, n_profiles=n_prof, size_bytes=os.path.getsize(out),
                         notes=notes, terrain=dem_paths + surface_paths)


def _mb_per_1000(points: int, surface: Sequence[str]) -> float:
    """Page size of 1,000 stored profiles, MB: uint16 heights (and clutter), an offset and an index, base64."""
    raw = points * 2 * (2 if surface else 1) + 8
    return raw * 4 / 3 * 1000 / 1e6


def _palette() -> dict[str, str]:
    from ..sheets.style import COLOURS

    return {k: COLOURS[k] for k in ("ground_fill", "ground_edge", "line", "fresnel", "worst_k", "worst_point",
                                    "clutter")}


def _json_safe(value: Any) -> Any:
    """``value`` with non-finite floats as None (JSON has no NaN)."""
    if isinstance(value, float):
        return value if np.isfinite(value) else None
    if isinstance(value, dict):
        return {k: _json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe(v) for v in value]
    return value
