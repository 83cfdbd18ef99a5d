"""``terrahop screen``: screen many candidate sites and rank the pairs that can link."""

from __future__ import annotations

import sys

import click

from .options import analysis_options, climate_options, friendly_errors, radio_options, terrain_options

__all__ = ["screen", "resolve_radio_settings", "format_screen_summary", "format_skipped"]

#: Bad rows printed in full before the rest are only counted.
SHOWN_BAD_ROWS = 20


def resolve_radio_settings(opts: dict):
    """Radio and analysis settings from command-line options, resolved as ``terrahop link`` does."""
    from .options import resolve_radio, resolve_settings

    return resolve_radio(opts), resolve_settings(opts)


def format_skipped(bad_rows, problems=()) -> str:
    """Why rows were skipped and pairs not profiled: the first 20 of each, then a count (for stderr)."""
    lines = []
    for row in bad_rows[:SHOWN_BAD_ROWS]:
        lines.append(f"skipped {row.describe()}")
    if len(bad_rows) > SHOWN_BAD_ROWS:
        lines.append(f"... and {len(bad_rows) - SHOWN_BAD_ROWS} more skipped rows")
    for p in problems[:SHOWN_BAD_ROWS]:
        lines.append(f"not profiled: {p}")
    if len(problems) > SHOWN_BAD_ROWS:
        lines.append(f"... and {len(problems) - SHOWN_BAD_ROWS} more pairs not profiled")
    return "\n".join(lines)


def format_screen_summary(summary) -> str:
    """The few lines a planner reads at the end of a run (the reasons are in :func:`format_skipped`)."""
    lines = []
    bad = summary.bad_rows
    rate = summary.pairs / summary.seconds if summary.seconds > 0 else float("nan")
    resumed = f" ({summary.resumed_pairs} from the interrupted run)" if summary.resumed_pairs else ""
    lines += [
        f"{summary.pairs} pairs of {summary.sites} sites screened{resumed} in {summary.seconds:.1f} s "
        f"({rate:,.0f} pairs/s, {summary.samples:,} terrain samples)",
        f"  viable   {summary.viable:8d}  meet the clearance criterion with >= {summary.min_margin_db:g} dB fade margin",
        f"  marginal {summary.marginal:8d}  close (fade margin >= 0 dB) but lack the clearance or the margin",
        f"  blocked  {summary.blocked:8d}  do not close: fade margin below 0 dB at the design k",
        f"  errors   {summary.errors:8d}  could not be profiled (path leaves the rasters, nodata, same place)",
        f"  skipped  {len(bad):8d}  input rows (bad coordinates, outside the rasters, duplicate names...)",
        "written: " + ", ".join(summary.outputs),
    ]
    return "\n".join(lines)


class _Progress:
    """A rich progress bar on a terminal (pairs, rate, time left); nothing otherwise."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled
        self.bar = None
        self.task = None

    def __enter__(self) -> "_Progress":
        return self

    def _start(self) -> None:
        # Started on the first report, after the worker processes exist (no thread is forked).
        if self.enabled and self.bar is None:
            from rich.console import Console
            from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TaskProgressColumn,
                                       TextColumn, TimeElapsedColumn, TimeRemainingColumn)

            self.bar = Progress(
                TextColumn("screening"), BarColumn(), MofNCompleteColumn(), TaskProgressColumn(),
                TextColumn("{task.fields[rate]}"), TimeElapsedColumn(), TextColumn("elapsed,"),
                TimeRemainingColumn(), TextColumn("left"), console=Console(stderr=True), transient=True,
            )
            self.bar.__enter__()

    def update(self, done: int, total: int) -> None:
        self._start()
        if self.bar is None:
            return
        if self.task is None:
            self.task = self.bar.add_task("pairs", total=total, completed=done, rate="")
            self.start_done = done
            import time

            self.t0 = time.perf_counter()
            return
        import time

        dt = time.perf_counter() - self.t0
        rate = f"{(done - self.start_done) / dt:,.0f} pairs/s" if dt > 0 else ""
        self.bar.update(self.task, completed=done, rate=rate)

    def __exit__(self, *exc) -> None:
        if self.bar is not None:
            self.bar.__exit__(*exc)


@click.command()
@click.argument("sites_file", metavar="SITES", type=click.Path(dir_okay=False))
@terrain_options
@radio_options
@analysis_options
@climate_options
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), metavar="RESULT",
              help="Result file: .gpkg (layers links and sites), .geojson or .csv (sites beside it).")
@click.option("--max-km", type=float, default=None, help="Only pairs at most this far apart, km [default: no limit].")
@click.option("--pairs", "pairs_file", type=click.Path(dir_okay=False), default=None,
              help="CSV of the pairs to screen (two columns of site names: a,b) instead of all pairs.")
@click.option("--hub", "hubs", multiple=True, metavar="NAME",
              help="Screen this site to every other site (repeatable) instead of all pairs.")
@click.option("--name-col", default=None, help="Column of site names [default: name].")
@click.option("--lat-col", default=None, help="Column of latitudes, CSV only [default: lat or latitude].")
@click.option("--lon-col", default=None, help="Column of longitudes, CSV only [default: lon or longitude].")
@click.option("--agl-col", default=None, help="Column of antenna heights above ground, m [default: antenna_agl_m].")
@click.option("--gain-col", default=None, help="Column of antenna gains, dBi [default: gain_dbi if present].")
@click.option("--max-mast-col", default=None, help="Column of the tallest mast allowed, m [default: max_mast_m if present].")
@click.option("--agl-m", "default_agl_m", type=float, default=10.0, show_default=True,
              help="Antenna height above ground where the file has no height column, m.")
@click.option("--layer", default=None, help="Layer of a multi-layer sites file (GeoPackage).")
@click.option("--min-margin-db", type=float, default=10.0, show_default=True,
              help="Fade margin a pair needs at the design k to count as viable, dB.")
@click.option("--workers", type=int, default=None, help="Local worker processes [default: all cores].")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run the chunks on a Dask cluster at this address (tcp://host:8786; 10 s to connect); "
                   "raster paths are sent as absolute paths, which the workers must reach.")
@click.option("--chunk-pairs", type=int, default=2000, show_default=True,
              help="Pairs per chunk (unit of work, of progress and of resumption).")
@click.option("--resume", is_flag=True, help="Finish an interrupted run of the same command.")
@click.option("--restart", is_flag=True, help="Discard an interrupted run's partial results and start again.")
@click.option("--quiet", "-q", is_flag=True,
              help="No progress bar and no summary; skipped rows and warnings still go to stderr.")
@friendly_errors
def screen(sites_file, out, max_km, pairs_file, hubs, name_col, lat_col, lon_col, agl_col, gain_col,
           max_mast_col, default_agl_m, layer, min_margin_db, workers, scheduler, chunk_pairs, resume,
           restart, quiet, **opts) -> None:
    """Screen candidate SITES: which pairs can link, and how well.

    SITES is a CSV (name, latitude, longitude, antenna height; other columns
    are carried through) or any point layer (GeoPackage, GeoJSON, Shapefile;
    any CRS).  Pairs: all pairs (within --max-km), --hub NAME to all others,
    or a --pairs file; both directions count as one link.  Each pair gets the
    numbers `terrahop link` gives it; RESULT ranks them by fade margin.
    """
    from ..errors import InputError
    from ..io.sites import read_pairs, read_sites
    from ..screening import PairPlan, resolve_hubs, screen as run_screen
    from ..terrain import ElevationModel

    if not opts.get("dem"):
        raise InputError("no elevation raster: give --dem FILE (repeatable)")
    if resume and restart:
        raise InputError("--resume and --restart contradict each other; give one")
    if pairs_file and hubs:
        raise InputError("--pairs and --hub choose pairs in different ways; give one")
    if scheduler is not None:
        from ..screening import check_scheduler_address

        scheduler = check_scheduler_address(scheduler)  # before any work: a garbled address is one line
    if max_km is not None and max_km <= 0:
        raise InputError(f"--max-km must be greater than 0, got {max_km}")
    radio, settings = resolve_radio_settings(opts)
    sites, bad = read_sites(
        sites_file, name_col=name_col, lat_col=lat_col, lon_col=lon_col, agl_col=agl_col,
        gain_col=gain_col, max_mast_col=max_mast_col, default_agl_m=default_agl_m, layer=layer,
    )
    if len(sites) < 2:
        why = f"; {len(bad)} row(s) skipped, first: {bad[0].describe()}" if bad else ""
        raise InputError(f"{sites_file}: fewer than two usable sites; nothing to screen{why}")
    explicit = None
    if pairs_file:
        a, b, bad_pairs = read_pairs(pairs_file, sites.names)
        bad += bad_pairs
        explicit = (a, b)
    plan = PairPlan(max_km=max_km, hubs=resolve_hubs(sites, hubs) if hubs else (), explicit=explicit)
    model = ElevationModel(opts["dem"], vertical_unit=opts.get("vertical_unit"),
                           nodata_fill_m=opts.get("nodata_fill_m"))
    show = not quiet and sys.stderr.isatty()
    try:
        with _Progress(show) as bar:
            summary = run_screen(
                sites, model, radio, settings, out, plan=plan, bad_rows=bad, workers=workers,
                scheduler=scheduler, resume=resume, restart=restart, chunk_pairs=chunk_pairs,
                min_margin_db=min_margin_db, progress=bar.update,
            )
    except KeyboardInterrupt:
        click.echo(
            "interrupted: finished chunks are kept; run the same command with --resume to finish", err=True
        )
        sys.exit(130)
    finally:
        model.close()
    # Reasons are warnings: on stderr, shown even with -q.
    skipped = format_skipped(summary.bad_rows, summary.problems)
    if skipped:
        click.echo(skipped, err=True)
    if not quiet:
        click.echo(format_screen_summary(summary))
