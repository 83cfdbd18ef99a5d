"""``terrahop screen``: screen many candidate sites and rank the pairs that can link."""

from __future__ import annotations

import dataclasses
import os
import sys
import time
from typing import TYPE_CHECKING

import click

from ..errors import InputError
from ..io.columns import Verdict
from .options import (RADIO_FLAGS, DefaultHelpOption, analysis_options, climate_options, friendly_errors,
                      radio_profile_options, roof_mount_options, surroundings_options, terrain_options)
from .options import confidence_options
from .options import reflection_options  # ground reflections (profiler.reflection)

if TYPE_CHECKING:  # rich is imported only when a bar is shown
    from rich.progress import Progress, TaskID

__all__ = ["screen", "resolve_radio_settings", "format_screen_summary", "format_skipped"]

#: Bad rows printed in full before the rest are only counted.
SHOWN_BAD_ROWS = 20


def resolve_radio_settings(opts: dict):
    """Radio and analysis settings from command-line options, resolved as ``terrahop link`` does."""
    from .options import resolve_radio, resolve_settings

    return resolve_radio(opts), resolve_settings(opts)


def verdict_lines(min_margin_db: float) -> list:
    """(verdict, what it means) for the summary, in the order the checks are made, best first."""
    return [
        (Verdict.VIABLE, f"meet the clearance criterion with >= {min_margin_db:g} dB fade margin"),
        (Verdict.MARGINAL, f"meet the criterion and close, with less than {min_margin_db:g} dB fade margin"),
        (Verdict.BUDGET_SHORT, "meet the criterion but do not close: fade margin below 0 dB "
                               "(more gain or power, not a taller mast)"),
        (Verdict.CLEARANCE_SHORT, "line of sight, but the Fresnel-zone clearance criterion fails"),
        (Verdict.OBSTRUCTED, "no line of sight at the design k (terrain, buildings or trees)"),
        (Verdict.ERROR, "could not be profiled (path leaves the rasters, nodata, same place)"),
    ]


def default_gain_warning(gain_col_used: bool, opts: dict) -> str | None:
    """The warning for antenna gains left at the 0 dBi default, or None when gains were given."""
    if gain_col_used:
        return None
    missing = [t for t in ("a", "b") if opts.get(f"gain_{t}_dbi") is None]
    if not missing:
        return None
    return gain_warning_text(missing, "--gain-a-dbi/--gain-b-dbi or a gain_dbi column")


def gain_warning_text(ends, how: str) -> str:
    """One sentence: which ends' antenna gains are the 0 dBi default, and how to give them."""
    which = " and ".join(f"site {t}" for t in ends)
    return (f"antenna gain at {which} left at the default 0 dBi (an isotropic antenna): fade margins "
            f"are low by the real gains; give {how}")


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
        *[f"  {v.value:<16}{summary.count(v):8d}  {text}"
          for v, text in verdict_lines(summary.min_margin_db)],
        f"  {'skipped':<16}{len(bad):8d}  input rows (bad coordinates, outside the rasters, duplicate names...)",
        "written: " + ", ".join(summary.outputs),
    ]
    return "\n".join(lines)


class _Progress:
    """A rich progress bar on a terminal (pairs, rate, time left); nothing otherwise."""

    def __init__(self, enabled: bool) -> None:
        self.enabled = enabled
        self.bar: Progress | None = None
        self.task: TaskID | None = None

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
            self.t0 = time.perf_counter()
            return
        dt = time.perf_counter() - self.t0
        rate = f"{(done - self.start_done) / dt:,.0f} pairs/s" if dt > 0 else ""
        self.bar.update(self.task, completed=done, rate=rate)

    def __exit__(self, *exc) -> None:
        if self.bar is not None:
            self.bar.__exit__(*exc)


#: Radio flags as ``link`` has them, but screen takes no link file: the frequency is required here.
_SCREEN_RADIO_HELP = {**RADIO_FLAGS, "freq_ghz": "Frequency, GHz (required)."}


def _screen_radio_options(func):
    for name in reversed(list(_SCREEN_RADIO_HELP)):
        func = click.option(f"--{name.replace('_', '-')}", name, type=float, default=None,
                            help=_SCREEN_RADIO_HELP[name], cls=DefaultHelpOption)(func)
    return func


@click.command()
@click.argument("sites_file", metavar="SITES", type=click.Path(dir_okay=False))
@terrain_options
@surroundings_options
@roof_mount_options
@_screen_radio_options
@radio_profile_options
@analysis_options
@climate_options
@reflection_options
@click.option("--reflections", is_flag=True, default=False,
              help="Search every pair for ground reflections and add the columns reflection_point_km, "
                   "reflection_swing_db and over_water (implied by --water, --sea-level-water and the "
                   "--reflection-k flags).")
@click.option("--out", "-o", "out", required=True, type=click.Path(dir_okay=False), metavar="RESULT",
              help="Result file: .gpkg (layers links and sites, and a run table), .geojson or .csv (sites "
                   "beside it, as RESULT-sites), or .kml/.kmz (sites and links for globe viewers); CSV, GeoJSON "
                   "and KML get RESULT.run.json (e.g. r.csv.run.json), how the result was made. An existing "
                   "result is kept unless --overwrite is given; a path that is one of the inputs is refused.")
@click.option("--csv-geometry", default="none", show_default=True, metavar="none|wkt",
              help="CSV output only: wkt adds a column 'wkt' with each link's line (and each site's point) "
                   "as WKT in WGS84 degrees.")
@click.option("--max-km", type=float, default=None, help="Only pairs at most this far apart, km [default: no limit].")
@click.option("--pairs", "pairs_file", type=click.Path(dir_okay=False), default=None,
              help="CSV of the pairs to screen (two columns of site names: a,b) instead of all pairs; "
                   "columns height_a_m and height_b_m, if present, give that pair's antenna heights, m "
                   "(measured as the site's own: above ground, or above the roof).")
@click.option("--hub", "hubs", multiple=True, metavar="NAME",
              help="Screen this site to every other site (repeatable) instead of all pairs.")
@click.option("--name-col", default=None,
              help="Column of site names [default: the first of name, site, site_name, id].")
@click.option("--lat-col", default=None,
              help="Column of latitudes, CSV only [default: the first of lat, latitude, lat_deg].")
@click.option("--lon-col", default=None,
              help="Column of longitudes, CSV only [default: the first of lon, lng, long, longitude, lon_deg].")
@click.option("--agl-col", default=None,
              help="Column of antenna heights above ground, m [default: the first of antenna_agl_m, agl_m, "
                   "antenna_height_m, height_agl_m].")
@click.option("--gain-col", default=None,
              help="Column of antenna gains, dBi, overriding --gain-a-dbi/--gain-b-dbi [default: the first of "
                   "gain_dbi, antenna_gain_dbi, if present].")
@click.option("--antenna", "antenna_file", default=None, metavar="FILE",
              help="Antenna file (TOML) for every site: its gain at --freq-ghz is each end's gain "
                   "(not with --gain-a-dbi/--gain-b-dbi).")
@click.option("--antenna-col", default=None, metavar="NAME",
              help="Column naming an antenna file per site, relative to the sites file; blank cells keep "
                   "the other gains [default: a column named antenna, if present].")
@click.option("--max-mast-col", default=None,
              help="Column of the tallest mast allowed, m [default: the first of max_mast_m, max_agl_m, if present].")
@click.option("--agl-m", "default_agl_m", type=float, default=None,
              help="Antenna height above ground where the file has no height column, m [default: 10].")
@click.option("--layer", default=None, help="Layer of a multi-layer sites file (GeoPackage).")
@click.option("--min-margin-db", type=float, default=10.0, show_default=True,
              help="Fade margin a pair needs at the design k to count as viable, dB.")
@click.option("--workers", type=int, default=None, help="Local worker processes [default: all cores].")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run the chunks on a Dask cluster at this address (tcp://host:8786; 10 s to connect); "
                   "raster paths are sent as absolute paths, which the workers must reach.")
@click.option("--chunk-pairs", type=int, default=2000, show_default=True,
              help="Pairs per chunk (unit of work, of progress and of resumption).")
@click.option("--resume", is_flag=True, help="Finish an interrupted run of the same command (refused while a run on RESULT is alive).")
@click.option("--restart", is_flag=True, help="Discard an interrupted run's partial results and start again.")
@click.option("--overwrite", is_flag=True,
              help="Replace an existing result (and its -sites file); the old files stay until the new "
                   "ones are complete.")
@click.option("--quiet", "-q", is_flag=True,
              help="No progress bar and no summary; skipped rows and warnings still go to stderr.")
@confidence_options
@click.option("--rank-by", "rank_by", default="fade_margin_db", show_default=True, metavar="fade_margin_db|p_meets",
              help="Column the result is ranked by, best first; p_meets needs the confidence options "
                   "(ties by fade margin).")
@friendly_errors
def screen(sites_file, out, max_km, pairs_file, hubs, name_col, lat_col, lon_col, agl_col, gain_col,
           antenna_file, antenna_col, max_mast_col, default_agl_m, layer, min_margin_db, workers, scheduler,
           chunk_pairs, resume, restart, overwrite, quiet, above_roof, csv_geometry, rank_by="fade_margin_db",
           reflections=False,
           **opts) -> None:
    """Screen candidate SITES: which pairs can link, and how well.

    SITES is a CSV (name, latitude, longitude, antenna height; other columns
    are carried through) or any point layer (GeoPackage, GeoJSON, Shapefile;
    any CRS).  Pairs: all pairs (within --max-km), --hub NAME to all others,
    or a --pairs file; both directions count as one link.  Each pair gets the
    numbers `terrahop link` gives it; RESULT ranks them by fade margin.
    Buildings, trees and surface models (--obstructions, --surface) and roof
    mounts (--above-roof, or a 'mount' column) work as they do for `link`.
    """
    # The engine (numpy, pyproj, rasterio...) is imported when the command runs, so that
    # `terrahop --help` and the other commands start fast.
    from ..screening import PairPlan, resolve_hubs, screen as run_screen
    from ..terrain import ElevationModel

    _check_flags(opts, resume, restart, pairs_file, hubs, max_km, min_margin_db)
    inputs = [sites_file, pairs_file, *opts["dem"], antenna_file, opts.get("water")]
    _check_out(out, inputs)
    from ..io.screen_output import check_csv_geometry

    check_csv_geometry(csv_geometry, out)
    from ..confidence import resolve_confidence
    from ..io.screen_output import check_rank_by

    confidence = resolve_confidence(opts)  # p_meets, p_los when any confidence option is given
    check_rank_by(rank_by, confidence is not None)
    opts = _with_antenna_gains(antenna_file, opts)
    if scheduler is not None:
        from ..screening import check_scheduler_address

        scheduler = check_scheduler_address(scheduler)  # before any work: a garbled address is one line
    radio, settings = resolve_radio_settings(opts)
    reflection = _reflection_search(opts, reflections)  # profiler.reflection; water layer checked here
    sites, bad, explicit, pair_heights = _read_sites_and_pairs(
        sites_file, pairs_file, dict(name_col=name_col, lat_col=lat_col, lon_col=lon_col, agl_col=agl_col,
                                     gain_col=gain_col, max_mast_col=max_mast_col, default_agl_m=default_agl_m,
                                     layer=layer))
    sites, bad = _site_antennas(sites, bad, float(radio.freq_ghz), sites_file, antenna_col)
    radios = _site_radios(opts, sites, sites_file, radio, min_margin_db)
    gain_warning = default_gain_warning(sites.gain_dbi is not None, opts)
    plan = PairPlan(max_km=max_km, hubs=resolve_hubs(sites, hubs) if hubs else (), explicit=explicit,
                    heights=pair_heights)
    surroundings = _open_surroundings(opts, above_roof)  # read and checked before any work
    rasters, fetched = list(opts["dem"]), None
    if opts.get("terrain"):  # an open dataset around every site, after the given rasters (they win)
        from ..terrain_sources import TerrainRequest, dataset, ensure_area

        request = TerrainRequest(dataset(opts["terrain"]).name, opts.get("terrain_url"), bool(opts.get("offline")))
        from ..jobs import terrain_margin_km

        fetched = ensure_area(request, sites.lat_deg, sites.lon_deg, terrain_margin_km(settings.climate))
        rasters.append(fetched.vrt)
    model = ElevationModel(rasters, vertical_unit=opts.get("vertical_unit"),
                           nodata_fill_m=opts.get("nodata_fill_m"))
    if confidence is not None and fetched is not None:  # the dataset's stated accuracy, as for `link`
        import dataclasses

        confidence = dataclasses.replace(confidence, terrain_source=fetched.dataset.name)
    description = _run_description(radio, settings, min_margin_db, rasters, sites_file,
                                   other_inputs=_other_inputs(opts, pairs_file, antenna_file, radios, surroundings))
    show = not quiet and sys.stderr.isatty()
    try:
        with _Progress(show) as bar:
            summary = run_screen(
                sites, model, radio, settings, out, plan=plan, bad_rows=bad, workers=workers,
                scheduler=scheduler, resume=resume, restart=restart, overwrite=overwrite,
                chunk_pairs=chunk_pairs, inputs=[i for i in inputs if i],
                min_margin_db=min_margin_db, progress=bar.update,
                surroundings=surroundings, above_roof=above_roof, radios=radios, reflection=reflection,
                run_description=description, csv_geometry=csv_geometry,
                confidence=confidence, rank_by=rank_by,
            )
    except KeyboardInterrupt:
        click.echo(
            "interrupted: finished chunks are kept; run the same command with --resume to finish", err=True
        )
        sys.exit(130)
    finally:
        model.close()
        if surroundings is not None and surroundings.surface is not None:
            surroundings.surface.close()
    _report(summary, gain_warning, quiet, sites)
    if radios is not None and not quiet:
        click.echo(radio_line(radios))
    if fetched is not None and not quiet:
        d = fetched.dataset
        click.echo(f"terrain: {d.name} ({d.title}), {len(fetched.tiles)} tile(s), heights above "
                   f"{d.vertical_datum} (EPSG:{d.vertical_epsg})"
                   + ("; a surface model (roofs and canopy in the heights)" if d.surface_model else ""))


def _site_radios(opts: dict, sites, sites_file, radio, min_margin_db: float):
    """Radio profiles per site (--radio or a radio column) and EIRP limits (:func:`profiler.jobs.site_radios`)."""
    from ..jobs import site_radios

    return site_radios(opts, sites, sites_file, radio, min_margin_db)


def radio_line(radios) -> str:
    """One line: each radio of the run, its channel and EIRP limit, and how many sites use it."""
    import numpy as np

    counts = np.bincount(np.asarray(radios.site_plan, dtype=np.int64), minlength=len(radios.plans))
    parts = []
    for plan, limit, name, n in zip(radios.plans, radios.limits, radios.names, counts.tolist()):
        what = name if plan is None else f"{plan.profile.name} ({name}, {plan.channel_mhz:g} MHz)"
        eirp = f", EIRP limit {limit.max_eirp_dbm:g} dBm" if limit is not None else ""
        parts.append(f"{what}{eirp}: {n} site{'s' if n != 1 else ''}")
    return "radios: " + "; ".join(parts)


def _run_description(radio, settings, min_margin_db: float, rasters: list, sites_file: str,
                     other_inputs: dict | None = None) -> dict:
    """How this run's result is made (written into the GeoPackage or beside the file)."""
    from ..io.run_description import describe_run
    from .options import command_words

    return describe_run(command=command_words(), radio=radio, settings=settings, min_margin_db=min_margin_db,
                        dem=rasters, surface=list(other_inputs.pop("surface", []) if other_inputs else []),
                        sites_file=sites_file, other_inputs=other_inputs)


def _other_inputs(opts: dict, pairs_file, antenna_file, radios, surroundings) -> dict:
    """The run's other input files (hashed in the run description): pairs, layers, antennas, radio profiles."""
    import os

    profiles = [] if radios is None else [n for n in radios.names if os.path.isfile(n)]
    return {
        "surface": list(opts.get("surface") or ()),
        "pairs_file": pairs_file,
        "obstruction_layers": None if surroundings is None else
        sorted({layer.spec.path for layer in surroundings.layers}),
        "antenna_file": antenna_file,
        "radio_profiles": profiles or None,
    }


def _check_flags(opts: dict, resume: bool, restart: bool, pairs_file, hubs, max_km, min_margin_db) -> None:
    """InputError for missing or contradicting flags and numbers out of range, before any file is read."""
    from ..validation import check_number

    if not opts.get("dem") and not opts.get("terrain"):
        raise InputError("no elevation raster: give --dem FILE (repeatable) or --terrain SOURCE")
    if opts.get("freq_ghz") is None:
        raise InputError("frequency missing: give --freq-ghz")
    if resume and restart:
        raise InputError("--resume and --restart contradict each other; give one")
    if pairs_file and hubs:
        raise InputError("--pairs and --hub choose pairs in different ways; give one")
    if max_km is not None:
        check_number(max_km, "max_km", "--max-km")
    check_number(min_margin_db, "min_margin_db", "--min-margin-db")
    if opts.get("nodata_fill_m") is not None:
        check_number(opts["nodata_fill_m"], "nodata_fill_m", "--nodata-fill-m")


def _open_surroundings(opts: dict, above_roof: bool):
    """Obstruction layers and surface rasters of the options, read as ``terrahop link`` reads them; or None."""
    from ..jobs import surroundings_from_options

    surroundings = surroundings_from_options(opts)
    if above_roof and (surroundings is None or not any(l.kind == "building" for l in surroundings.layers)):
        raise InputError("--above-roof measures antenna heights from the roofs of a building layer: "
                         "give --obstructions FILE with the buildings, or leave --above-roof out")
    return surroundings


def _with_antenna_gains(antenna_file, opts: dict) -> dict:
    """``opts`` with both gains from the antenna file given for every site (--antenna), if any."""
    if antenna_file is None:
        return opts
    from ..equipment.site_antennas import gain_for_all_sites

    gain = gain_for_all_sites(antenna_file, float(opts["freq_ghz"]), opts)
    return dict(opts, gain_a_dbi=gain, gain_b_dbi=gain)


def _site_antennas(sites, bad, freq_ghz: float, sites_file, antenna_col):
    """Per-site gains from the antenna files a sites-file column names (profiler.equipment.site_antennas)."""
    from ..equipment.site_antennas import apply_site_antennas

    sites, bad = apply_site_antennas(sites, bad, freq_ghz, sites_file, antenna_col)
    if len(sites) < 2:
        raise InputError(f"{sites_file}: fewer than two usable sites once the antenna files are read; "
                         f"first: {bad[-1].describe()}")
    return sites, bad


def _check_out(out, inputs) -> None:
    """InputError when RESULT has an unknown extension, no folder, or would land on an input."""
    from ..io.screen_output import check_output_path, check_outputs_spare_inputs

    check_output_path(out)
    check_outputs_spare_inputs(out, inputs)


def _read_sites_and_pairs(sites_file, pairs_file, columns: dict):
    """The usable sites, the skipped rows (sites and pairs), the listed pairs' indices and heights (or None)."""
    from ..io.sites import read_name_pairs_with_heights, read_sites

    sites, bad = read_sites(sites_file, **columns)
    if len(sites) < 2:
        why = f"; {len(bad)} row(s) skipped, first: {bad[0].describe()}" if bad else ""
        raise InputError(f"{sites_file}: fewer than two usable sites; nothing to screen{why}")
    explicit = heights = None
    if pairs_file:
        a, b, heights, bad_pairs = read_name_pairs_with_heights(pairs_file, sites.names)
        bad += bad_pairs
        explicit = (a, b)
    return sites, bad, explicit, heights


def _report(summary, gain_warning: str | None, quiet: bool, sites) -> None:
    """Skipped rows and warnings on stderr (even with -q), then the summary on stdout."""
    skipped = format_skipped(summary.bad_rows, summary.problems)
    if skipped:
        click.echo(skipped, err=True)
    for note in summary.warnings:  # shown even with -q
        click.echo(f"warning: {note}", err=True)
    if gain_warning:  # after the run, so a refused run still prints one line only
        click.echo(f"warning: {gain_warning}", err=True)
    if not quiet:
        click.echo(format_screen_summary(summary))
        click.echo(f"columns: {sites.describe_columns()}")


def _reflection_search(opts: dict, asked: bool):
    """ReflectionSettings when the run searches for reflections (--reflections or a reflection flag), else None.

    The water layer is read once here, so a bad file is one line before any work.
    """
    keys = ("water", "sea_level_water", "reflection_k_min", "reflection_k_max")
    if not asked and all(opts.get(k) is None for k in keys):
        return None
    from ..jobs import open_water_layer, resolve_reflection

    reflection = resolve_reflection(opts)
    open_water_layer(reflection)
    if reflection.water_file:
        reflection = dataclasses.replace(reflection, water_file=os.path.abspath(reflection.water_file))
    return reflection
