"""Tables of site pairs (a screening result) read for sheets and other per-link work.

A pair table is a CSV file (comma, semicolon or tab separated) or a vector
file GDAL reads (GeoPackage, ...) with one row per pair.  Column names are
matched loosely (case, spaces and dashes ignored) against these names and
their aliases:

===============  ==========================================================
column           also accepted
===============  ==========================================================
name_a           site_a, a_name, site_a_name, from, from_name
lat_a            a_lat, latitude_a, lat_a_deg, site_a_lat, from_lat
lon_a            a_lon, lng_a, longitude_a, lon_a_deg, site_a_lon, from_lon
agl_a_m          agl_a, a_agl_m, antenna_agl_a_m, antenna_a_agl_m,
                 height_a_m, mast_a_m, from_agl_m
(the same with b; ``to`` for ``from``)
name             link, link_name, link_id, pair, pair_name (optional)
fade_margin_db   fade_margin, margin_db, or any column containing
                 "fade_margin" (optional; ranks the pairs for ``best``)
===============  ==========================================================

Where the latitude/longitude columns are missing, a line geometry supplies
the two ends (its first and last point, in WGS84).  A row with a bad value
is kept with a sentence in ``problem`` so the caller can report and skip it.
"""

from __future__ import annotations

import csv
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

from ..errors import DataFileError, InputError

__all__ = ["PairRow", "PairTable", "read_pair_table", "select_pairs", "parse_row_spec", "COLUMN_ALIASES"]


def _site_aliases(tag: str, end: str) -> dict[str, list[str]]:
    return {
        f"name_{tag}": [f"name_{tag}", f"site_{tag}", f"{tag}_name", f"site_{tag}_name", f"name{tag}",
                        end, f"{end}_name", f"{end}_site"],
        f"lat_{tag}": [f"lat_{tag}", f"{tag}_lat", f"latitude_{tag}", f"lat_{tag}_deg", f"site_{tag}_lat",
                       f"{tag}_latitude", f"{end}_lat", f"lat{tag}"],
        f"lon_{tag}": [f"lon_{tag}", f"{tag}_lon", f"lng_{tag}", f"long_{tag}", f"longitude_{tag}",
                       f"lon_{tag}_deg", f"site_{tag}_lon", f"{tag}_longitude", f"{end}_lon", f"lon{tag}"],
        f"agl_{tag}_m": [f"agl_{tag}_m", f"agl_{tag}", f"{tag}_agl_m", f"{tag}_agl", f"antenna_agl_{tag}_m",
                         f"antenna_{tag}_agl_m", f"{tag}_antenna_agl_m", f"height_{tag}_m", f"mast_{tag}_m",
                         f"antenna_height_{tag}_m", f"{end}_agl_m"],
    }


#: Canonical column -> accepted names (after normalising).
COLUMN_ALIASES: dict[str, list[str]] = {
    **_site_aliases("a", "from"),
    **_site_aliases("b", "to"),
    "name": ["name", "link", "link_name", "link_id", "pair", "pair_name", "title"],
    "fade_margin_db": ["fade_margin_db", "fade_margin", "margin_db", "design_fade_margin_db"],
}


@dataclass(frozen=True)
class PairRow:
    """One pair of the table; ``row`` counts data rows from 1 in file order."""

    row: int
    name: str
    name_a: str
    lat_a: float
    lon_a: float
    agl_a_m: float | None
    name_b: str
    lat_b: float
    lon_b: float
    agl_b_m: float | None
    fade_margin_db: float | None
    problem: str | None = None


@dataclass(frozen=True)
class PairTable:
    """The rows of a pair table and which optional columns it had."""

    path: str
    rows: tuple[PairRow, ...]
    columns: dict[str, str]  # canonical name -> column name in the file

    @property
    def ranked(self) -> bool:
        return "fade_margin_db" in self.columns


def _norm(name: str) -> str:
    return re.sub(r"[^a-z0-9]+", "_", str(name).strip().lower()).strip("_")


def _match_columns(names: Sequence[str]) -> dict[str, str]:
    by_norm: dict[str, str] = {}
    for n in names:
        by_norm.setdefault(_norm(n), n)
    found: dict[str, str] = {}
    for canon, aliases in COLUMN_ALIASES.items():
        for alias in aliases:
            if alias in by_norm:
                found[canon] = by_norm[alias]
                break
    if "fade_margin_db" not in found:
        for norm, original in by_norm.items():
            if "fade_margin" in norm:
                found["fade_margin_db"] = original
                break
    return found


def _read_csv(path: Path) -> tuple[list[str], list[dict[str, Any]], None]:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{path}: not a text file; give a CSV or a GeoPackage of site pairs") from None
    lines = text.splitlines()
    if not lines or not lines[0].strip():
        raise InputError(f"{path}: empty file; expected a header row with columns such as name_a, lat_a, lon_a")
    try:
        dialect = csv.Sniffer().sniff(lines[0], delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    reader = csv.DictReader(lines, dialect=dialect)
    rows = [r for r in reader if any((v or "").strip() for v in r.values() if isinstance(v, str))]
    return list(reader.fieldnames or []), rows, None


def _read_vector(path: Path, layer: str | None) -> tuple[list[str], list[dict[str, Any]], list[Any] | None]:
    import pyogrio

    try:
        if layer is None:
            # A screening result holds 'links' and 'sites'; the pairs are the links.
            names = [str(n) for n in pyogrio.list_layers(path)[:, 0]]
            layer = "links" if "links" in names else (names[0] if names else None)
        frame = pyogrio.read_dataframe(path, layer=layer)
    except Exception as exc:  # pyogrio raises several error types for unreadable files
        raise DataFileError(f"cannot read {path} as a table of site pairs: {exc}") from None
    geoms = None
    if "geometry" in frame.columns and frame.geometry is not None and len(frame) and frame.crs is not None:
        geoms = list(frame.to_crs("EPSG:4326").geometry)
    columns = [c for c in frame.columns if c != "geometry"]
    records = frame[columns].to_dict("records")
    return columns, records, geoms


def _number(value: Any) -> float | None:
    if value is None:
        return None
    if isinstance(value, (int, float)):
        return float(value) if math.isfinite(float(value)) else None
    text = str(value).strip()
    if not text:
        return None
    return float(text)  # ValueError for garbage, reported by the caller


def read_pair_table(path: str | os.PathLike, *, layer: str | None = None) -> PairTable:
    """Read a CSV or GDAL vector table of site pairs.

    Raises InputError when a required column is missing (naming the
    columns found); bad values in a row give that row a ``problem``.
    """
    p = Path(path)
    if not p.is_file():
        raise DataFileError(f"pair table not found: {p}")
    if p.suffix.lower() in (".csv", ".txt", ".tsv"):
        columns, records, geoms = _read_csv(p)
    else:
        columns, records, geoms = _read_vector(p, layer)
    found = _match_columns(columns)
    use_geometry = geoms is not None and not all(
        k in found for k in ("lat_a", "lon_a", "lat_b", "lon_b")
    )
    required = [] if use_geometry else ["lat_a", "lon_a", "lat_b", "lon_b"]
    missing = [c for c in required if c not in found]
    if missing:
        raise InputError(
            f"{p}: no column for {', '.join(missing)}; columns found: {', '.join(map(str, columns)) or 'none'}. "
            "Expected name_a, lat_a, lon_a, agl_a_m, name_b, lat_b, lon_b, agl_b_m (see terrahop sheet --help)"
        )
    if not records:
        raise InputError(f"{p}: the table has a header but no rows")
    rows = []
    for i, rec in enumerate(records):
        # use_geometry already implies geoms is not None; the test repeats it for the type checker
        rows.append(_make_row(i + 1, rec, found, geoms[i] if use_geometry and geoms is not None else None))
    return PairTable(path=str(p), rows=tuple(rows), columns=found)


def _make_row(n: int, rec: dict, found: dict[str, str], geom: Any) -> PairRow:
    values: dict[str, Any] = {}
    problem = None
    for canon in ("lat_a", "lon_a", "agl_a_m", "lat_b", "lon_b", "agl_b_m", "fade_margin_db"):
        col = found.get(canon)
        if col is None:
            values[canon] = None
            continue
        try:
            values[canon] = _number(rec.get(col))
        except ValueError:
            values[canon] = None
            if canon != "fade_margin_db" and problem is None:
                problem = f"row {n}: {col} {rec.get(col)!r} is not a number"
    if geom is not None and any(values[k] is None for k in ("lat_a", "lon_a", "lat_b", "lon_b")):
        try:
            coords = list(geom.coords)
            (values["lon_a"], values["lat_a"]), (values["lon_b"], values["lat_b"]) = coords[0][:2], coords[-1][:2]
        except (AttributeError, NotImplementedError, IndexError, TypeError):
            problem = problem or f"row {n}: no coordinates and the geometry is not a line"
    for k in ("lat_a", "lon_a", "lat_b", "lon_b"):
        if values[k] is None and problem is None:
            problem = f"row {n}: {found.get(k, k)} is empty"
    def text(key: str, default: str) -> str:
        col = found.get(key)
        v = rec.get(col) if col else None
        if v is None or (isinstance(v, float) and math.isnan(v)) or not str(v).strip():
            return default
        return str(v).strip()

    name_a = text("name_a", f"A{n}")
    name_b = text("name_b", f"B{n}")
    return PairRow(
        row=n,
        name=text("name", f"{name_a} - {name_b}"),
        name_a=name_a,
        lat_a=values["lat_a"] if values["lat_a"] is not None else math.nan,
        lon_a=values["lon_a"] if values["lon_a"] is not None else math.nan,
        agl_a_m=values["agl_a_m"],
        name_b=name_b,
        lat_b=values["lat_b"] if values["lat_b"] is not None else math.nan,
        lon_b=values["lon_b"] if values["lon_b"] is not None else math.nan,
        agl_b_m=values["agl_b_m"],
        fade_margin_db=values["fade_margin_db"],
        problem=problem,
    )


def parse_row_spec(spec: str, n_rows: int | None = None) -> list[int]:
    """'1,3,5-7' -> [1, 3, 5, 6, 7] (1-based data rows); InputError if garbled.

    With ``n_rows`` (the table's row count) a row past the end is refused
    before any range is expanded, so '1-999999999' costs nothing.
    """
    ranges: list[tuple[int, int]] = []
    for part in str(spec).replace(" ", "").split(","):
        if not part:
            continue
        m = re.fullmatch(r"(\d{1,18})(?:-(\d{1,18}))?", part)
        if not m:
            raise InputError(f"row selection must look like 1,3,5-7, got {spec!r}")
        lo = int(m.group(1))
        hi = int(m.group(2) or lo)
        if lo < 1 or hi < lo:
            raise InputError(f"row selection {part!r}: rows count from 1 and ranges go upwards")
        if n_rows is not None and hi > n_rows:
            beyond = f"{max(lo, n_rows + 1)}" + (f"-{hi}" if hi > max(lo, n_rows + 1) else "")
            raise InputError(f"row selection {part!r}: no row {beyond}; the table has rows 1 to {n_rows}")
        ranges.append((lo, hi))
    if not ranges:
        raise InputError(f"row selection {spec!r} selects no rows")
    total = sum(hi - lo + 1 for lo, hi in ranges)
    if total > MAX_ROWS_SELECTED:
        raise InputError(f"row selection {spec!r} picks {total:,} rows; at most {MAX_ROWS_SELECTED:,} "
                         "sheets are drawn in one run")
    out: list[int] = []
    for lo, hi in ranges:
        out.extend(range(lo, hi + 1))
    return list(dict.fromkeys(out))


#: Most rows ``--rows`` may pick (each becomes a page).
MAX_ROWS_SELECTED = 100_000


def select_pairs(table: PairTable, *, rows: Sequence[int] | None = None, best: int | None = None) -> list[PairRow]:
    """Pick rows: the given row numbers (file order kept), then the ``best`` by fade margin.

    Without a fade-margin column ``best`` takes the first rows in file order.
    Rows with problems rank last; when selected they stay in the list and
    the caller reports and skips them.
    """
    chosen = list(table.rows)
    if rows is not None:
        by_number = {r.row: r for r in table.rows}
        absent = [n for n in rows if n not in by_number]
        if absent:
            shown = ", ".join(map(str, absent[:10])) + (f" and {len(absent) - 10} more" if len(absent) > 10 else "")
            raise InputError(f"{table.path}: no row {shown}; the table has rows 1 to {len(table.rows)}")
        chosen = [by_number[n] for n in rows]
    if best is not None:
        if best < 1:
            raise InputError(f"--best must be 1 or more, got {best}")
        if table.ranked:
            chosen = sorted(
                chosen,
                key=lambda r: (
                    r.problem is not None,
                    r.fade_margin_db is None,
                    -(r.fade_margin_db if r.fade_margin_db is not None else 0.0),
                ),
            )
        else:
            chosen = sorted(chosen, key=lambda r: r.problem is not None)
        chosen = chosen[:best]
    return chosen


def __getattr__(name: str):
    # The old name, kept for code written before the rename (issue 12); warns once per use.
    if name == "read_pairs":
        import warnings

        warnings.warn(f"{__name__}.read_pairs is now {read_pair_table.__name__}", DeprecationWarning, stacklevel=2)
        return read_pair_table
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
