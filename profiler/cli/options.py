"""Options shared by several subcommands, and the one place errors become messages.

This module only declares options and turns errors into one line; merging a
link file with the options and opening data is :mod:`profiler.jobs`.  Help
texts write ``{default}`` where the default goes: :class:`DefaultHelpOption`
fills it from :func:`profiler.jobs.default_text` (the Python types' defaults)
when help is shown.
"""

from __future__ import annotations

import functools
from typing import Any, Callable

import click

from ..errors import InputError, TerrahopError
from ..io.linkfile import VERTICAL_UNIT_CHOICES

__all__ = [
    "friendly_errors",
    "quiet_broken_pipe",
    "BROKEN_PIPE_EXIT",
    "parse_lat_lon",
    "parse_number",
    "terrain_options",
    "dem_option",
    "site_options",
    "radio_options",
    "radio_profile_options",
    "step_margin_option",
    "analysis_options",
    "climate_options",
    "CLIMATE_FLAGS",
    "resolve_climate",
    "ResolvedLink",
    "resolve_link",
    "resolve_radio",
    "resolve_settings",
    "RADIO_FLAGS",
    "surroundings_options",
    "flag_form",
    "DefaultHelpOption",
    "mount_options",
    "roof_mount_options",
    "open_surroundings_of",
    "link_input_options",
    "reflection_options",
    "opened_link_data",
    "analyse_resolved",
    "antenna_options",
    "date_option",
    "command_words",
]


def friendly_errors(func: Callable) -> Callable:
    """Turn terrahop and file errors into a one-line message and exit code 1."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return func(*args, **kwargs)
        except TerrahopError as exc:
            raise click.ClickException(exc.render(flag_form)) from None
        except BrokenPipeError as exc:
            if stdout_reader_gone():
                quiet_broken_pipe()
            # Some other pipe or socket broke (a Dask connection, say): that is an error.
            raise click.ClickException(f"{exc.__class__.__name__}: {exc}") from None
        except OSError as exc:
            raise click.ClickException(f"{exc.__class__.__name__}: {exc}") from None

    return wrapper


#: Python arguments (an error's ``parameter``) whose command-line form is not ``--`` plus the name
#: with dashes (climate flags: :data:`CLIMATE_FLAGS`).
_FLAG_OF = {"surroundings": "--obstructions FILE", "default_agl_m": "--agl-m", "radio_profile": "--radio"}


def flag_form(parameter: str, value_word: str = "") -> str:
    """How the command line names a setting in a message: ``--nodata-fill-m HEIGHT``."""
    climate = CLIMATE_FLAGS.get(parameter)
    flag = climate[0] if climate else _FLAG_OF.get(parameter, "--" + parameter.replace("_", "-"))
    return f"{flag} {value_word}" if value_word else flag


#: Exit code when the reader of our output went away (128 + SIGPIPE, as a shell reports it).
BROKEN_PIPE_EXIT = 141


def stdout_reader_gone() -> bool:
    """True when stdout is a pipe whose reader has closed it (so a BrokenPipeError is ours to ignore)."""
    import select
    import sys

    try:
        fd = sys.stdout.fileno()
        poller = select.poll()
    except (OSError, ValueError, AttributeError):  # no real file, or no poll (Windows)
        return True  # cannot tell; a broken pipe while printing is by far the likely case
    poller.register(fd, select.POLLOUT)
    return any(ev & select.POLLERR for _, ev in poller.poll(0))


def quiet_broken_pipe() -> None:
    """End quietly after the reader closed stdout (``terrahop demo | head -1``): no message, exit 141."""
    import os
    import sys

    # Point stdout at /dev/null so the interpreter's last flush cannot fail and print again.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):  # not a real file (e.g. a test runner)
        pass
    sys.exit(BROKEN_PIPE_EXIT)


def parse_lat_lon(text: str, what: str) -> tuple[float, float]:
    """'LAT,LON' in decimal degrees -> (lat, lon); raise click.BadParameter if garbled."""
    parts = [p.strip() for p in str(text).replace(";", ",").split(",")]
    if len(parts) != 2:
        raise click.BadParameter(f"{what} must be LAT,LON in decimal degrees, got {text!r}")
    try:
        lat, lon = float(parts[0]), float(parts[1])
    except ValueError:
        raise click.BadParameter(f"{what} must be LAT,LON in decimal degrees, got {text!r}") from None
    from ..validation import normalise_positions, position_problem  # lazy: numpy

    problem = position_problem(lat, lon)
    if problem is not None:
        raise click.BadParameter(f"{what}: {problem}")
    lat_n, lon_n = normalise_positions(lat, lon)
    return float(lat_n), float(lon_n)


def _site_callback(ctx: click.Context, param: click.Parameter, value: str | None):
    if value is None:
        return None
    return parse_lat_lon(value, f"--{param.name.replace('_', '-')}")


#: Diffraction methods offered on the command line; kept equal to
#: profiler.losses.terrain_diffraction.DIFFRACTION_METHODS (a test checks) so
#: that ``--help`` need not import numpy.
DIFFRACTION_METHOD_NAMES = ("delta-bullington", "bullington", "deygout", "epstein-peterson", "knife-edge")


def _diffraction_callback(ctx: click.Context, param: click.Parameter, value: str | None):
    if value is None:
        return None
    from ..losses.terrain_diffraction import resolve_method  # lazy: numpy, numba

    try:
        return resolve_method(value)
    except InputError as exc:
        raise click.BadParameter(str(exc)) from None


#: Where a help text names its default; filled when help is shown.
DEFAULT = "{default}"

#: Option names whose default is kept under another setting name.
_DEFAULT_OF = {"diffraction": "diffraction_method", "agl_a": "agl", "agl_b": "agl"}


class DefaultHelpOption(click.Option):
    """An option whose help names its default as the Python types define it.

    The default is read only when help is shown, so that importing the CLI
    does not import numpy (the defaults live in the numerical types).
    """

    def get_help_record(self, ctx: click.Context) -> tuple[str, str] | None:
        record = super().get_help_record(ctx)
        if record is None or DEFAULT not in record[1]:
            return record
        from ..jobs import default_text  # lazy: the CLI's import stays light (see the class docstring)

        name = self.name or ""
        return record[0], record[1].replace(DEFAULT, default_text(_DEFAULT_OF.get(name, name)))


def _option(*args: Any, **kwargs: Any) -> Callable:
    """click.option whose help may say ``{default}``."""
    return click.option(*args, cls=DefaultHelpOption, **kwargs)


def _compose(*decorators: Callable) -> Callable:
    def apply(func: Callable) -> Callable:
        for d in reversed(decorators):
            func = d(func)
        return func

    return apply


#: The elevation raster option alone (``terrahop review`` takes only this one).
dem_option = _option("--dem", "dem", multiple=True, metavar="RASTER",
                     help="Elevation raster (GeoTIFF, VRT, any GDAL format, any CRS). Repeat for several tiles; the first given wins where they overlap.")

terrain_options = _compose(
    dem_option,
    _option("--vertical-unit", type=click.Choice(VERTICAL_UNIT_CHOICES), default=None,
            help="Unit of the raster heights [default: the band's unit metadata, else m]."),
    _option("--nodata-fill-m", type=float, default=None, metavar="HEIGHT",
            help="Use this height (m) where the raster has nodata on the path, instead of refusing the path."),
    _option("--terrain", "terrain", default=None, metavar="SOURCE",
            help="Open elevation dataset fetched around the sites into the cache on first use: copernicus-30, "
                 "copernicus-90 (surface models, EGM2008) or srtm-1 (EGM96). --dem rasters win where they cover."),
    _option("--terrain-url", default=None, metavar="BASE",
            help="Base URL of a mirror of the --terrain dataset (http(s):// or file://) "
                 "[default: TERRAHOP_TERRAIN_URL, else the dataset's own]."),
    _option("--offline", is_flag=True, default=None,
            help="Use only tiles already in the cache (terrahop terrain fetch gets them)."),
)

site_options = _compose(
    _option("--site-a", callback=_site_callback, metavar="LAT,LON", help="Site a position, decimal degrees WGS84."),
    _option("--site-b", callback=_site_callback, metavar="LAT,LON", help="Site b position, decimal degrees WGS84."),
    _option("--name-a", default=None, help="Name of site a [default: A]."),
    _option("--name-b", default=None, help="Name of site b [default: B]."),
    _option("--agl-a", type=float, default=None, help="Antenna height of site a above ground, m [default: {default}]."),
    _option("--agl-b", type=float, default=None, help="Antenna height of site b above ground, m [default: {default}]."),
)

#: Radio flags and the Radio field each one sets.
RADIO_FLAGS = {
    "freq_ghz": "Frequency, GHz (required; a link file may give it instead).",
    "tx_power_dbm": "Transmitter power at site a, dBm [default: {default}].",
    "gain_a_dbi": "Antenna gain at site a, dBi [default: {default}].",
    "gain_b_dbi": "Antenna gain at site b, dBi [default: {default}].",
    "loss_a_db": "Feeder/connector loss at site a, dB [default: {default}].",
    "loss_b_db": "Feeder/connector loss at site b, dB [default: {default}].",
    "bandwidth_mhz": "Receiver noise bandwidth, MHz [default: {default}].",
    "noise_figure_db": "Receiver noise figure, dB [default: {default}].",
    "required_snr_db": "SNR the receiver needs for the wanted rate, dB [default: {default}].",
}

radio_options = _compose(
    *[_option(f"--{name.replace('_', '-')}", name, type=float, default=None, help=text)
      for name, text in RADIO_FLAGS.items()]
)

#: Radio profile flags (link, screen, sheet, heights): profiler.equipment.radios, merged in profiler.jobs.
radio_profile_options = _compose(
    _option("--radio", "radio_profile", type=click.Path(dir_okay=False), default=None, metavar="FILE",
            help="Radio profile (TOML, layout in the README): bands, noise figure and modulation steps per "
                 "channel width. Replaces --bandwidth-mhz, --noise-figure-db and --required-snr-db; "
                 "--tx-power-dbm may lower its power."),
    _option("--channel-mhz", type=float, default=None, metavar="MHZ",
            help="Channel width of the radio profile to use, MHz [default: its only one]."),
    _option("--max-eirp-dbm", type=float, default=None, metavar="DBM",
            help="EIRP limit, dBm: the result says where the EIRP exceeds it [default: the radio profile "
                 "band's, else none]. No national limits are built in."),
)

#: The margin a modulation step needs to be chosen (link, sheet, heights; screen has its own --min-margin-db).
step_margin_option = _option(
    "--min-margin-db", type=float, default=None, metavar="DB",
    help="Fade margin at the design k a link needs to count as viable, dB [default: 10]: with --radio the "
         "margin a modulation step needs to be chosen, with --kml the line between viable and marginal.")

analysis_options = _compose(
    _option("--k", "k", default=None, metavar="K",
            help="Design (median) k-factor, a number or a fraction such as 4/3 [default: {default}]."),
    _option("--k-worst", default=None, metavar="K",
            help="Worst-case k-factor, a number or a fraction [default: {default}]."),
    _option("--spacing-m", type=float, default=None,
            help="Profile sample spacing, m, at least 0.01 [default: half the finest raster cell on the path]."),
    _option("--min-f1-fraction", type=float, default=None,
            help="Clearance needed at the design k, fraction of F1 [default: {default}]."),
    _option("--min-f1-fraction-worst", type=float, default=None,
            help="Clearance needed at the worst-case k, fraction of F1; 0 keeps the line of sight unobstructed "
                 "[default: {default}]."),
    _option("--diffraction", "diffraction", callback=_diffraction_callback, default=None, metavar="METHOD",
            help="Diffraction method: " + ", ".join(DIFFRACTION_METHOD_NAMES)
            + "; delta-bullington is ITU-R P.526-15 section 4.5.2 [default: {default}]."),
    _option("--polarisation", type=click.Choice(["horizontal", "vertical"], case_sensitive=False),
            default=None, help="Antenna polarisation, for rain attenuation (ITU-R P.838-3) and the smooth-earth part of delta-bullington [default: {default}]."),
    _option("--ground", type=click.Choice(["land", "sea", "sea-water", "fresh-water", "wet-ground", "dry-ground"],
                                          case_sensitive=False), default=None,
            help="Ground electrical constants for reflections and the smooth-earth part of delta-bullington "
                 "(water types count as sea there, ground types as land) [default: {default}]."),
)


surroundings_options = _compose(
    _option("--obstructions", "obstructions", multiple=True, metavar="[KIND=]FILE[#LAYER]",
            help="Polygons of buildings or tree stands with heights (GeoPackage, GeoJSON, Shapefile; any CRS). "
                 "KIND is building (default) or trees; #LAYER picks a layer of a multi-layer file. Repeatable."),
    _option("--height-field", default=None, metavar="NAME",
            help="Attribute holding the height above ground, m [default: height_m, else height]."),
    _option("--top-field", default=None, metavar="NAME",
            help="Attribute holding the absolute top elevation, m, in the rasters' datum [default: top_m]; "
                 "used where a feature has no height."),
    _option("--tree-allowance-m", type=float, default=None, metavar="M",
            help="Added to every tree height for growth and uncertainty, m [default: {default}]."),
    _option("--surface", "surface", multiple=True, metavar="RASTER",
            help="Surface model (lidar first return, DSM) beside --dem; clutter is its height above "
                 "the terrain, clipped at 0. Repeatable."),
)

#: Roof mounts of many sites at once (terrahop screen); per site, a ``mount`` column of the sites file.
roof_mount_options = _compose(
    _option("--above-roof", is_flag=True, default=False,
            help="The sites' antenna heights are above the roof of the building each stands in (from "
                 "--obstructions); a 'mount' column (ground or roof) overrides it per site."),
)

mount_options = _compose(
    _option("--above-roof-a", type=float, default=None, metavar="M",
            help="Site a antenna height above the roof of the building it stands in (from --obstructions)."),
    _option("--above-roof-b", type=float, default=None, metavar="M", help="As --above-roof-a, for site b."),
    _option("--amsl-a", type=float, default=None, metavar="M",
            help="Site a antenna elevation in the rasters' vertical datum, m."),
    _option("--amsl-b", type=float, default=None, metavar="M", help="As --amsl-a, for site b."),
    _option("--ellipsoidal-a", type=float, default=None, metavar="M",
            help="Site a antenna height above the WGS84 ellipsoid (GNSS), m; converted with a geoid grid."),
    _option("--ellipsoidal-b", type=float, default=None, metavar="M", help="As --ellipsoidal-a, for site b."),
    _option("--vertical-crs", default=None, metavar="CRS",
            help="Vertical datum of the raster heights when the files do not say (e.g. EPSG:5773, "
                 "EGM96); needed to convert ellipsoidal heights."),
)

#: Climate and availability flags: ClimateSettings field -> (flag, value type, help).
CLIMATE_FLAGS: dict[str, tuple[str, type, str]] = {
    "rain_rate_mm_h": ("--rain-rate-mm-h", float,
                       "Rain rate exceeded 0.01 % of an average year (R0.01, 1-minute), mm/h; take it from "
                       "ITU-R P.837 maps or local records [default: {default}]."),
    "target_availability_pct": ("--target-availability-pct", float,
                                "Availability aimed at, % of an average year, 99 to 99.999 [default: {default}]."),
    "dn1_n_per_km": ("--dn1", float,
                     "Refractivity gradient dN1 in the lowest 65 m, not exceeded 1 % of an average year, "
                     "N-units/km (ITU-R P.453 maps) [default: {default}]."),
    "terrain_roughness_m": ("--terrain-roughness-m", float,
                            "sa: standard deviation of terrain heights over 110 km x 110 km around the "
                            "path, m (ITU-R P.530) [default: {default}]."),
    "pressure_hpa": ("--pressure-hpa", float, "Dry-air pressure for gaseous attenuation, hPa [default: {default}]."),
    "temperature_c": ("--temperature-c", float, "Air temperature for gaseous attenuation, degC [default: {default}]."),
    "water_vapour_g_m3": ("--water-vapour-g-m3", float,
                          "Water-vapour density for gaseous attenuation, g/m^3 [default: {default}]."),
}

climate_options = _compose(
    _option("--climate", "climate", default=None, metavar="SOURCE",
            help="Where R0.01, dN1 and sa come from when not given: 'itu' takes R0.01 (ITU-R P.837-7) and "
                 "dN1 (ITU-R P.453-13) from the ITU-R maps at the path centre and sa from the elevation "
                 "rasters (needs pip install 'terrahop[climate]'); 'default' uses the defaults "
                 "[default: default]."),
    *[_option(flag, name, type=kind, default=None, help=text)
      for name, (flag, kind, text) in CLIMATE_FLAGS.items()]
)


#: Antenna files of the two ends (profiler.equipment.antennas); the gain replaces --gain-a-dbi/--gain-b-dbi.
antenna_options = _compose(
    _option("--antenna-a", "antenna_a", default=None, metavar="FILE",
            help="Antenna file (TOML) of site a: its gain at the link frequency is used (not with --gain-a-dbi)."),
    _option("--antenna-b", "antenna_b", default=None, metavar="FILE", help="As --antenna-a, for site b."),
)

#: Date of the magnetic declination in the installer figures (link, heights).
date_option = _option(
    "--date", "date", default=None, metavar="YYYY-MM-DD",
    help="Date for the magnetic declination (World Magnetic Model) in the installer figures [default: today].")
#: Ground reflections (link, sheet, screen): profiler.reflection, merged in profiler.jobs.resolve_reflection.
reflection_options = _compose(
    _option("--water", "water", type=click.Path(dir_okay=False), default=None, metavar="FILE",
            help="Polygons of water (GeoPackage, GeoJSON, Shapefile; any CRS, refused without one): reflections "
                 "there use fresh water, or sea water with --ground sea/sea-water."),
    _option("--sea-level-water", is_flag=True, default=None,
            help="Take path stretches within 0.5 m of the rasters' zero height as (sea) water."),
    _option("--reflection-k-min", type=float, default=None, metavar="K",
            help="Smallest k of the reflection sweep [default: 0.5]; infinity is always included."),
    _option("--reflection-k-max", type=float, default=None, metavar="K",
            help="Largest finite k of the reflection sweep [default: 10]."),
)

#: Monte Carlo confidence (profiler.confidence): any of these asks for it (link, sheet, heights, screen).
#: Given as text so that profiler.confidence gives the one-line refusals.
confidence_options = _compose(
    _option("--draws", "draws", default=None, metavar="N",
            help="Monte Carlo draws of the confidence estimate, 100 to 100000 [default: {default}]."),
    _option("--seed", "seed", default=None, metavar="N",
            help="Seed of the confidence draws; the same seed gives the same numbers [default: {default}]."),
    _option("--dem-error-m", "dem_error_m", default=None, metavar="SIGMA",
            help="Elevation error, one standard deviation, m [default: the terrain source's stated accuracy, "
                 "else 3]."),
    _option("--dem-error-corr-m", "dem_error_corr_m", default=None, metavar="M",
            help="Correlation length of the elevation error along the path, m, or 'inf' (one error for the "
                 "whole profile) [default: {default}]."),
    _option("--antenna-error-m", "antenna_error_m", default=None, metavar="M",
            help="Antenna height tolerance, one standard deviation, m [default: {default}]."),
)

#: Every option that describes one link, shared by link, sheet and heights.
link_input_options = _compose(
    terrain_options, site_options, mount_options, surroundings_options, radio_options, radio_profile_options,
    step_margin_option, analysis_options, climate_options, antenna_options, confidence_options,
)




# --- link jobs: profiler.jobs, imported when a command runs --------------------
# Importing profiler.jobs brings numpy and pyproj; the CLI imports it only when
# a command needs it so that ``terrahop --help`` stays quick.


def resolve_link(link_file: str | None, opts: dict[str, Any]) -> Any:
    """Merge a link file (if any) and command-line options into a :class:`profiler.jobs.LinkJob`; flags win."""
    from ..jobs import resolve_link_job

    return resolve_link_job(link_file, opts)


def resolve_radio(opts: dict[str, Any], section: dict[str, Any] | None = None, source: str = "link file") -> Any:
    """Radio settings from flags over a link file's [radio] table (:func:`profiler.jobs.resolve_radio`)."""
    from ..jobs import resolve_radio as resolve

    return resolve(opts, section, source)


def resolve_settings(opts: dict[str, Any], an: dict[str, Any] | None = None,
                     climate_section: dict[str, Any] | None = None, source: str = "link file") -> Any:
    """Analysis settings from flags over a link file's tables (:func:`profiler.jobs.resolve_settings`)."""
    from ..jobs import resolve_settings as resolve

    return resolve(opts, an, climate_section, source)


def opened_link_data(job: Any, lats: Any = (), lons: Any = ()) -> Any:
    """Context manager opening the elevation model and surroundings of a job (:func:`profiler.jobs.open_job_data`)."""
    from ..jobs import open_job_data

    fetched = None
    if getattr(job, "terrain", None) is not None:
        from ..jobs import fetch_terrain
        from .fetch_progress import progress_bar

        with progress_bar() as bar:  # bytes on stderr while tiles download (a terminal only)
            fetched = fetch_terrain(job, lats, lons, bar)
    return open_job_data(job, lats, lons, fetched=fetched)


def analyse_resolved(job: Any, model: Any, surroundings: Any, *, mount_a: Any = None, mount_b: Any = None) -> Any:
    """Analyse one job on open data, as ``terrahop link`` does (:func:`profiler.jobs.analyse_job`)."""
    from ..jobs import analyse_job

    return analyse_job(job, model, surroundings, mount_a=mount_a, mount_b=mount_b)


# --- the command line, for the run description of written files --------------


def command_words() -> list[str]:
    """The command being run as a list of words (``["terrahop", "screen", "sites.csv", "--dem", ...]``).

    The process's own arguments when it is the ``terrahop`` program (or
    ``python -m profiler``); otherwise (click's test runner, another program
    calling the command) rebuilt from the options given on the command line.
    """
    import sys
    from pathlib import Path

    ctx = click.get_current_context()
    argv = list(sys.argv)
    if argv and Path(argv[0]).name in ("terrahop", "__main__.py") and ctx.info_name in argv[1:]:
        return ["terrahop", *argv[1:]]
    words = ["terrahop", str(ctx.info_name)]
    source = click.core.ParameterSource.COMMANDLINE
    for param in ctx.command.params:
        if param.name is None or ctx.get_parameter_source(param.name) != source:
            continue
        value = ctx.params.get(param.name)
        values = list(value) if isinstance(value, (list, tuple)) and getattr(param, "multiple", False) or \
            isinstance(param, click.Argument) and isinstance(value, (list, tuple)) else [value]
        for v in values:
            text = ",".join(map(str, v)) if isinstance(v, tuple) else str(v)
            if isinstance(param, click.Argument):
                words.append(text)
            elif getattr(param, "is_flag", False):
                words.append(max(param.opts, key=len))
            else:
                words += [max(param.opts, key=len), text]
    return words


_FROM_JOBS = {"ResolvedLink": "LinkJob", "resolve_climate": "resolve_climate", "parse_number": "parse_number",
              "open_surroundings_of": "open_surroundings", "MOUNT_KEYS": "MOUNT_KEYS"}


def __getattr__(name: str) -> Any:
    """Older names kept for callers: served from :mod:`profiler.jobs` when first asked for."""
    if name in _FROM_JOBS:
        from .. import jobs

        return getattr(jobs, _FROM_JOBS[name])
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
