"""Gather sheet contents from analysed links: drawing arrays, map window, provenance.

This is an edge module: it reads the raster window of each map and hashes
the raster files.  The drawing itself happens in :mod:`profiler.sheets.page`.
"""

from __future__ import annotations

from typing import Any, Sequence

import numpy as np

from ..vertical import apply_datum_name
from .content import SheetContent, TitleBlock, profile_drawing, source_provenance, surroundings_provenance
from .minimap import read_map_grid

__all__ = ["sheet_contents", "MAP_ASPECT"]

#: Width / height of the map box on the page (see page.py).
MAP_ASPECT = 68.0 / 60.0


def sheet_contents(
    batch: Any,
    model: Any,
    *,
    title: TitleBlock = TitleBlock(),
    indices: Sequence[int] | None = None,
    checksums: dict[str, str] | None = None,
    draw_map: bool = True,
    vertical_crs: str | None = None,
) -> list[SheetContent]:
    """One :class:`SheetContent` per link of ``batch`` (a LinkBatch analysed on ``model``).

    ``indices`` picks links (default: every link without a problem);
    ``checksums`` caches SHA-256 sums by raster path across calls.
    ``vertical_crs`` names the rasters' vertical datum when they do not
    (``--vertical-crs``).  Sheet numbers are filled in by the caller once all
    links are known.
    """
    checksums = {} if checksums is None else checksums
    sources = []
    for s in model.sources:
        if s.path not in checksums:
            checksums[s.path] = model.checksum(s.path)
        sources.append(source_provenance(s, checksums[s.path]))
    if indices is None:
        indices = [i for i, p in enumerate(batch.problems) if p is None]
    def sha256_of(path: str) -> str:
        if path not in checksums:
            checksums[path] = model.checksum(path)
        return checksums[path]

    out = []
    for i in indices:
        n = int(batch.profiles.n_samples[i])
        lat = np.asarray(batch.profiles.lat_deg[i, :n], dtype=float)
        lon = np.asarray(batch.profiles.lon_deg[i, :n], dtype=float)
        grid = read_map_grid(model.sources, lat, lon, aspect=MAP_ASPECT) if draw_map else None
        record = batch.record(i)
        apply_datum_name(record, vertical_crs)
        out.append(
            SheetContent(
                record=record,
                drawing=profile_drawing(batch, i),
                path_lat_deg=lat,
                path_lon_deg=lon,
                sources=tuple(sources),
                title=title,
                map_grid=grid,
                raster_paths=tuple(s.path for s in model.sources),
                other_sources=surroundings_provenance(record, sha256_of),
            )
        )
    return out
