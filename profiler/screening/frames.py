"""Screening from Python: sites given as a (Geo)DataFrame, results returned as GeoDataFrames.

A frame of sites is written to a private temporary file and read by
:func:`profiler.io.sites.read_sites`, so it is checked exactly as a file
would be; a run without an output path writes a GeoPackage in a private
temporary folder and reads its two layers back, so the frames hold what the
file would hold.
"""

from __future__ import annotations

import dataclasses
import os
import tempfile
from pathlib import Path
from typing import Any, Callable, Mapping

from ..errors import InputError, TerrahopError
from ..io.sites import BadRow, SiteTable, read_sites

__all__ = ["read_site_input", "frames_of_run", "FRAME_SOURCE"]

#: How rows of a frame of sites are named in messages (row = position in the frame, from 0).
FRAME_SOURCE = "sites frame"


def read_site_input(sites: Any, options: Mapping[str, Any] | None = None) -> tuple[SiteTable, list[BadRow]]:
    """A site table and its skipped rows from a path, a GeoDataFrame of points or a DataFrame.

    ``options`` are keywords of :func:`profiler.io.sites.read_sites`.
    """
    options = dict(options or {})
    if isinstance(sites, (str, os.PathLike)):
        return read_sites(sites, **options)
    if not hasattr(sites, "columns") or not hasattr(sites, "to_csv"):
        raise InputError(
            f"sites must be a SiteTable, a file path, a GeoDataFrame or a DataFrame, not {type(sites).__name__}"
        )
    is_geo = hasattr(sites, "geometry") and hasattr(sites, "crs")
    if is_geo and sites.crs is None:
        raise InputError(f"the {FRAME_SOURCE} (a GeoDataFrame) has no CRS; set one with .set_crs(...)")
    with tempfile.TemporaryDirectory(prefix="terrahop-sites-") as folder:
        if is_geo:
            path, first_row = Path(folder) / "sites.gpkg", 1  # layers: feature number from 1
            sites.to_file(path, layer="sites", driver="GPKG")
            options.setdefault("layer", "sites")
        else:
            path, first_row = Path(folder) / "sites.csv", 2  # CSV: header on line 1
            sites.to_csv(path, index=False)
        try:
            table, bad = read_sites(path, **options)
        except TerrahopError as exc:  # name the frame, not the private file it went through
            text = str(exc).replace(str(path), FRAME_SOURCE).replace(path.name, FRAME_SOURCE)
            raise type(exc)(text) from None
    table = dataclasses.replace(table, source=FRAME_SOURCE, rows=table.rows - first_row)
    bad = [dataclasses.replace(b, source=FRAME_SOURCE, row=b.row - first_row) for b in bad]
    return table, bad


def frames_of_run(run: Callable[[Path], Any]) -> tuple[Any, Any]:
    """``run(path)`` into a temporary GeoPackage; its links and sites layers as GeoDataFrames.

    The run's summary is kept in ``links.attrs["summary"]`` (without the temporary file's name).
    """
    import geopandas as gpd

    with tempfile.TemporaryDirectory(prefix="terrahop-screen-") as folder:
        path = Path(folder) / "screen.gpkg"
        summary = run(path)
        links = gpd.read_file(path, layer="links")
        sites = gpd.read_file(path, layer="sites")
    links.attrs["summary"] = dataclasses.replace(summary, outputs=())
    return links, sites
