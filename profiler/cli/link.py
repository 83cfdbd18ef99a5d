"""``terrahop link``: analyse one link."""

from __future__ import annotations

import json

import click

from ..io.linkfile import read_link_file
from .options import analyse_resolved, friendly_errors, link_input_options, opened_link_data, resolve_link
from .screen import gain_warning_text

__all__ = ["link", "run_link"]


def run_link(resolved) -> dict:
    """Analyse a resolved link and return its JSON record (vertical datum named as known)."""
    from ..vertical import apply_datum_name  # lazy: brings numpy; the CLI's import stays light

    with opened_link_data(resolved) as (model, surroundings):
        record = analyse_resolved(resolved, model, surroundings).record(0)
    if "error" not in record:
        vertical_crs = getattr(resolved.mount_a, "vertical_crs", None) if resolved.mount_a is not None else None
        apply_datum_name(record, vertical_crs)
    return record


def default_gain_warning(link_file: str | None, opts: dict) -> str | None:
    """Warning for antenna gains given neither as flags nor in the link file (0 dBi default), else None."""
    section = read_link_file(link_file).radio if link_file else {}
    missing = [t for t in ("a", "b") if opts.get(f"gain_{t}_dbi") is None and f"gain_{t}_dbi" not in section]
    return gain_warning_text(missing, "--gain-a-dbi/--gain-b-dbi or [radio] gain_a_dbi/gain_b_dbi") if missing else None


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@link_input_options
@click.option("--json", "as_json", is_flag=True, help="Print the result as one JSON object.")
@friendly_errors
def link(link_file: str | None, as_json: bool, **opts) -> None:
    """Analyse one link: clearance at two k-factors, losses, budget.

    LINK_FILE is an optional TOML link file; flags override its values.
    """
    from ..io.report import format_link_summary  # lazy: brings numpy; the CLI's import stays light

    resolved = resolve_link(link_file, opts)
    record = run_link(resolved)
    warning = default_gain_warning(link_file, opts)
    if warning and "error" not in record:
        click.echo(f"warning: {warning}", err=True)
        if as_json:
            record.setdefault("warnings", []).append(warning)
    if as_json:
        click.echo(json.dumps(record, indent=2))
    else:
        click.echo(format_link_summary(record))
