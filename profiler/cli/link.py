"""``terrahop link``: analyse one link."""

from __future__ import annotations

import json

import click

from ..io.linkfile import read_link_file
from .options import (analyse_resolved, date_option, friendly_errors, link_input_options, opened_link_data,
                      resolve_link)
from .options import reflection_options  # ground reflections (profiler.reflection)
from .screen import gain_warning_text

__all__ = ["link", "run_link", "kml_options", "write_records_kml"]


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
    files += [getattr(resolved.reflection, "water_file", None)]  # the water layer (profiler.reflection)
    return files


def default_gain_warning(link_file: str | None, opts: dict) -> str | None:
    """Warning for antenna gains given neither as flags nor in the link file (0 dBi default), else None."""
    spec = read_link_file(link_file) if link_file else None
    section = spec.radio if spec is not None else {}
    missing = [t for t in ("a", "b") if opts.get(f"gain_{t}_dbi") is None and f"gain_{t}_dbi" not in section
               and opts.get(f"antenna_{t}") is None and not (spec is not None and getattr(spec, f"antenna_{t}"))]
    return gain_warning_text(missing, "--gain-a-dbi/--gain-b-dbi or [radio] gain_a_dbi/gain_b_dbi") if missing else None


# --- KML of single links (also used by `terrahop sheet --kml`) -----------------

#: Fade margin, dB, a link needs to be drawn as viable in --kml (the `screen --min-margin-db` default).
KML_MIN_MARGIN_DB = 10.0


def kml_options(func):
    """``--kml FILE`` (its verdict colours take the viable margin of ``--min-margin-db``)."""
    # A plain string: profiler.io.kml.check_kml_path gives the one-line refusals (folder, extension, rights).
    return click.option("--kml", "kml_path", type=str, default=None, metavar="FILE",
                        help="Also write the link(s) and sites as KML 2.2 (.kml) or KMZ (.kmz) for globe viewers, "
                             "with FILE.run.json beside it (how it was made).")(func)


def viable_margin_db(resolved, opts: dict) -> float:
    """Fade margin, dB, a link needs at the design k to count as viable: --min-margin-db, the radio
    profile's (link file [analysis] min_margin_db), else the `screen --min-margin-db` default."""
    if opts.get("min_margin_db") is not None:
        return float(opts["min_margin_db"])
    given = getattr(resolved, "min_margin_db", None)  # the link file's [analysis] min_margin_db
    return float(given) if given is not None else KML_MIN_MARGIN_DB


def check_kml_request(kml_path: str | None, min_margin_db: float, inputs) -> None:
    """InputError before any work: a bad --kml path (extension, folder, an input file) or margin."""
    if kml_path is None:
        return
    from ..io.kml import check_kml_path
    from ..io.run_description import sidecar_path
    from ..validation import check_number

    check_number(min_margin_db, "min_margin_db", "--min-margin-db")
    path = check_kml_path(kml_path)
    import os

    for given in inputs:
        if not given:
            continue
        for written in (path, sidecar_path(path)):
            if os.path.realpath(written) == os.path.realpath(given):
                from ..errors import InputError

                raise InputError(f"--kml {kml_path} would overwrite the input {given}; choose another file")


def write_records_kml(kml_path: str, records: list, ends: list, job, min_margin_db: float,
                      link_files=(), sites_file: str | None = None, per_link: bool = False) -> list[str]:
    """Write the KML (and its .run.json) of link records; verdicts by the screening rule; return the paths.

    The run description holds ``job``'s radio and settings; with ``per_link``
    (links made with different ones) each record's ``inputs`` are listed too.
    """
    import numpy as np

    from ..io.columns import VERDICTS, PairStatus
    from ..io.kml import links_from_records, sites_from_records, write_kml
    from ..io.run_description import describe_run, sidecar_path, write_sidecar
    from ..screening.summary import verdicts
    from .options import command_words

    def value(r, *path):
        for key in path:
            r = (r or {}).get(key)
        return np.nan if r is None else float(r)

    cols = {
        "status": np.array([PairStatus.NOT_PROFILED if "error" in r else PairStatus.PROFILED for r in records]),
        "line_of_sight": np.array([value(r, "clearance", "line_of_sight") == 1 for r in records], dtype=np.uint8),
        "meets_criterion": np.array([value(r, "meets_criterion") == 1 for r in records], dtype=np.uint8),
        "fade_margin_db": np.array([value(r, "budget", "fade_margin_db") for r in records]),
    }
    codes = verdicts(cols, min_margin_db)
    # The rasters the engine read (a fetched --terrain dataset's VRT included), from the records' provenance.
    used = [src.get("path") for r in records for src in (r.get("provenance") or {}).get("elevation_sources", [])]
    dem = list(dict.fromkeys(p for p in used if p)) or list(job.rasters)
    description = describe_run(
        command=command_words(), radio=job.radio, settings=job.settings, min_margin_db=min_margin_db,
        dem=dem, surface=job.surface_rasters, sites_file=sites_file,
        other_inputs={"link_files": [f for f in link_files if f],
                      "obstruction_layers": [getattr(spec, "path", spec) for spec in job.obstruction_layers]},
    )
    if per_link:
        description["per_link_inputs"] = [{"name": r.get("name"), **(r.get("inputs") or {})} for r in records]
    from pathlib import Path

    title = Path(kml_path).stem
    write_kml(kml_path, title, links_from_records(records, [VERDICTS[int(c)] for c in codes], ends),
              sites_from_records(records, ends), description)
    sidecar = write_sidecar(sidecar_path(kml_path), description)
    return [str(kml_path), str(sidecar)]


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@link_input_options
@reflection_options
@date_option
@click.option("--profile-csv", "profile_csv", default=None, type=click.Path(dir_okay=False), metavar="FILE",
              help="Also write the sampled profile as CSV: distance, position, ground, clutter, bulge at both k, "
                   "ray, F1 radius, clearance.")
@click.option("--json", "as_json", is_flag=True, help="Print the result as one JSON object.")
@kml_options
@friendly_errors
def link(link_file: str | None, as_json: bool, profile_csv: str | None, kml_path: str | None = None,
         **opts) -> None:
    """Analyse one link: clearance at two k-factors, losses, budget.

    LINK_FILE is an optional TOML link file; flags override its values.
    """
    from ..io.report import format_link_summary  # lazy: brings numpy; the CLI's import stays light

    resolved = resolve_link(link_file, opts)
    kml_margin_db = viable_margin_db(resolved, opts)
    check_kml_request(kml_path, kml_margin_db, job_input_files(link_file, resolved))
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
    if kml_path is not None:
        written = write_records_kml(kml_path, [record], [(resolved.site_a, resolved.site_b)], resolved,
                                    kml_margin_db, [link_file])
        click.echo(f"wrote {', '.join(written)}", err=as_json)
