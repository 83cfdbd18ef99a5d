"""Site files: a CSV table or any point layer geopandas reads, in any CRS.

Each row is one candidate site: a name, a position, an antenna height above
ground and, optionally, an antenna gain and the tallest mast allowed there.
Other columns are carried through to the outputs.  Rows that cannot be used
(unparseable or out-of-range coordinates, missing or duplicate names,
negative heights) are returned as :class:`BadRow` with their row number and
skipped; reading goes on.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

import numpy as np

from ..errors import DataFileError, InputError

__all__ = ["SiteTable", "BadRow", "read_sites", "read_pairs", "CSV_SUFFIXES", "DEFAULT_COLUMNS"]

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
            rows=self.rows[keep], extra=extra,
        )


def _find(columns: Sequence[str], role: str, given: str | None, source: str, required: bool) -> str | None:
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
    if required:
        raise InputError(
            f"{source}: cannot tell which column holds the site {role}; tried "
            f"{', '.join(DEFAULT_COLUMNS[role])}; name it with --{role}-col "
            f"(columns are: {', '.join(columns)})"
        )
    return None


def _numbers(values: Any) -> np.ndarray:
    import pandas as pd

    return pd.to_numeric(pd.Series(values).astype(str).str.strip(), errors="coerce").to_numpy(dtype=float)


def read_sites(
    path: str | os.PathLike,
    *,
    name_col: str | None = None,
    lat_col: str | None = None,
    lon_col: str | None = None,
    agl_col: str | None = None,
    gain_col: str | None = None,
    max_mast_col: str | None = None,
    default_agl_m: float = 10.0,
    layer: str | None = None,
) -> tuple[SiteTable, list[BadRow]]:
    """Read candidate sites from a CSV file or a point layer (GeoPackage, GeoJSON, Shapefile...).

    CSV positions are WGS84 decimal degrees in the latitude and longitude
    columns; layer positions come from the point geometry in any CRS
    (reprojected to WGS84).  Antenna height comes from a column or
    ``default_agl_m``.  Returns the usable sites and the skipped rows.
    """
    import pandas as pd

    p = Path(path)
    source = p.name
    if not p.exists():
        raise DataFileError(f"sites file not found: {p}")
    geometry = None
    if p.suffix.lower() in CSV_SUFFIXES:
        sep = "\t" if p.suffix.lower() == ".tsv" else ","
        try:
            frame = pd.read_csv(p, dtype=str, keep_default_na=False, sep=sep, skipinitialspace=True)
        except (pd.errors.ParserError, UnicodeDecodeError) as exc:
            raise InputError(f"{p}: not a readable CSV table ({exc})") from None
        except pd.errors.EmptyDataError:
            raise InputError(f"{p}: the sites file is empty") from None
        rows = np.arange(len(frame)) + 2  # header on line 1
    else:
        import geopandas as gpd

        try:
            frame = gpd.read_file(p, layer=layer)
        except Exception as exc:  # pyogrio raises its own error types
            raise DataFileError(f"cannot read {p} as a point layer: {exc}") from None
        if frame.crs is None:
            raise InputError(f"{p}: the layer has no coordinate reference system; assign one and try again")
        geometry = frame.geometry.to_crs("EPSG:4326")
        frame = pd.DataFrame(frame.drop(columns=frame.geometry.name))
        rows = np.arange(len(frame)) + 1
    columns = [str(c) for c in frame.columns]
    frame.columns = columns
    name_c = _find(columns, "name", name_col, source, required=True)
    agl_c = _find(columns, "agl", agl_col, source, required=False)
    gain_c = _find(columns, "gain", gain_col, source, required=False)
    mast_c = _find(columns, "max_mast", max_mast_col, source, required=False)
    n = len(frame)
    reasons: list[str | None] = [None] * n

    def flag(mask: np.ndarray, reason_of) -> None:
        for k in np.flatnonzero(mask):
            if reasons[k] is None:
                reasons[k] = reason_of(k)

    if geometry is None:
        lat_c = _find(columns, "lat", lat_col, source, required=True)
        lon_c = _find(columns, "lon", lon_col, source, required=True)
        lat = _numbers(frame[lat_c])
        lon = _numbers(frame[lon_c])
        raw_lat, raw_lon = frame[lat_c].to_numpy(), frame[lon_c].to_numpy()
        flag(~np.isfinite(lat), lambda k: f"latitude {raw_lat[k]!r} is not a number")
        flag(~np.isfinite(lon), lambda k: f"longitude {raw_lon[k]!r} is not a number")
        used = {name_c, lat_c, lon_c}
    else:
        kinds = geometry.geom_type.to_numpy()
        empty = geometry.isna().to_numpy() | geometry.is_empty.to_numpy()
        flag(empty, lambda k: "has no geometry")
        flag(~empty & (kinds != "Point"), lambda k: f"geometry is a {kinds[k]}, not a point")
        point = ~empty & (kinds == "Point")
        lat = np.full(n, np.nan)
        lon = np.full(n, np.nan)
        lat[point] = geometry[point].y.to_numpy()
        lon[point] = geometry[point].x.to_numpy()
        used = {name_c}
    flag(np.isfinite(lat) & ((lat < -90) | (lat > 90)), lambda k: f"latitude {lat[k]} is outside -90..90 degrees")
    flag(np.isfinite(lon) & ((lon < -180) | (lon > 180)), lambda k: f"longitude {lon[k]} is outside -180..180 degrees")
    names = frame[name_c].astype(str).str.strip().to_numpy(dtype=object)
    flag(np.array([not s or s.lower() == "nan" for s in names], dtype=bool), lambda k: "has no name")
    if agl_c is not None:
        agl = _numbers(frame[agl_c])
        raw = frame[agl_c].to_numpy()
        flag(~np.isfinite(agl), lambda k: f"antenna height {raw[k]!r} is not a number")
        flag(np.isfinite(agl) & (agl < 0), lambda k: f"antenna height {agl[k]} m is negative")
        used.add(agl_c)
    else:
        agl = np.full(n, float(default_agl_m))
    gain = None
    if gain_c is not None:
        gain = _numbers(frame[gain_c])
        raw_g = frame[gain_c].to_numpy()
        flag(~np.isfinite(gain), lambda k: f"antenna gain {raw_g[k]!r} is not a number")
        used.add(gain_c)
    mast = None
    if mast_c is not None:
        mast = _numbers(frame[mast_c])
        raw_m = frame[mast_c].to_numpy()
        flag(~np.isfinite(mast), lambda k: f"maximum mast height {raw_m[k]!r} is not a number")
        used.add(mast_c)
    first_row: dict[str, int] = {}
    for k, nm in enumerate(names):
        if reasons[k] is not None:
            continue
        if nm in first_row:
            reasons[k] = f"duplicate name (first on row {first_row[nm]})"
        else:
            first_row[nm] = int(rows[k])
    bad = [BadRow(source, int(rows[k]), str(names[k]) if names[k] else "", reasons[k])
           for k in range(n) if reasons[k] is not None]
    keep = np.array([r is None for r in reasons], dtype=bool)
    extra_cols = [c for c in columns if c not in used]
    extra = frame.loc[keep, extra_cols].reset_index(drop=True)
    table = SiteTable(
        source=source,
        names=np.asarray(names[keep], dtype=object),
        lat_deg=lat[keep],
        lon_deg=lon[keep],
        antenna_agl_m=agl[keep],
        gain_dbi=None if gain is None else gain[keep],
        max_mast_m=None if mast is None else mast[keep],
        rows=rows[keep],
        extra=extra,
    )
    return table, bad


def read_pairs(
    path: str | os.PathLike, names: np.ndarray, *, a_col: str | None = None, b_col: str | None = None
) -> tuple[np.ndarray, np.ndarray, list[BadRow]]:
    """Read a pairs file (CSV, two columns of site names) against the usable sites.

    Columns default to ``a``/``b`` or ``site_a``/``site_b``, else the first
    two.  Rows naming an unknown or skipped site, a site with itself, or a
    pair already listed (in either direction) are skipped and reported.
    Returns site indices ``(a, b)`` in file order and the skipped rows.
    """
    import pandas as pd

    p = Path(path)
    if not p.exists():
        raise DataFileError(f"pairs file not found: {p}")
    try:
        frame = pd.read_csv(p, dtype=str, keep_default_na=False, skipinitialspace=True)
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
    return a[keep], b[keep], bad
