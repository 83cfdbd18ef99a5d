"""``terrahop link``: analyse one link."""

from __future__ import annotations

import json

import click

from .options import analyse_resolved, friendly_errors, link_input_options, opened_link_data

__all__ = ["link", "run_link"]


def run_link(resolved) -> dict:
    """Analyse a resolved link and return its JSON record."""
    with opened_link_data(resolved) as (model, surroundings):
        return analyse_resolved(resolved, model, surroundings).record(0)


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@link_input_options
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
