"""Antennas in screening: one antenna file for every site, or a sites-file column naming one per site.

The antenna's gain at the screening frequency becomes the site's gain, the
same per-site gain a ``gain_dbi`` column gives (profiler.io.sites), so the
engine sees nothing new and the pairs stay one batch.  A site whose antenna
cannot be used (file missing or wrong, frequency outside its band, a gain
given as well) is a skipped row with its reason; the run goes on.
"""

from __future__ import annotations

import dataclasses
import math
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, TerrahopError
from .antennas import Antenna, read_antenna_file

__all__ = ["ANTENNA_COLUMN", "gain_for_all_sites", "apply_site_antennas"]

#: Sites-file column naming an antenna file per site (relative to the sites file), when present.
ANTENNA_COLUMN = "antenna"


def gain_for_all_sites(path: str, freq_ghz: float, opts: dict[str, Any]) -> float:
    """Gain, dBi, of the antenna file given for every site (``--antenna``); refused with a gain flag."""
    for tag in ("a", "b"):
        if opts.get(f"gain_{tag}_dbi") is not None:
            raise InputError(f"give the antenna gains once: --antenna FILE or --gain-{tag}-dbi, not both")
    return read_antenna_file(path).gain_dbi_at(freq_ghz)


def _column(extra: Any, given: str | None, source: str) -> str | None:
    columns = [str(c) for c in getattr(extra, "columns", [])]
    if given is not None:
        if given not in columns:
            raise InputError(f"{source}: no column {given!r} for the site antenna files; columns are: "
                             f"{', '.join(columns) or 'none besides the sites'}")
        return given
    lower = {c.lower(): c for c in columns}
    return lower.get(ANTENNA_COLUMN)


def apply_site_antennas(sites: Any, bad: list, freq_ghz: float, sites_file: str | os.PathLike,
                        column: str | None = None) -> tuple[Any, list]:
    """Sites with the gains of their antenna files, and the skipped rows (those whose antenna fails).

    ``sites`` is a :class:`profiler.io.sites.SiteTable`; the antenna column (``column``,
    or one named ``antenna``) stays among the carried-through columns.  Blank cells
    keep the site's gain as it was (a gain column's, else the radio's).  Files are
    read once each, relative to the sites file.
    """
    from ..io.sites import BadRow

    name = _column(sites.extra, column, sites.source)
    if name is None:
        return sites, bad
    base = Path(sites_file).resolve().parent
    cells = sites.extra[name].tolist()
    gains = (np.array(sites.gain_dbi, dtype=float) if sites.gain_dbi is not None
             else np.full(len(sites), np.nan))
    given_gain = np.isfinite(gains)
    cache: dict[Path, Antenna | str] = {}
    reasons: list[str | None] = [None] * len(sites)
    for i, cell in enumerate(cells):
        text = "" if cell is None or (isinstance(cell, float) and math.isnan(cell)) else str(cell).strip()
        if not text:
            continue
        if given_gain[i]:
            reasons[i] = f"gives both an antenna gain and an antenna file ({name} = {text!r}); keep one"
            continue
        path = Path(text) if os.path.isabs(text) else base / text
        if path not in cache:
            try:
                cache[path] = read_antenna_file(path)
            except TerrahopError as exc:
                cache[path] = f"{name}: {exc}"
        antenna = cache[path]
        if isinstance(antenna, str):
            reasons[i] = antenna
            continue
        try:
            gains[i] = antenna.gain_dbi_at(freq_ghz)
        except InputError as exc:
            reasons[i] = f"{name}: {exc}"
    keep = np.array([r is None for r in reasons], dtype=bool)
    bad = list(bad) + [BadRow(sites.source, int(sites.rows[i]), str(sites.names[i]), r)
                       for i, r in enumerate(reasons) if r is not None]
    where = dict(sites.columns)
    where["gain"] = (f"{where['gain']!r} and antenna files in {name!r}" if "gain" in where
                     else f"antenna files in {name!r}")
    sites = dataclasses.replace(sites, gain_dbi=gains, columns=where)
    return (sites if keep.all() else sites.subset(keep)), bad
