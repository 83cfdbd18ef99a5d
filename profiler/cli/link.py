"""``terrahop link``: analyse one link."""

from __future__ import annotations

import json

import click

from ..io.linkfile import read_link_file
from .options import (analyse_resolved, date_option, friendly_errors, link_input_options, opened_link_data,
                      resolve_link)
from .screen import gain_warning_text

__all__ = ["link", "run_link"]


def run_link(resolved, profile_csv: str | None = None) -> dict:
    """Analyse a resolved link and return its JSON record (vertical datum named as known).

    With ``profile_csv`` the sampled profile is written there too (see :mod:`profiler.io.profile_csv`).
    """
    from ..vertical import apply_datum_name  # lazy: brings numpy; the CLI's import stays light

    with opened_link_data(resolved) as (model, surroundings):
        batch = analyse_resolved(resolved, model, surroundings)
        record = batch.record(0)
        if profile_csv is not None and "error" not in record:
            from ..io.profile_csv import profile_columns, write_profile_csv

            write_profile_csv(profile_csv, profile_columns(batch, 0))
    if "error" not in record:
        vertical_crs = getattr(resolved.mount_a, "vertical_crs", None) if resolved.mount_a is not None else None
        apply_datum_name(record, vertical_crs)
        if "installation" in record:  # the datum as named above
            record["installation"]["vertical_datum"] = record["inputs"]["vertical_datum"]
    return record


def job_input_files(link_file: str | None, resolved) -> list:
    """Every file a link job reads (link file, rasters, layers, antenna files), for output checks."""
    files = [link_file, *resolved.rasters, *resolved.surface_rasters]
    files += [getattr(layer, "path", None) for layer in resolved.obstruction_layers]
    files += [getattr(a, "source", None) for a in (resolved.antenna_a, resolved.antenna_b) if a is not None]
    return files


def default_gain_warning(link_file: str | None, opts: dict) -> str | None:
    """Warning for antenna gains given neither as flags nor in the link file (0 dBi default), else None."""
    spec = read_link_file(link_file) if link_file else None
    section = spec.radio if spec is not None else {}
    missing = [t for t in ("a", "b") if opts.get(f"gain_{t}_dbi") is None and f"gain_{t}_dbi" not in section
               and opts.get(f"antenna_{t}") is None and not (spec is not None and getattr(spec, f"antenna_{t}"))]
    return gain_warning_text(missing, "--gain-a-dbi/--gain-b-dbi or [radio] gain_a_dbi/gain_b_dbi") if missing else None


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@link_input_options
@date_option
@click.option("--profile-csv", "profile_csv", default=None, type=click.Path(dir_okay=False), metavar="FILE",
              help="Also write the sampled profile as CSV: distance, position, ground, clutter, bulge at both k, "
                   "ray, F1 radius, clearance.")
@click.option("--json", "as_json", is_flag=True, help="Print the result as one JSON object.")
@friendly_errors
def link(link_file: str | None, as_json: bool, profile_csv: str | None, **opts) -> None:
    """Analyse one link: clearance at two k-factors, losses, budget.

    LINK_FILE is an optional TOML link file; flags override its values.
    """
    from ..io.report import format_link_summary  # lazy: brings numpy; the CLI's import stays light

    resolved = resolve_link(link_file, opts)
    if profile_csv is not None:
        from ..io.profile_csv import check_profile_csv_path

        check_profile_csv_path(profile_csv, job_input_files(link_file, resolved))
    record = run_link(resolved, profile_csv)
    warning = default_gain_warning(link_file, opts)
    if warning and "error" not in record:
        click.echo(f"warning: {warning}", err=True)
        if as_json:
            record.setdefault("warnings", []).append(warning)
    if as_json:
        click.echo(json.dumps(record, indent=2))
    else:
        click.echo(format_link_summary(record))
