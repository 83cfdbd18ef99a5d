"""``terrahop terrain``: open elevation datasets fetched into the local cache (``terrain fetch``)."""

from __future__ import annotations

import click

from ..errors import InputError
from .fetch_progress import progress_bar
from .options import friendly_errors

__all__ = ["terrain", "fetch", "sites_of_file", "parse_bbox"]

#: Our dataset names, kept equal to profiler.terrain_sources.DATASETS (a test checks) so the
#: help needs no import beyond click.
SOURCE_NAMES = ("copernicus-30", "copernicus-90", "srtm-1")


def parse_bbox(text: str) -> tuple[float, float, float, float]:
    """'W,S,E,N' in decimal degrees -> a tuple; InputError if garbled."""
    parts = [p.strip() for p in str(text).split(",")]
    try:
        values = tuple(float(p) for p in parts)
    except ValueError:
        values = ()
    if len(values) != 4 or not all(v == v and abs(v) != float("inf") for v in values):
        raise InputError(f"{{parameter}} must be four numbers W,S,E,N in decimal degrees, got {text!r}",
                         parameter="bbox", value_word="W,S,E,N")
    return values  # type: ignore[return-value]


def sites_of_file(path: str) -> tuple[list[float], list[float]]:
    """Latitudes and longitudes of the sites in a link file (.toml), a pair table or a sites file."""
    import os

    if not os.path.exists(path):
        raise InputError(f"{{parameter}}: no such file {path}", parameter="around", value_word="FILE")
    if path.lower().endswith(".toml"):
        from ..io.linkfile import read_link_file

        spec = read_link_file(path)
        lats, lons = [], []
        for tag in ("a", "b"):
            s = getattr(spec, f"site_{tag}")
            if s.get("lat") is None or s.get("lon") is None:
                raise InputError(f"{path}: [site_{tag}] has no lat/lon to fetch terrain around")
            lats.append(float(s["lat"]))
            lons.append(float(s["lon"]))
        return lats, lons
    from ..errors import TerrahopError
    from ..io.pairs import read_pair_table

    try:
        table = read_pair_table(path)
        rows = [r for r in table.rows if r.problem is None]
        if rows:
            return ([r.lat_a for r in rows] + [r.lat_b for r in rows],
                    [r.lon_a for r in rows] + [r.lon_b for r in rows])
    except TerrahopError:
        pass  # not a pair table: read it as sites
    from ..io.sites import read_sites

    sites, _ = read_sites(path)
    if len(sites) == 0:
        raise InputError(f"{path}: no usable site positions to fetch terrain around")
    return [float(v) for v in sites.lat_deg], [float(v) for v in sites.lon_deg]


@click.group()
def terrain() -> None:
    """Elevation data: fetch open global datasets into the local cache."""


@terrain.command()
@click.argument("source", type=click.Choice(SOURCE_NAMES, case_sensitive=False))
@click.option("--bbox", metavar="W,S,E,N", default=None, help="Area to cover, decimal degrees WGS84.")
@click.option("--around", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="Cover the sites of a link file (.toml), a pair table or a sites file, plus --margin-km.")
@click.option("--margin-km", type=float, default=5.0, show_default=True, metavar="KM",
              help="Margin around the sites of --around, km.")
@click.option("--vrt", "vrt_path", type=click.Path(dir_okay=False), default=None, metavar="PATH",
              help="Write the VRT of the tiles here [default: in the cache]; its path is printed.")
@click.option("--terrain-url", default=None, metavar="BASE", envvar="TERRAHOP_TERRAIN_URL",
              help="Base URL of a mirror (http(s):// or file://); tile names keep the dataset's layout.")
@click.option("--offline", is_flag=True, help="Use only the cache; fail on a missing tile.")
@click.option("-q", "--quiet", is_flag=True, help="Print only the VRT path.")
@friendly_errors
def fetch(source: str, bbox: str | None, around: str | None, margin_km: float, vrt_path: str | None,
          terrain_url: str | None, offline: bool, quiet: bool) -> None:
    """Download the tiles of SOURCE that cover an area into the cache and write a VRT of them.

    SOURCE is copernicus-30 or copernicus-90 (Copernicus DEM, a surface model,
    heights above EGM2008) or srtm-1 (SRTM 1 arc-second, above EGM96).  Give
    the area with --bbox or --around.  The cache is TERRAHOP_CACHE or the user
    cache folder.
    """
    from ..terrain_sources import TerrainRequest, ensure_area, ensure_bbox

    if (bbox is None) == (around is None):
        raise InputError("give the area with --bbox W,S,E,N or --around FILE (one of them)")
    request = TerrainRequest(source.lower(), terrain_url, offline)
    with progress_bar() as bar:
        if bbox is not None:
            result = ensure_bbox(request, parse_bbox(bbox), vrt=vrt_path, progress=bar)
        else:
            assert around is not None
            lats, lons = sites_of_file(around)
            result = ensure_area(request, lats, lons, margin_km, vrt=vrt_path, progress=bar)
    if not quiet:
        counts = {s: sum(t.status == s for t in result.tiles) for s in ("downloaded", "cached", "sea")}
        size = sum(t.bytes_downloaded for t in result.tiles)
        click.echo(f"{result.dataset.name}: {len(result.tiles)} tiles ({counts['downloaded']} downloaded, "
                   f"{size / 1e6:.1f} MB; {counts['cached']} from the cache; {counts['sea']} open sea) "
                   f"heights above {result.dataset.vertical_datum}", err=True)
    click.echo(result.vrt)
