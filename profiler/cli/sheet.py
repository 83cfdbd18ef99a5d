"""``terrahop sheet``: profile sheets (PDF, PNG or SVG), one page per link."""

from __future__ import annotations

import dataclasses
import datetime as _dt
from pathlib import Path
from typing import Any

import click

from ..errors import InputError
from ..io.pairs import parse_row_spec, read_pair_table, select_pairs
from .options import (analyse_resolved, flag_form, friendly_errors, link_input_options, opened_link_data,
                      resolve_link)
from .options import reflection_options  # ground reflections (profiler.reflection)
from .link import KML_MIN_MARGIN_DB, check_kml_request, kml_options, write_records_kml
from .screen import SHOWN_BAD_ROWS

__all__ = ["sheet", "build_sheet_contents"]

_SUFFIX_FORMATS = {".pdf": "pdf", ".png": "png", ".svg": "svg"}


def _from_link_files(files: tuple[str, ...], opts: dict, title: Any, kml: list | None = None) -> list:
    from ..sheets.build import sheet_contents

    contents: list = []
    checksums: dict[str, str] = {}
    for f in files or (None,):
        resolved = resolve_link(f, opts)
        with opened_link_data(resolved) as (model, surroundings):
            batch = analyse_resolved(resolved, model, surroundings)
            contents += sheet_contents(batch, model, title=title, checksums=checksums,
                                       vertical_crs=_vertical_crs(resolved))
            if kml is not None:  # --kml: the records of the links drawn, with their ends and job
                kml += [(batch.record(i), (resolved.site_a, resolved.site_b), resolved, f)
                        for i in range(len(batch.problems)) if batch.problems[i] is None]
    return contents


def _from_pairs(pairs: str, template: str | None, layer: str | None, rows: str | None, best: int | None,
                opts: dict, title: Any, kml: list | None = None) -> list:
    from ..jobs import open_water_layer
    from ..link import Site, analyse_links
    from ..sheets.build import sheet_contents
    from ..validation import same_place_problem

    if opts.get("site_a") is not None or opts.get("site_b") is not None:
        raise InputError("--site-a/--site-b cannot be combined with --pairs: the positions come from the table")
    table = read_pair_table(pairs, layer=layer)
    numbers = [r.row for r in table.rows]
    chosen = select_pairs(table, rows=parse_row_spec(rows, max(numbers, default=0)) if rows else None, best=best)
    if best is not None and not table.ranked:
        click.echo(f"note: {pairs} has no fade-margin column; --best takes the first {best} row(s) in file order",
                   err=True)
    sites_a, sites_b, names = [], [], []
    skipped: list[str] = []
    for r in chosen:
        problem = r.problem
        if problem is None:
            try:
                a = Site(r.name_a, r.lat_a, r.lon_a, _agl(opts.get("agl_a"), r.agl_a_m))
                b = Site(r.name_b, r.lat_b, r.lon_b, _agl(opts.get("agl_b"), r.agl_b_m))
                a = a.validate(f"row {r.row}: site a")
                b = b.validate(f"row {r.row}: site b")
                gap = same_place_problem(a.lat_deg, a.lon_deg, b.lat_deg, b.lon_deg)
                if gap is not None:
                    raise InputError(f"row {r.row}: {gap}")
            except InputError as exc:
                problem = exc.render(flag_form)
        if problem is not None:
            skipped.append(f"{pairs}: {problem}")
            continue
        sites_a.append(a)
        sites_b.append(b)
        names.append(r.name)
    if not sites_a:
        first = f"; first: {skipped[0]}" if skipped else ""
        raise InputError(f"{pairs}: no usable pair among the {len(chosen)} selected row(s){first}")
    _echo_skipped(skipped)
    # Resolve terrain, radio and analysis settings once; the first pair stands in for the sites.
    first_opts = dict(opts, site_a=(sites_a[0].lat_deg, sites_a[0].lon_deg),
                      site_b=(sites_b[0].lat_deg, sites_b[0].lon_deg))
    resolved = resolve_link(template, first_opts)
    n = len(sites_a)
    # Heights above ground come per row from the table (or --agl-a/-b); only the other
    # references (above roof, elevation, ellipsoidal) are applied to every pair as mounts.
    mounts_a = None if resolved.mount_a is None or resolved.mount_a.reference == "ground" else [resolved.mount_a] * n
    mounts_b = None if resolved.mount_b is None or resolved.mount_b.reference == "ground" else [resolved.mount_b] * n
    ends = sites_a + sites_b  # an open dataset (--terrain) is fetched around every pair
    with opened_link_data(resolved, [s.lat_deg for s in ends], [s.lon_deg for s in ends]) as (model, surroundings):
        batch = analyse_links(model, sites_a, sites_b, resolved.radio, resolved.settings, names=names,
                              surroundings=surroundings, mounts_a=mounts_a, mounts_b=mounts_b,
                              radio_plan=resolved.radio_plan, eirp_limit=resolved.eirp_limit,
                              reflection=resolved.reflection, water_layer=open_water_layer(resolved.reflection))
        from ..jobs import with_confidence, with_equipment

        batch = with_equipment(batch, resolved)  # antennas and installer figures, as for a link file
        batch = with_confidence(batch, resolved, surroundings)  # the confidence options, as for a link file
        good = [i for i, problem in enumerate(batch.problems) if problem is None]
        unprofiled = [p for p in batch.problems if p is not None]
        if not good:
            raise InputError(f"{pairs}: none of the selected pairs can be profiled on the given elevation data; "
                             f"first: {unprofiled[0]}")
        _echo_skipped(unprofiled)
        if kml is not None:  # --kml: the records of the links drawn, with their ends and job
            kml += [(batch.record(i), (sites_a[i], sites_b[i]), resolved, template) for i in good]
        return sheet_contents(batch, model, title=title, indices=good, vertical_crs=_vertical_crs(resolved))


def _vertical_crs(resolved: Any) -> str | None:
    """The vertical CRS the planner named (--vertical-crs or [terrain] vertical_crs), if any."""
    return getattr(resolved.mount_a, "vertical_crs", None) if resolved.mount_a is not None else None


def _echo_skipped(reasons: list[str]) -> None:
    """Why pairs were left out, on stderr: the first 20, then a count."""
    for reason in reasons[:SHOWN_BAD_ROWS]:
        click.echo(f"skipped: {reason}", err=True)
    if len(reasons) > SHOWN_BAD_ROWS:
        click.echo(f"... and {len(reasons) - SHOWN_BAD_ROWS} more skipped pairs", err=True)


def _agl(flag: float | None, column: float | None) -> float:
    if flag is not None:
        return float(flag)
    if column is None:
        raise InputError("antenna height above ground missing (no agl_a_m/agl_b_m value); "
                         "add the column or give --agl-a/--agl-b")
    return float(column)


def build_sheet_contents(link_files: tuple[str, ...], opts: dict, title: Any, *, pairs: str | None = None,
                         layer: str | None = None, rows: str | None = None, best: int | None = None,
                         kml: list | None = None) -> list:
    """Sheet contents for link files (or flags alone), or for pairs picked from a table; numbered 1..N.

    With ``kml`` (a list), (record, (site a, site b), job, link file) of each link drawn is appended to it.
    """
    if pairs:
        if len(link_files) > 1:
            raise InputError("with --pairs give at most one link file (its terrain, radio and analysis "
                             "settings apply to every pair)")
        contents = _from_pairs(pairs, link_files[0] if link_files else None, layer, rows, best, opts, title, kml)
    else:
        if rows or best is not None or layer:
            raise InputError("--rows, --best and --layer select rows of a pair table; give the table with --pairs")
        contents = _from_link_files(link_files, opts, title, kml)
    n = len(contents)
    return [dataclasses.replace(c, sheet_number=i + 1, sheet_count=n) for i, c in enumerate(contents)]


def _declination_date(date_text: str | None) -> str | None:
    """The title-block date when written YYYY-MM-DD: the magnetic declination is then for that date.

    Any other wording (free text) leaves the declination at today's date; the sheet states the date used.
    """
    if date_text is None:
        return None
    try:
        return _dt.date.fromisoformat(date_text.strip()).isoformat()
    except ValueError:
        return None


def _output_format(out: str, fmt: str | None) -> str:
    if fmt:
        return fmt.lower()
    suffix = Path(out).suffix.lower()
    if suffix not in _SUFFIX_FORMATS:
        raise InputError(f"cannot tell the sheet format from {out!r}; end the name in .pdf, .png or .svg "
                         "or give --format")
    return _SUFFIX_FORMATS[suffix]


@click.command()
@click.argument("link_files", nargs=-1, type=click.Path(dir_okay=False))
@link_input_options
@reflection_options
@click.option("--pairs", type=click.Path(dir_okay=False), default=None, metavar="TABLE",
              help="CSV or GeoPackage of site pairs (e.g. a screening result): columns name_a, lat_a, lon_a, "
                   "agl_a_m, name_b, lat_b, lon_b, agl_b_m; optional name, fade_margin_db.")
@click.option("--layer", default=None, help="Layer of the --pairs GeoPackage [default: the first].")
@click.option("--rows", default=None, metavar="LIST", help="Rows of --pairs to draw, counted from 1: e.g. 1,3,5-7.")
@click.option("--best", type=int, default=None, metavar="N",
              help="Draw the N pairs of --pairs with the highest fade_margin_db (file order if no such column).")
@click.option("-o", "--out", required=True, type=click.Path(dir_okay=False),
              help="Output file. PDF: one page per link. PNG/SVG: one file per link (-NN-name added when several).")
@click.option("--format", "fmt", type=click.Choice(["pdf", "png", "svg"], case_sensitive=False), default=None,
              help="Output format [default: from the --out suffix].")
@click.option("--page", type=click.Choice(["a4", "letter", "a3"], case_sensitive=False), default="a4",
              show_default=True, help="Page size, landscape.")
@click.option("--units", type=click.Choice(["m", "ft"]), default="m", show_default=True,
              help="Height unit of the drawing and table.")
@click.option("--dpi", type=click.IntRange(50, 1200), default=200, show_default=True,
              help="Resolution of PNG output.")
@click.option("--project", default="", help="Project name for the title block.")
@click.option("--prepared-by", default="", help="Who prepared the sheet (title block).")
@click.option("--checked-by", default="", help="Who checked the sheet (title block; blank for hand entry).")
@click.option("--date", "date_text", default=None,
              help="Date in the title block [default: today]; written YYYY-MM-DD it also dates the magnetic "
                   "declination of the installer figures.")
@click.option("--revision", default="A", show_default=True, help="Revision mark in the title block.")
@kml_options
@friendly_errors
def sheet(link_files: tuple[str, ...], pairs: str | None, layer: str | None, rows: str | None, best: int | None,
          out: str, fmt: str | None, page: str, units: str, dpi: int, project: str, prepared_by: str,
          checked_by: str, date_text: str | None, revision: str, kml_path: str | None = None,
          **opts: Any) -> None:
    """Draw profile sheets for permit files: one page per link.

    LINK_FILES are TOML link files (several allowed; flags override their
    values), or none with the link given by flags as for `terrahop link`.
    With --pairs TABLE the sites come from a table of pairs; at most one link
    file then supplies terrain, radio and analysis settings for every pair.
    """
    from ..sheets import TitleBlock, write_sheets  # lazy: numpy and the sheet modules
    from ..sheets.page import continuation_pages

    fmt = _output_format(out, fmt)
    title = TitleBlock(
        project=project, prepared_by=prepared_by, checked_by=checked_by,
        date=date_text if date_text is not None else _dt.date.today().isoformat(), revision=revision,
    )
    opts = dict(opts, date=_declination_date(date_text))
    kml_margin_db = KML_MIN_MARGIN_DB if opts.get("min_margin_db") is None else float(opts["min_margin_db"])
    check_kml_request(kml_path, kml_margin_db, [*link_files, pairs, *opts.get("dem", ()), out])
    kml: list | None = [] if kml_path is not None else None
    contents = build_sheet_contents(link_files, opts, title, pairs=pairs, layer=layer, rows=rows, best=best, kml=kml)
    paths = write_sheets(contents, out, fmt=fmt, page=page.lower(), units=units, dpi=dpi)
    n_pages = len(contents) + sum(continuation_pages(c) for c in contents)
    n_pages += sum("modulation" in c.record for c in contents)  # the radio page of a link with a radio profile
    pages = f"{n_pages} page{'s' if n_pages != 1 else ''}"
    if fmt == "pdf":
        click.echo(f"wrote {paths[0]} ({pages})")
    else:
        for p in paths:
            click.echo(f"wrote {p}")
    if kml_path is not None and kml:
        _write_kml(kml_path, kml, kml_margin_db, pairs)


def _write_kml(kml_path: str, drawn: list, min_margin_db: float, pairs: str | None) -> None:
    """--kml: every link of the sheets in one KML, with the run description (first job's settings)."""
    records = [r for r, _, _, _ in drawn]
    ends = [e for _, e, _, _ in drawn]
    jobs = [j for _, _, j, _ in drawn]
    files = list(dict.fromkeys(f for _, _, _, f in drawn if f))
    written = write_records_kml(kml_path, records, ends, jobs[0], min_margin_db, files, sites_file=pairs,
                                per_link=any((j.radio, j.settings) != (jobs[0].radio, jobs[0].settings)
                                             for j in jobs))
    click.echo(f"wrote {', '.join(written)}")
