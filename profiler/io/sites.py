"""Site files: a CSV table or any point layer geopandas reads, in any CRS.

Each row is one candidate site: a name, a position, an antenna height above
ground and, optionally, an antenna gain and the tallest mast allowed there.
Other columns are carried through to the outputs.  Rows that cannot be used
(unparseable or out-of-range coordinates, missing or duplicate names,
heights outside the shared ranges of :mod:`profiler.validation`) are
returned as :class:`BadRow` with their row number and skipped; reading goes on.

CSV files may be separated by commas, semicolons or tabs (sniffed from the
header); with semicolons or tabs a decimal comma (``45,5``) is read as a
decimal point.  A blank optional cell (gain, mast limit) means "not given".
Longitudes in 0..360 are folded into -180..180.
"""

from __future__ import annotations

import csv
import difflib
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, Sequence, overload

import numpy as np

from ..errors import PARAMETER, DataFileError, InputError
from ..validation import check_number, check_numbers, normalise_lon, position_problems

__all__ = ["SiteTable", "BadRow", "read_sites", "read_name_pairs", "read_name_pairs_with_heights",
           "PAIR_HEIGHT_COLUMNS", "CSV_SUFFIXES", "DEFAULT_COLUMNS"]

CSV_SUFFIXES = {".csv", ".txt", ".tsv"}

#: Column names tried, in order, when no column is named for a role.
DEFAULT_COLUMNS: dict[str, tuple[str, ...]] = {
    "name": ("name", "site", "site_name", "id"),
    "lat": ("lat", "latitude", "lat_deg"),
    "lon": ("lon", "lng", "long", "longitude", "lon_deg"),
    "agl": ("antenna_agl_m", "agl_m", "antenna_height_m", "height_agl_m"),
    "gain": ("gain_dbi", "antenna_gain_dbi"),
    "max_mast": ("max_mast_m", "max_agl_m"),
}

#: Antenna height above ground used for every site when the file has no height column, m.
DEFAULT_AGL_M = 10.0

_ROLE_WORDS = {"name": "name", "lat": "latitude", "lon": "longitude", "agl": "antenna height",
               "gain": "antenna gain", "max_mast": "mast limit"}


@dataclass(frozen=True)
class BadRow:
    """A row of an input file that was skipped, and why (row numbers as a planner sees them)."""

    source: str
    row: int
    name: str
    reason: str

    def describe(self) -> str:
        label = f" ({self.name!r})" if self.name else ""
        return f"{self.source} row {self.row}{label}: {self.reason}"


@dataclass(frozen=True)
class SiteTable:
    """Usable sites, arrays of shape (sites,) in file order.

    ``rows`` are the row numbers in the source (CSV: line number, header on
    line 1; layers: feature number from 1).  ``extra`` holds carried-through
    columns as a pandas DataFrame (index 0..sites-1).  ``gain_dbi`` and
    ``max_mast_m`` are None when the file has no such column.
    """

    source: str
    names: np.ndarray
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    antenna_agl_m: np.ndarray
    gain_dbi: np.ndarray | None
    max_mast_m: np.ndarray | None
    rows: np.ndarray
    extra: Any
    #: Role (name, lat, lon, agl, gain, max_mast) -> the column it came from, or a sentence
    #: such as "--agl-m 10 m for every site (no height column)".
    columns: dict[str, str] = field(default_factory=dict)

    def describe_columns(self) -> str:
        """One line saying which column each role came from and which default served every site."""
        parts = [f"{_ROLE_WORDS[r]} from {c if c.startswith('--') or ' ' in c else repr(c)}"
                 for r, c in self.columns.items()]
        return f"{self.source}: " + "; ".join(parts)

    def __len__(self) -> int:
        return int(self.names.shape[0])

    def subset(self, keep: np.ndarray) -> "SiteTable":
        """The sites where ``keep`` is True (or at the given indices)."""
        keep = np.asarray(keep)
        pick = (lambda a: None if a is None else a[keep])
        extra = self.extra.iloc[np.flatnonzero(keep) if keep.dtype == bool else keep].reset_index(drop=True)
        return SiteTable(
            source=self.source, names=self.names[keep], lat_deg=self.lat_deg[keep],
            lon_deg=self.lon_deg[keep], antenna_agl_m=self.antenna_agl_m[keep],
            gain_dbi=pick(self.gain_dbi), max_mast_m=pick(self.max_mast_m),
            rows=self.rows[keep], extra=extra, columns=self.columns,
        )


@overload
def _find(columns: Sequence[str], role: str, given: str | None, source: str, required: Literal[True],
          default_given: bool = False) -> str: ...
@overload
def _find(columns: Sequence[str], role: str, given: str | None, source: str, required: bool,
          default_given: bool = False) -> str | None: ...
def _find(columns: Sequence[str], role: str, given: str | None, source: str, required: bool,
          default_given: bool = False) -> str | None:
    """The column for ``role``; a required role never returns None (InputError instead)."""
    if given is not None:
        if given not in columns:
            raise InputError(
                f"{source}: no column {given!r} for the site {role}; columns are: {', '.join(columns)}"
            )
        return given
    lower = {c.lower(): c for c in columns}
    for candidate in DEFAULT_COLUMNS[role]:
        if candidate in lower:
            return lower[candidate]
    near = None if default_given else _near_match(columns, role)
    if near is not None:
        # e.g. a Shapefile cuts antenna_agl_m to antenna_ag; guessing would be silent, a default wrong.
        raise InputError(
            f"{source}: no column named {' or '.join(DEFAULT_COLUMNS[role][:2])} for the site "
            f"{_ROLE_WORDS[role]}, but column {near!r} looks like one (Shapefiles cut names at 10 characters); "
            f"name it with {PARAMETER}"
            + (", or give --agl-m to use one height for every site" if role == "agl" else ""),
            parameter=f"{role}_col", value_word=near,
        )
    if required:
        raise InputError(
            f"{source}: cannot tell which column holds the site {role}; tried "
            f"{', '.join(DEFAULT_COLUMNS[role])}; name it with {PARAMETER} "
            f"(columns are: {', '.join(columns)})", parameter=f"{role}_col",
        )
    return None


def _norm(name: str) -> str:
    return re.sub(r"[^a-z0-9]+", "_", str(name).strip().lower()).strip("_")


def _near_match(columns: Sequence[str], role: str) -> str | None:
    """A column that looks like a cut or misspelt default name of ``role``, or None."""
    for c in columns:
        n = _norm(c)
        if n == "antenna":  # the column of antenna files (profiler.equipment.site_antennas), not a cut name
            continue
        for candidate in DEFAULT_COLUMNS[role]:
            if n == candidate:
                continue
            truncated = len(n) >= 6 and candidate.startswith(n)
            if truncated or difflib.SequenceMatcher(None, n, candidate).ratio() >= 0.88:
                return c
    return None


_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d*,\d+\s*$")


def _numbers(values: Any, decimal_comma: bool = False) -> np.ndarray:
    """Cells as floats, NaN where not a number; ``decimal_comma`` reads 45,5 as 45.5."""
    import pandas as pd

    text = pd.Series(values).astype(str).str.strip()
    if decimal_comma:
        text = text.where(~text.str.match(_DECIMAL_COMMA), text.str.replace(",", ".", regex=False))
    return pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)


def _sniff_separator(p: Path) -> str:
    """Comma, semicolon or tab, from the header line (as the pair-table reader does)."""
    if p.suffix.lower() == ".tsv":
        return "\t"
    try:
        with open(p, encoding="utf-8-sig", errors="replace") as fh:
            header = fh.readline()
    except OSError:
        return ","
    try:
        return csv.Sniffer().sniff(header, delimiters=",;\t").delimiter
    except csv.Error:
        return ","


def read_sites(
    path: str | os.PathLike,
    *,
    name_col: str | None = None,
    lat_col: str | None = None,
    lon_col: str | None = None,
    agl_col: str | None = None,
    gain_col: str | None = None,
    max_mast_col: str | None = None,
    default_agl_m: float | None = None,
    layer: str | None = None,
) -> tuple[SiteTable, list[BadRow]]:
    """Read candidate sites from a CSV file or a point layer (GeoPackage, GeoJSON, Shapefile...).

    CSV positions are WGS84 decimal degrees in the latitude and longitude
    columns; layer positions come from the point geometry in any CRS
    (reprojected to WGS84).  Antenna height comes from a column or
    ``default_agl_m`` (None: :data:`DEFAULT_AGL_M`).  Returns the usable
    sites and the skipped rows; ``SiteTable.columns`` says where each role came from.
    """
    _check_default_agl(default_agl_m)
    p = Path(path)
    source = p.name
    if not p.exists():
        raise DataFileError(f"sites file not found: {p}")
    frame, geometry, rows, decimal_comma = _read_frame(p, layer)
    columns = [str(c) for c in frame.columns]
    frame.columns = columns
    name_c = _find(columns, "name", name_col, source, required=True)
    agl_c = _find(columns, "agl", agl_col, source, required=False, default_given=default_agl_m is not None)
    gain_c = _find(columns, "gain", gain_col, source, required=False)
    mast_c = _find(columns, "max_mast", max_mast_col, source, required=False)
    n = len(frame)
    reasons: list[str | None] = [None] * n

    def flag(mask: np.ndarray, reason_of) -> None:  # the first reason found for a row is kept
        for k in np.flatnonzero(mask):
            if reasons[k] is None:
                reasons[k] = reason_of(k)

    where = {"name": name_c}
    if geometry is None:
        lat_c = _find(columns, "lat", lat_col, source, required=True)
        lon_c = _find(columns, "lon", lon_col, source, required=True)
        lat, lon = _csv_positions(frame, lat_c, lon_c, decimal_comma, flag)
        used = {name_c, lat_c, lon_c}
        where.update(lat=lat_c, lon=lon_c)
    else:
        lat, lon = _layer_positions(geometry, flag)
        used = {name_c}
        where.update(lat="the point geometry", lon="the point geometry")
    # One position rule for every entry point (profiler.validation); 0..360 folded to -180..180.
    position = position_problems(lat, lon)
    flag(np.isfinite(lat) & np.isfinite(lon) & np.array([r is not None for r in position], dtype=bool),
         lambda k: position[k])
    lon = normalise_lon(lon)
    # Missing names (None/NaN in a layer's attribute table) read as "", never as the text "nan".
    names = np.array(["" if _missing(v) else str(v).strip() for v in frame[name_c].to_numpy(dtype=object)],
                     dtype=object)
    flag(np.array([not s or s.lower() == "nan" for s in names], dtype=bool), lambda k: "has no name")
    agl, where["agl"] = _antenna_heights(frame, agl_c, default_agl_m, decimal_comma, flag)
    if agl_c is not None:
        used.add(agl_c)
    gain = _optional(frame, gain_c, "antenna gain", "gain_a_dbi", decimal_comma, flag)
    mast = _optional(frame, mast_c, "maximum mast height", "max_mast_m", decimal_comma, flag)
    for role, column in (("gain", gain_c), ("max_mast", mast_c)):
        if column is not None:
            used.add(column)
            where[role] = column
    _flag_duplicates(names, rows, reasons)
    bad = [BadRow(source, int(rows[k]), str(names[k]) if names[k] else "", reason)
           for k, reason in enumerate(reasons) if reason is not None]
    keep = np.array([r is None for r in reasons], dtype=bool)
    extra_cols = [c for c in columns if c not in used]
    extra = frame.loc[keep, extra_cols].reset_index(drop=True)
    table = SiteTable(
        source=source, names=np.asarray(names[keep], dtype=object), lat_deg=lat[keep], lon_deg=lon[keep],
        antenna_agl_m=agl[keep], gain_dbi=None if gain is None else gain[keep],
        max_mast_m=None if mast is None else mast[keep], rows=rows[keep], extra=extra, columns=where,
    )
    return table, bad


def _check_default_agl(default_agl_m: float | None) -> None:
    """InputError (naming ``default_agl_m``) unless the one height for every site is in range."""
    if default_agl_m is None:
        return
    try:
        check_number(default_agl_m, "antenna_agl_m", PARAMETER)
    except InputError as exc:
        raise InputError(exc.template, parameter="default_agl_m") from None


def _read_frame(p: Path, layer: str | None) -> tuple[Any, Any, np.ndarray, bool]:
    """(table of text, WGS84 point geometry or None, file row of each record, decimal commas) of a sites file."""
    import pandas as pd

    if p.suffix.lower() in CSV_SUFFIXES:
        if layer is not None:
            raise InputError(f"{p}: a CSV table has no layers; --layer {layer!r} is for multi-layer files "
                             "such as GeoPackage")
        sep = _sniff_separator(p)
        _check_field_counts(p, sep)
        try:
            frame = pd.read_csv(p, dtype=str, keep_default_na=False, sep=sep, skipinitialspace=True,
                                encoding="utf-8-sig", index_col=False)
        except (pd.errors.ParserError, UnicodeDecodeError) as exc:
            hint = ("; numbers with decimal commas need columns separated by semicolons or tabs"
                    if sep == "," and isinstance(exc, pd.errors.ParserError) else "")
            raise InputError(f"{p}: not a readable CSV table ({str(exc).strip()}){hint}") from None
        except pd.errors.EmptyDataError:
            raise InputError(f"{p}: the sites file is empty") from None
        return frame, None, np.arange(len(frame)) + 2, sep != ","  # header on line 1
    import geopandas as gpd

    try:
        frame = gpd.read_file(p, layer=layer)
    except Exception as exc:  # pyogrio raises its own error types
        raise DataFileError(f"cannot read {p} as a point layer: {exc}") from None
    if frame.crs is None:
        raise InputError(f"{p}: the layer has no coordinate reference system; assign one and try again")
    geometry = frame.geometry.to_crs("EPSG:4326")
    frame = pd.DataFrame(frame.drop(columns=frame.geometry.name))
    return frame, geometry, np.arange(len(frame)) + 1, False


def _csv_positions(frame: Any, lat_c: str, lon_c: str, decimal_comma: bool, flag) -> tuple[np.ndarray, np.ndarray]:
    """Latitudes and longitudes (degrees) from two text columns; rows that are not numbers flagged."""
    lat = _numbers(frame[lat_c], decimal_comma)
    lon = _numbers(frame[lon_c], decimal_comma)
    raw_lat, raw_lon = frame[lat_c].to_numpy(), frame[lon_c].to_numpy()
    flag(~np.isfinite(lat), lambda k: f"latitude {raw_lat[k]!r} is not a number")
    flag(~np.isfinite(lon), lambda k: f"longitude {raw_lon[k]!r} is not a number")
    return lat, lon


def _missing(value: Any) -> bool:
    """A cell with no value: None or a float NaN."""
    return value is None or (isinstance(value, float) and value != value)


def _layer_positions(geometry: Any, flag) -> tuple[np.ndarray, np.ndarray]:
    """Latitudes and longitudes (degrees) of point geometries; empty and non-point features flagged."""
    n = len(geometry)
    kinds = geometry.geom_type.to_numpy()
    empty = geometry.isna().to_numpy() | geometry.is_empty.to_numpy()
    flag(empty, lambda k: "has no geometry")
    flag(~empty & (kinds != "Point"), lambda k: f"geometry is a {kinds[k]}, not a point")
    point = ~empty & (kinds == "Point")
    lat = np.full(n, np.nan)
    lon = np.full(n, np.nan)
    lat[point] = geometry[point].y.to_numpy()
    lon[point] = geometry[point].x.to_numpy()
    return lat, lon


def _antenna_heights(frame: Any, agl_c: str | None, default_agl_m: float | None, decimal_comma: bool,
                     flag) -> tuple[np.ndarray, str]:
    """(antenna heights above ground m, where they came from): a column, or one height for every site."""
    n = len(frame)
    if agl_c is not None:
        agl = _numbers(frame[agl_c], decimal_comma)
        raw = frame[agl_c].to_numpy()
        flag(~np.isfinite(agl), lambda k: f"antenna height {raw[k]!r} is not a number")
        agl_range = check_numbers(np.where(np.isfinite(agl), agl, 0.0), "antenna_agl_m")
        flag(np.array([r is not None for r in agl_range], dtype=bool), lambda k: agl_range[k])
        return agl, agl_c
    height = DEFAULT_AGL_M if default_agl_m is None else float(default_agl_m)
    given = "--agl-m" if default_agl_m is not None else "default"
    return np.full(n, height), f"{given} {height:g} m for every site (no height column)"


def _flag_duplicates(names: np.ndarray, rows: np.ndarray, reasons: list[str | None]) -> None:
    """Mark each later row whose name an earlier usable row already has."""
    first_row: dict[str, int] = {}
    for k, nm in enumerate(names):
        if reasons[k] is not None:
            continue
        if nm in first_row:
            reasons[k] = f"duplicate name (first on row {first_row[nm]})"
        else:
            first_row[nm] = int(rows[k])


def _check_field_counts(p: Path, sep: str) -> None:
    """InputError naming the first line with more cells than the header.

    pandas would otherwise take the extra leading cells as an index and shift
    every value of that row (a site named '1' at the wrong place).
    """
    try:
        with open(p, encoding="utf-8-sig", newline="") as fh:
            reader = csv.reader(fh, delimiter=sep)
            header = next(reader, None)
            if header is None:
                return
            for line, cells in enumerate(reader, start=2):
                if len(cells) > len(header):
                    hint = ("; numbers with decimal commas need columns separated by semicolons or tabs"
                            if sep == "," else "")
                    raise InputError(f"{p}: line {line} has {len(cells)} cells but the header has "
                                     f"{len(header)}{hint}")
    except UnicodeDecodeError:
        return  # reported by the reader below
    except csv.Error as exc:
        raise InputError(f"{p}: not a readable CSV table ({exc})") from None


def _optional(frame: Any, column: str | None, what: str, limit: str, decimal_comma: bool, flag) -> np.ndarray | None:
    """An optional numeric column: blank cells are NaN ("not given"); garbage and out-of-range values flag the row."""
    if column is None:
        return None
    values = _numbers(frame[column], decimal_comma)
    raw = frame[column].astype(str).str.strip().to_numpy()
    blank = raw == ""
    flag(~np.isfinite(values) & ~blank, lambda k: f"{what} {raw[k]!r} is not a number")
    ranges = check_numbers(np.where(np.isfinite(values), values, 0.0), limit)
    flag(np.array([r is not None for r in ranges], dtype=bool), lambda k: f"{what}: {ranges[k]}")
    return values


def read_name_pairs(
    path: str | os.PathLike, names: np.ndarray, *, a_col: str | None = None, b_col: str | None = None
) -> tuple[np.ndarray, np.ndarray, list[BadRow]]:
    """Read a pairs file (CSV, two columns of site names) against the usable sites.

    Columns default to ``a``/``b`` or ``site_a``/``site_b``, else the first
    two.  Rows naming an unknown or skipped site, a site with itself, or a
    pair already listed (in either direction) are skipped and reported.
    Returns site indices ``(a, b)`` in file order and the skipped rows.
    """
    _, _, a, b, bad = _name_pairs(path, names, a_col, b_col)
    return a, b, bad


#: Columns of a pairs file giving the antenna height at each end of that pair, m.
PAIR_HEIGHT_COLUMNS = ("height_a_m", "height_b_m")


def read_name_pairs_with_heights(
    path: str | os.PathLike, names: np.ndarray
) -> tuple[np.ndarray, np.ndarray, tuple[np.ndarray, np.ndarray] | None, list[BadRow]]:
    """:func:`read_name_pairs`, and the pair's own antenna heights of columns ``height_a_m``/``height_b_m``.

    The heights (m, measured as each site's own height is: above the ground,
    or above the roof for a roof mount) are None when the file has neither
    column, NaN for a row that leaves both cells blank (the sites' heights
    apply).  A row with one height only, a height that is not a number or
    is out of range is skipped and reported; a file with one of the two
    columns only is refused.
    """
    frame, rows, a, b, bad = _name_pairs(path, names, None, None)
    low = {c.lower(): c for c in frame.columns}
    cols = [low.get(c) for c in PAIR_HEIGHT_COLUMNS]
    if cols == [None, None]:
        return a, b, None, bad
    if None in cols:
        have, lack = (PAIR_HEIGHT_COLUMNS if cols[1] is None else PAIR_HEIGHT_COLUMNS[::-1])
        raise InputError(f"{Path(path)}: column {have} without {lack}; give the heights of both ends "
                         "(a blank pair of cells keeps the sites' heights) or neither column")
    raw = [frame[c].astype(str).str.strip().to_numpy()[rows] for c in cols]
    values = [_numbers(r) for r in raw]
    reasons: list[str | None] = [None] * rows.size

    def flag(mask: np.ndarray, reason_of) -> None:  # the first reason found for a row is kept
        for k in np.flatnonzero(mask):
            if reasons[k] is None:
                reasons[k] = reason_of(int(k))

    for end, (r, v, col) in enumerate(zip(raw, values, cols)):
        other, other_col = raw[1 - end], cols[1 - end]
        ranges = check_numbers(np.where(np.isfinite(v), v, 0.0), "antenna_agl_m")
        flag((r == "") & (other != ""),
             lambda k: f"{col} is blank but {other_col} is not; give both heights or neither")
        flag((r != "") & ~np.isfinite(v), lambda k: f"{col} {r[k]!r} is not a number")
        flag((r != "") & np.array([x is not None for x in ranges], dtype=bool), lambda k: f"{col}: {ranges[k]}")
    ok = np.array([x is None for x in reasons], dtype=bool)
    for j in np.flatnonzero(~ok):
        bad.append(BadRow(Path(path).name, int(rows[j]) + 2, f"{names[a[j]]} - {names[b[j]]}", str(reasons[j])))
    bad.sort(key=lambda r: r.row)
    return a[ok], b[ok], (values[0][ok], values[1][ok]), bad


def _name_pairs(
    path: str | os.PathLike, names: np.ndarray, a_col: str | None, b_col: str | None
) -> tuple[Any, np.ndarray, np.ndarray, np.ndarray, list[BadRow]]:
    """(the table, the kept rows' positions, a, b, skipped rows) of a pairs file: see :func:`read_name_pairs`."""
    import pandas as pd

    p = Path(path)
    if not p.exists():
        raise DataFileError(f"pairs file not found: {p}")
    try:
        frame = pd.read_csv(p, dtype=str, keep_default_na=False, skipinitialspace=True, sep=_sniff_separator(p),
                            encoding="utf-8-sig")
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: not a readable CSV pairs file ({exc})") from None
    cols = [str(c) for c in frame.columns]
    frame.columns = cols
    if a_col is None or b_col is None:
        low = {c.lower(): c for c in cols}
        for ca, cb in (("a", "b"), ("site_a", "site_b"), ("from", "to")):
            if ca in low and cb in low:
                a_col, b_col = a_col or low[ca], b_col or low[cb]
                break
        else:
            if len(cols) < 2:
                raise InputError(f"{p}: a pairs file needs two columns of site names (a, b)")
            a_col, b_col = a_col or cols[0], b_col or cols[1]
    for c in (a_col, b_col):
        if c not in cols:
            raise InputError(f"{p}: no column {c!r}; columns are: {', '.join(cols)}")
    index = {str(nm): k for k, nm in enumerate(names)}
    col_a = frame[a_col].astype(str).str.strip()
    col_b = frame[b_col].astype(str).str.strip()
    # Whole columns at once; sentences only for the rows left out (in file order).
    a = col_a.map(index).to_numpy(dtype=float, na_value=np.nan)
    b = col_b.map(index).to_numpy(dtype=float, na_value=np.nan)
    known = ~np.isnan(a) & ~np.isnan(b)
    a = np.where(known, a, -1).astype(np.int64)
    b = np.where(known, b, -1).astype(np.int64)
    valid = known & (a != b)
    key = np.minimum(a, b) * max(len(index), 1) + np.maximum(a, b)
    rows = np.flatnonzero(valid)
    _, first = np.unique(key[rows], return_index=True)
    keep = np.zeros(len(frame), dtype=bool)
    keep[rows[first]] = True
    first_row = dict(zip(key[rows[first]].tolist(), (rows[first] + 2).tolist()))
    bad = []
    names_a, names_b = col_a.to_numpy(), col_b.to_numpy()
    for k in np.flatnonzero(~keep).tolist():
        na, nb = names_a[k], names_b[k]
        label = f"{na} - {nb}"
        if not known[k]:
            missing = na if na not in index else nb
            reason = f"site {missing!r} is not among the usable sites"
        elif a[k] == b[k]:
            reason = "pairs a site with itself"
        else:
            reason = f"same pair as row {first_row[int(key[k])]}"
        bad.append(BadRow(p.name, k + 2, label, reason))
    return frame, np.flatnonzero(keep), a[keep], b[keep], bad


def __getattr__(name: str):
    # The old name, kept for code written before the rename (issue 12); warns once per use.
    if name == "read_pairs":
        import warnings

        warnings.warn(f"{__name__}.read_pairs is now {read_name_pairs.__name__}", DeprecationWarning, stacklevel=2)
        return read_name_pairs
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
