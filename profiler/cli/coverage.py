"""``terrahop coverage``: what a hub can serve, as a multi-band raster, a ranked list of sites and a map."""

from __future__ import annotations

import click

from .options import (DefaultHelpOption, _compose, _diffraction_callback, _site_callback, antenna_options,
                      climate_options, friendly_errors, radio_options, radio_profile_options, step_margin_option)

__all__ = ["coverage"]


def _option(*args, **kwargs):
    return click.option(*args, cls=DefaultHelpOption, **kwargs)


coverage_options = _compose(
    _option("--site", "site", callback=_site_callback, metavar="LAT,LON", help="Hub position, decimal degrees WGS84."),
    _option("--agl", "agl", type=float, default=None, metavar="M",
            help="Hub antenna height above ground, m [default: the --hub row's height]."),
    _option("--hub", "hub", default=None, metavar="NAME", help="Take the hub from the --sites file by name."),
    _option("--hub-label", "hub_label", default=None, metavar="TEXT", help="Name of a --site hub [default: hub]."),
    _option("--sites", "sites", default=None, type=click.Path(dir_okay=False), metavar="FILE",
            help="Candidate subscriber sites (CSV or point layer, as screen reads them); ranked by fade margin "
                 "into --sites-out. The hub row (--hub) is left out."),
    _option("--sites-out", "sites_out", default=None, metavar="FILE",
            help="Ranked candidate sites: .csv, .gpkg or .kml [default: OUT with -sites.csv]."),
    _option("--radius-km", "radius_km", type=float, required=True, metavar="KM", help="Radius of the area, km."),
    _option("--rx-agl-m", "rx_agl_m", type=float, default=6.0, show_default=True, metavar="M",
            help="Receiver antenna height above ground (or above the --surface model with --rx-above-surface), m; "
                 "a sites file's height column wins for its sites."),
    _option("--rx-above-surface", "rx_above_surface", is_flag=True, default=False,
            help="Receivers stand on the --surface model (roofs, tree tops) instead of the ground."),
    _option("--cell-m", "cell_m", type=float, default=None, metavar="M",
            help="Output cell size, m, on a grid centred on the hub [default: the terrain raster's own grid]."),
    _option("--out", "out", required=True, metavar="FILE", help="Output raster (.tif, Cloud-Optimised GeoTIFF)."),
    _option("--png", "png", default=None, metavar="FILE", help="Also draw the coverage map as PNG."),
    _option("--dem", "dem", multiple=True, metavar="RASTER", required=True,
            help="Elevation raster (any GDAL format, any CRS); repeat for tiles, the first wins where they overlap."),
    _option("--vertical-unit", type=click.Choice(["m", "ft", "us-ft"]), default=None,
            help="Unit of the raster heights [default: the band's unit metadata, else m]."),
    _option("--nodata-fill-m", type=float, default=None, metavar="HEIGHT",
            help="Use this height (m) where the raster has nodata, instead of leaving cells behind it empty."),
    _option("--surface", "surface", multiple=True, metavar="RASTER",
            help="Surface model (DSM) beside --dem: its height above the terrain is clutter along every radial."),
    _option("--obstructions", "obstructions", multiple=True, metavar="FILE", hidden=True),
    _option("--k", "k", default=None, metavar="K",
            help="k-factor of the bands, a number or a fraction such as 4/3 [default: {default}]."),
    _option("--spacing-m", type=float, default=None,
            help="Sample spacing along each radial, m [default: half the terrain cell at the hub, as link]."),
    _option("--diffraction", "diffraction", callback=_diffraction_callback, default=None, metavar="METHOD",
            help="Diffraction method: delta-bullington (ITU-R P.526-15 section 4.5.2), bullington (section "
                 "4.5.1) or knife-edge (the worst edge, section 4.1) [default: delta-bullington, as link]."),
    _option("--polarisation", type=click.Choice(["horizontal", "vertical"], case_sensitive=False), default=None,
            help="Polarisation, for the smooth-earth part of delta-bullington [default: {default}]."),
    _option("--ground", type=click.Choice(["land", "sea"], case_sensitive=False), default=None,
            help="Ground constants for the smooth-earth part of delta-bullington [default: {default}]."),
    _option("--hub-azimuth-deg", "hub_azimuth_deg", type=float, default=None, metavar="DEG",
            help="Sector antenna: boresight azimuth from true north; the --antenna-a file's [envelope] gives "
                 "the gain away from it [default: the antenna's gain in every direction]."),
    _option("--hub-downtilt-deg", "hub_downtilt_deg", type=float, default=0.0, show_default=True, metavar="DEG",
            help="Sector antenna down-tilt, degrees below the horizontal."),
    _option("--workers", type=int, default=None, help="Local worker processes [default: all cores]."),
    _option("--scheduler", default=None, metavar="ADDRESS", help="Run on a Dask cluster (tcp://host:8786)."),
    _option("--resume", is_flag=True, help="Finish an interrupted run of the same command."),
    _option("--restart", is_flag=True, help="Discard an interrupted run's staged blocks and start again."),
    _option("--block-radials", type=int, default=256, show_default=True, hidden=True),
    _option("-q", "--quiet", is_flag=True, help="Print nothing but warnings and errors."),
)


@click.command()
@coverage_options
@radio_options
@radio_profile_options
@step_margin_option
@climate_options
@antenna_options
@friendly_errors
def coverage(**opts) -> None:
    """Coverage of a hub: for every cell around it, clearance, diffraction, received level, SNR and fade margin.

    Receivers are evaluated along radial profiles from the hub with the link engine's formulas; a cell's
    figures match `terrahop link` from the hub to that cell within the tolerances in the README.
    """
    import sys

    try:
        for line in run_coverage_command(opts):
            if not opts.get("quiet"):
                click.echo(line)
    except KeyboardInterrupt:
        click.echo("interrupted: finished blocks are kept; run the same command with --resume to finish", err=True)
        sys.exit(130)


def _hub_and_candidates(opts: dict):
    """The hub (from --site/--agl or --hub in --sites) and the candidate sites (names, lat, lon, agl) or None."""
    from ..coverage.engine import Hub
    from ..errors import InputError
    from ..io.sites import read_sites
    from ..validation import check_number

    table = None
    if opts.get("sites"):
        table, bad = read_sites(opts["sites"], default_agl_m=opts["rx_agl_m"])
        for row in bad[:20]:
            click.echo(f"skipped: {row.describe()}", err=True)
        if len(bad) > 20:
            click.echo(f"skipped: {len(bad) - 20} more rows", err=True)
    if opts.get("hub") and opts.get("site"):
        raise InputError("give the hub by --site LAT,LON or by --hub NAME, not both")
    if opts.get("hub"):
        if table is None:
            raise InputError(f"--hub {opts['hub']} needs --sites FILE holding a row of that name")
        hits = [i for i, n in enumerate(table.names) if str(n) == opts["hub"]]
        if not hits:
            raise InputError(f"--hub {opts['hub']}: no site of that name in {opts['sites']}")
        i = hits[0]
        agl = opts["agl"] if opts.get("agl") is not None else float(table.antenna_agl_m[i])
        hub = Hub(opts["hub"], float(table.lat_deg[i]), float(table.lon_deg[i]),
                  check_number(agl, "antenna_agl_m", "hub"))
        keep = [k for k in range(len(table.names)) if k != i]
    elif opts.get("site"):
        if opts.get("agl") is None:
            raise InputError("--site needs --agl M, the hub antenna's height above ground")
        lat, lon = opts["site"]
        hub = Hub(opts.get("hub_label") or "hub", lat, lon, check_number(opts["agl"], "antenna_agl_m", "hub"))
        keep = list(range(len(table.names))) if table is not None else []
    else:
        raise InputError("no hub: give --site LAT,LON with --agl M, or --hub NAME with --sites FILE")
    if table is None:
        return hub, None
    import numpy as np

    idx = np.asarray(keep, dtype=int)
    names = [str(n) for n in table.names[idx]]
    return hub, (names, table.lat_deg[idx], table.lon_deg[idx], table.antenna_agl_m[idx])


def _radio(opts: dict):
    """Radio, radio plan, settings and hub antenna from the link options (profiler.jobs rules)."""
    from ..io.linkfile import LinkSpec
    from ..jobs import resolve_antennas, resolve_radio, resolve_radio_plan, resolve_settings, with_antenna_gains

    spec = LinkSpec(path="", title=None)
    antennas = resolve_antennas(spec, opts)
    radio = with_antenna_gains(resolve_radio(opts, {}, "the command line"), antennas)
    radio, plan, _limit = resolve_radio_plan(opts, {}, {}, radio, "the command line")
    settings = resolve_settings(opts, {}, {}, "the command line")
    return radio, plan, settings, antennas.get("a")


def _sector(opts: dict, antenna):
    from ..coverage.engine import Sector
    from ..errors import InputError
    from ..validation import check_number

    if opts.get("hub_azimuth_deg") is None:
        return None
    az = check_number(opts["hub_azimuth_deg"], "hub_azimuth_deg")
    tilt = check_number(opts["hub_downtilt_deg"], "hub_downtilt_deg")
    if antenna is None or antenna.envelope is None:
        raise InputError("--hub-azimuth-deg needs --antenna-a FILE with an [envelope] (the gain away from "
                         "boresight); without one, leave the azimuth out for the same gain in every direction")
    env = antenna.envelope
    return Sector(az % 360.0, tilt, tuple(env.angle_deg), tuple(env.relative_db))


def run_coverage_command(opts: dict):
    """Check the options, plan, run, write; yield the lines to print."""
    import os
    import warnings

    from ..coverage.engine import COVERAGE_METHODS, CoverageSettings, plan_coverage
    from ..coverage.output import (RASTER_SUFFIXES, SITES_SUFFIXES, candidate_rows, check_output_path, draw_png,
                                   write_candidates, write_raster)
    from ..coverage.run import finish, run_coverage
    from ..errors import InputError, TerrahopWarning
    from ..terrain import ElevationModel
    from ..validation import check_number

    if opts.get("obstructions"):
        raise InputError("coverage does not read obstruction layers (--obstructions); give their heights as a "
                         "surface model raster with --surface")
    if opts.get("resume") and opts.get("restart"):
        raise InputError("--resume and --restart contradict each other; give one")
    radius_km = check_number(opts["radius_km"], "radius_km")
    rx_agl = check_number(opts["rx_agl_m"], "rx_agl_m")
    cell_m = None if opts.get("cell_m") is None else check_number(opts["cell_m"], "cell_m")
    if opts.get("hub_azimuth_deg") is not None:
        check_number(opts["hub_azimuth_deg"], "hub_azimuth_deg")
    check_number(opts["hub_downtilt_deg"], "hub_downtilt_deg")
    if opts.get("rx_above_surface") and not opts.get("surface"):
        raise InputError("--rx-above-surface needs --surface RASTER (the surface the receivers stand on)")
    if opts.get("block_radials") is not None and opts["block_radials"] < 1:
        raise InputError(f"--block-radials must be 1 or more, got {opts['block_radials']}")
    if opts.get("workers") is not None and opts["workers"] < 1:
        raise InputError(f"--workers must be 1 or more, got {opts['workers']}")
    scheduler = opts.get("scheduler")
    if scheduler is not None:
        from ..screening.executors import check_scheduler_address

        scheduler = check_scheduler_address(scheduler)
    inputs = [*opts["dem"], *opts.get("surface", ()), opts.get("sites"), opts.get("radio_profile"),
              opts.get("antenna_a"), opts.get("antenna_b")]
    out = str(check_output_path(opts["out"], "--out", RASTER_SUFFIXES, inputs))
    png = None if opts.get("png") is None else str(check_output_path(opts["png"], "--png", (".png",), inputs))
    method = opts.get("diffraction") or "delta-bullington"
    if method not in COVERAGE_METHODS:
        raise InputError(f"--diffraction {method}: coverage computes {', '.join(COVERAGE_METHODS)} from its radial "
                         "sweep; use terrahop link for the other methods on chosen cells")
    hub, candidates = _hub_and_candidates(opts)
    sites_out = None
    if candidates is not None:
        given = opts.get("sites_out") or os.path.splitext(out)[0] + "-sites.csv"
        sites_out = str(check_output_path(given, "--sites-out", SITES_SUFFIXES, inputs + [out]))
    elif opts.get("sites_out"):
        raise InputError("--sites-out needs --sites FILE (the candidate sites to rank)")
    if png is not None and os.path.realpath(png) == os.path.realpath(out):
        raise InputError(f"--png {png} is the --out file; choose another name")
    radio, plan, settings, antenna_a = _radio(opts)
    sector = _sector(opts, antenna_a)
    model = ElevationModel(list(opts["dem"]), vertical_unit=opts.get("vertical_unit"),
                           nodata_fill_m=opts.get("nodata_fill_m"))
    surface = (ElevationModel(list(opts["surface"]), vertical_unit=opts.get("vertical_unit"))
               if opts.get("surface") else None)
    cov = CoverageSettings(
        radius_m=radius_km * 1000.0, rx_agl_m=rx_agl, radio=radio, k=float(settings.k), method=method,
        cell_m=cell_m, spacing_m=settings.spacing_m, plan=plan, sector=sector, climate=settings.climate,
        polarisation=settings.polarisation, ground=settings.ground,
        rx_above_surface=bool(opts.get("rx_above_surface")), block_radials=int(opts.get("block_radials") or 256))
    if model.total_cells() <= 200_000_000:
        model.preload()
    the_plan = plan_coverage(model, hub, cov, candidates, surface)
    if the_plan.overruns:
        warnings.warn(TerrahopWarning(
            f"the {radius_km:g} km disk reaches beyond the terrain rasters; cells without terrain on the way "
            "are left as nodata"))
    result, lock = run_coverage(model, the_plan, out, surface=surface, workers=opts.get("workers"),
                                scheduler=scheduler, resume=bool(opts.get("resume")),
                                restart=bool(opts.get("restart")))
    try:
        tags = {"hub": f"{hub.name} ({hub.lat_deg:.6f}, {hub.lon_deg:.6f}) {hub.agl_m:g} m above ground",
                "hub_ground_m": f"{the_plan.hub_ground_m:.2f}", "freq_ghz": radio.freq_ghz,
                "radius_km": radius_km, "rx_agl_m": rx_agl, "k": settings.k, "diffraction": method,
                "radials": the_plan.n_radials, "spacing_m": f"{the_plan.spacing_m:.3f}",
                "software": _version()}
        if plan is not None:
            tags["steps"] = ", ".join(f"{i + 1}={label}" for i, label in enumerate(plan.steps.labels))
        write_raster(out, result, tags)
        written = [out]
        if candidates is not None and sites_out is not None:
            names, lat, lon, agl = candidates
            rows = candidate_rows(result, names, lat, lon, agl)
            write_candidates(sites_out, rows, f"candidates of {hub.name}")
            written.append(sites_out)
        if png is not None:
            draw_png(png, result, f"Coverage of {hub.name}")
            written.append(png)
    except BaseException:
        if lock is not None:
            lock.release()
        raise
    finish(out, lock)
    bands = result.bands
    import numpy as np

    margin = bands["fade_margin_db"]
    evaluated = int(np.isfinite(margin).sum())
    good = int((margin >= 0).sum())
    resumed = f" ({result.blocks_resumed} of {result.blocks} blocks from the interrupted run)" \
        if result.blocks_resumed else ""
    yield (f"{evaluated} cells evaluated on {the_plan.n_radials} radials in {result.seconds:.1f} s{resumed}; "
           f"{good} with a fade margin of 0 dB or more")
    yield f"wrote {', '.join(written)}"


def _version() -> str:
    from .._version import __version__

    return f"terrahop {__version__}"
