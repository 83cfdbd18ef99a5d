"""``terrahop link``: analyse one link."""

from __future__ import annotations

import json

import click

from .options import (
    analysis_options,
    climate_options,
    friendly_errors,
    mount_options,
    radio_options,
    site_options,
    surroundings_options,
    terrain_options,
)

__all__ = ["link", "run_link"]


def run_link(resolved) -> dict:
    """Analyse a resolved link and return its JSON record."""
    from ..link import analyse_link
    from ..terrain import ElevationModel
    from .options import open_surroundings_of

    surroundings = open_surroundings_of(resolved)
    with ElevationModel(
        resolved.rasters, vertical_unit=resolved.vertical_unit, nodata_fill_m=resolved.nodata_fill_m
    ) as model:
        batch = analyse_link(
            model, resolved.site_a, resolved.site_b, resolved.radio, resolved.settings, name=resolved.title,
            surroundings=surroundings, mount_a=resolved.mount_a, mount_b=resolved.mount_b,
        )
    if surroundings is not None and surroundings.surface is not None:
        surroundings.surface.close()
    return batch.record(0)


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@terrain_options
@site_options
@mount_options
@surroundings_options
@radio_options
@analysis_options
@climate_options
@click.option("--json", "as_json", is_flag=True, help="Print the result as one JSON object.")
@friendly_errors
def link(link_file: str | None, as_json: bool, **opts) -> None:
    """Analyse one link: clearance at two k-factors, losses, budget.

    LINK_FILE is an optional TOML link file; flags override its values.
    """
    from ..io.report import format_link_summary
    from .options import resolve_link

    record = run_link(resolve_link(link_file, opts))
    if as_json:
        click.echo(json.dumps(record, indent=2))
    else:
        click.echo(format_link_summary(record))
