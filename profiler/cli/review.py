"""``terrahop review``: one offline HTML page to explore a screening result in a browser."""

from __future__ import annotations

import click

from .options import dem_option, friendly_errors

__all__ = ["review"]


@click.command()
@click.argument("result", metavar="RESULT.gpkg", type=click.Path(dir_okay=True))
@click.option("-o", "--output", required=True, metavar="FILE.html", help="The page to write (one self-contained file).")
@dem_option
@click.option("--surface", "surface", multiple=True, metavar="RASTER",
              help="Surface model (DSM) drawn as clutter above the ground in the profiles. Repeatable.")
@click.option("--tiles", default=None, metavar="URL",
              help="Basemap under the relief: an XYZ tile address with {z}, {x} and {y}, fetched by the "
                   "viewer's browser (the page is offline without it).")
@click.option("--profiles", "max_profiles", type=click.IntRange(min=0), default=None, metavar="N",
              help="Store the profiles of at most N links, the best ranked first [default: 10000].")
@click.option("--overwrite", is_flag=True, help="Replace FILE.html even if it is not a review page.")
@click.option("-q", "--quiet", is_flag=True, help="Print nothing but errors.")
@friendly_errors
def review(result: str, output: str, dem: tuple[str, ...], surface: tuple[str, ...], tiles: str | None,
           max_profiles: int | None, overwrite: bool, quiet: bool) -> None:
    """Write an offline HTML page to review a screening result.

    The page shows the sites and links over a hillshade of the terrain, coloured by
    verdict; click a link for its profile (terrain, line of sight, first Fresnel
    zone, worst point) and figures; filter, sort and save the shown links as CSV.
    The terrain comes from the result's run description or from --dem.
    """
    from ..review import DEFAULT_MAX_PROFILES, build_review_page, check_tiles_url

    if tiles is not None:
        check_tiles_url(tiles)
    summary = build_review_page(result, output, dem=dem, surface=surface, tiles=tiles,
                                max_profiles=DEFAULT_MAX_PROFILES if max_profiles is None else max_profiles,
                                overwrite=overwrite)
    for note in summary.notes:
        click.echo(f"note: {note}", err=True)
    if not quiet:
        click.echo(f"written: {summary.output} ({summary.n_links:,} links, {summary.n_profiles:,} profiles, "
                   f"{summary.size_bytes / 1e6:.1f} MB)")
