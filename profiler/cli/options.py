"""Options shared by several subcommands, and the one place errors become messages."""

from __future__ import annotations

import contextlib
import functools
from dataclasses import dataclass
from typing import Any, Callable, Iterator

import click

from ..errors import TerrahopError

__all__ = [
    "friendly_errors",
    "quiet_broken_pipe",
    "BROKEN_PIPE_EXIT",
    "parse_lat_lon",
    "parse_number",
    "terrain_options",
    "site_options",
    "radio_options",
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
    "mount_options",
    "open_surroundings_of",
    "link_input_options",
    "opened_link_data",
    "analyse_resolved",
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


#: Python arguments (an error's ``parameter``) whose command-line form is not ``--`` plus the name with dashes.
_FLAG_OF = {"surroundings": "--obstructions FILE", "dn1_n_per_km": "--dn1"}


def flag_form(parameter: str, value_word: str = "") -> str:
    """How the command line names a setting in a message: ``--nodata-fill-m HEIGHT``."""
    flag = _FLAG_OF.get(parameter, "--" + parameter.replace("_", "-"))
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
    from ..validation import normalise_positions, position_problem

    problem = position_problem(lat, lon)
    if problem is not None:
        raise click.BadParameter(f"{what}: {problem}")
    lat_n, lon_n = normalise_positions(lat, lon)
    return float(lat_n), float(lon_n)


def _site_callback(ctx: click.Context, param: click.Parameter, value: str | None):
    if value is None:
        return None
    return parse_lat_lon(value, f"--{param.name.replace('_', '-')}")


def parse_number(value: Any, what: str) -> float:
    """A number, or a fraction written as 'P/Q' (e.g. k = '4/3'); raise InputError otherwise."""
    from ..errors import InputError

    if isinstance(value, bool):
        raise InputError(f"{what} must be a number, got {value!r}")
    if isinstance(value, (int, float)):
        return float(value)
    text = str(value).strip()
    try:
        if "/" in text:
            num, den = text.split("/", 1)
            return float(num) / float(den)
        return float(text)
    except (ValueError, ZeroDivisionError):
        raise InputError(f"{what} must be a number or a fraction like 4/3, got {value!r}") from None


#: Diffraction methods offered on the command line; kept equal to
#: profiler.losses.terrain_diffraction.DIFFRACTION_METHODS (a test checks) so
#: that ``--help`` need not import numpy.
DIFFRACTION_METHOD_NAMES = ("delta-bullington", "bullington", "deygout", "epstein-peterson", "knife-edge")


def _diffraction_callback(ctx: click.Context, param: click.Parameter, value: str | None):
    if value is None:
        return None
    from ..errors import InputError
    from ..losses.terrain_diffraction import resolve_method

    try:
        return resolve_method(value)
    except InputError as exc:
        raise click.BadParameter(str(exc)) from None


def _compose(*decorators: Callable) -> Callable:
    def apply(func: Callable) -> Callable:
        for d in reversed(decorators):
            func = d(func)
        return func

    return apply


terrain_options = _compose(
    click.option("--dem", "dem", multiple=True, metavar="RASTER",
                 help="Elevation raster (GeoTIFF, VRT, any GDAL format, any CRS). Repeat for several tiles; the first given wins where they overlap."),
    click.option("--vertical-unit", type=click.Choice(["m", "ft", "us-ft"]), default=None,
                 help="Unit of the raster heights [default: the band's unit metadata, else m]."),
    click.option("--nodata-fill-m", type=float, default=None, metavar="HEIGHT",
                 help="Use this height (m) where the raster has nodata on the path, instead of refusing the path."),
)

site_options = _compose(
    click.option("--site-a", callback=_site_callback, metavar="LAT,LON", help="Site a position, decimal degrees WGS84."),
    click.option("--site-b", callback=_site_callback, metavar="LAT,LON", help="Site b position, decimal degrees WGS84."),
    click.option("--name-a", default=None, help="Name of site a [default: A]."),
    click.option("--name-b", default=None, help="Name of site b [default: B]."),
    click.option("--agl-a", type=float, default=None, help="Antenna height of site a above ground, m [default: 10]."),
    click.option("--agl-b", type=float, default=None, help="Antenna height of site b above ground, m [default: 10]."),
)

#: Radio flags and the Radio field each one sets.
RADIO_FLAGS = {
    "freq_ghz": "Frequency, GHz (required; a link file may give it instead).",
    "tx_power_dbm": "Transmitter power at site a, dBm [default: 20].",
    "gain_a_dbi": "Antenna gain at site a, dBi [default: 0].",
    "gain_b_dbi": "Antenna gain at site b, dBi [default: 0].",
    "loss_a_db": "Feeder/connector loss at site a, dB [default: 0].",
    "loss_b_db": "Feeder/connector loss at site b, dB [default: 0].",
    "bandwidth_mhz": "Receiver noise bandwidth, MHz [default: 20].",
    "noise_figure_db": "Receiver noise figure, dB [default: 6].",
    "required_snr_db": "SNR the receiver needs for the wanted rate, dB [default: 15].",
}

radio_options = _compose(
    *[click.option(f"--{name.replace('_', '-')}", name, type=float, default=None, help=text)
      for name, text in RADIO_FLAGS.items()]
)

analysis_options = _compose(
    click.option("--k", "k", default=None, metavar="K",
                 help="Design (median) k-factor, a number or a fraction such as 4/3 [default: 4/3]."),
    click.option("--k-worst", default=None, metavar="K",
                 help="Worst-case k-factor, a number or a fraction [default: 2/3]."),
    click.option("--spacing-m", type=float, default=None,
                 help="Profile sample spacing, m, at least 0.01 [default: half the finest raster cell on the path]."),
    click.option("--min-f1-fraction", type=float, default=None,
                 help="Clearance needed at the design k, fraction of F1 [default: 0.6]."),
    click.option("--min-f1-fraction-worst", type=float, default=None,
                 help="Clearance needed at the worst-case k, fraction of F1 [default: 0.0, LOS unobstructed]."),
    click.option("--diffraction", "diffraction", callback=_diffraction_callback, default=None, metavar="METHOD",
                 help="Diffraction method: " + ", ".join(DIFFRACTION_METHOD_NAMES)
                 + " [default: delta-bullington, ITU-R P.526-15 section 4.5.2]."),
    click.option("--polarisation", type=click.Choice(["horizontal", "vertical"], case_sensitive=False),
                 default=None, help="Antenna polarisation, for rain attenuation (ITU-R P.838-3) and the smooth-earth part of delta-bullington [default: horizontal]."),
    click.option("--ground", type=click.Choice(["land", "sea"], case_sensitive=False), default=None,
                 help="Ground electrical constants for the smooth-earth part of delta-bullington [default: land]."),
)


surroundings_options = _compose(
    click.option("--obstructions", "obstructions", multiple=True, metavar="[KIND=]FILE[#LAYER]",
                 help="Polygons of buildings or tree stands with heights (GeoPackage, GeoJSON, Shapefile; any CRS). "
                      "KIND is building (default) or trees; #LAYER picks a layer of a multi-layer file. Repeatable."),
    click.option("--height-field", default=None, metavar="NAME",
                 help="Attribute holding the height above ground, m [default: height_m, else height]."),
    click.option("--top-field", default=None, metavar="NAME",
                 help="Attribute holding the absolute top elevation, m, in the rasters' datum [default: top_m]; "
                      "used where a feature has no height."),
    click.option("--tree-allowance-m", type=float, default=None, metavar="M",
                 help="Added to every tree height for growth and uncertainty, m [default: 0]."),
    click.option("--surface", "surface", multiple=True, metavar="RASTER",
                 help="Surface model (lidar first return, DSM) beside --dem; clutter is its height above "
                      "the terrain, clipped at 0. Repeatable."),
)

mount_options = _compose(
    click.option("--above-roof-a", type=float, default=None, metavar="M",
                 help="Site a antenna height above the roof of the building it stands in (from --obstructions)."),
    click.option("--above-roof-b", type=float, default=None, metavar="M", help="As --above-roof-a, for site b."),
    click.option("--amsl-a", type=float, default=None, metavar="M",
                 help="Site a antenna elevation in the rasters' vertical datum, m."),
    click.option("--amsl-b", type=float, default=None, metavar="M", help="As --amsl-a, for site b."),
    click.option("--ellipsoidal-a", type=float, default=None, metavar="M",
                 help="Site a antenna height above the WGS84 ellipsoid (GNSS), m; converted with a geoid grid."),
    click.option("--ellipsoidal-b", type=float, default=None, metavar="M", help="As --ellipsoidal-a, for site b."),
    click.option("--vertical-crs", default=None, metavar="CRS",
                 help="Vertical datum of the raster heights when the files do not say (e.g. EPSG:5773, "
                      "EGM96); needed to convert ellipsoidal heights."),
)

#: Site keys and flags giving an antenna height, and what each is measured from.
MOUNT_KEYS = {
    "antenna_agl_m": ("agl", "ground"),
    "antenna_above_roof_m": ("above_roof", "roof"),
    "antenna_amsl_m": ("amsl", "elevation"),
    "antenna_ellipsoidal_m": ("ellipsoidal", "ellipsoid"),
}


#: Climate and availability flags: ClimateSettings field -> (flag, value type, help).
CLIMATE_FLAGS: dict[str, tuple[str, type, str]] = {
    "rain_rate_mm_h": ("--rain-rate-mm-h", float,
                       "Rain rate exceeded 0.01 % of an average year (R0.01, 1-minute), mm/h; take it from "
                       "ITU-R P.837 maps or local records [default: 42]."),
    "target_availability_pct": ("--target-availability-pct", float,
                                "Availability aimed at, % of an average year, 99 to 99.999 [default: 99.99]."),
    "dn1_n_per_km": ("--dn1", float,
                     "Refractivity gradient dN1 in the lowest 65 m, not exceeded 1 % of an average year, "
                     "N-units/km (ITU-R P.453 maps) [default: -200]."),
    "terrain_roughness_m": ("--terrain-roughness-m", float,
                            "sa: standard deviation of terrain heights over 110 km x 110 km around the "
                            "path, m (ITU-R P.530) [default: 40]."),
    "pressure_hpa": ("--pressure-hpa", float, "Dry-air pressure for gaseous attenuation, hPa [default: 1013.25]."),
    "temperature_c": ("--temperature-c", float, "Air temperature for gaseous attenuation, degC [default: 15]."),
    "water_vapour_g_m3": ("--water-vapour-g-m3", float,
                          "Water-vapour density for gaseous attenuation, g/m^3 [default: 7.5]."),
}

climate_options = _compose(
    *[click.option(flag, name, type=kind, default=None, help=text)
      for name, (flag, kind, text) in CLIMATE_FLAGS.items()]
)


#: Every option that describes one link, shared by link, sheet and heights.
link_input_options = _compose(
    terrain_options, site_options, mount_options, surroundings_options, radio_options, analysis_options,
    climate_options,
)


def resolve_climate(
    section: dict[str, Any], opts: dict[str, Any], polarisation: str | None = None, polarisation_given: bool = False,
    source: str = "link file",
) -> Any:
    """ClimateSettings from flags over a link file's [climate] table; flags win.

    The antenna polarisation is the one of ``--polarisation`` / ``[analysis]
    polarisation``, shared with the diffraction methods.
    """
    from ..availability import ClimateSettings
    from ..losses.smooth_earth import resolve_polarisation

    values = {name: _checked(opts, section, name, flag=CLIMATE_FLAGS[name][0], table="climate", opt=name,
                             source=source)
              for name in CLIMATE_FLAGS}
    given = {k: v for k, v in values.items() if v is not None}
    names = set(given) | ({"polarisation"} if polarisation_given else set())
    if polarisation is not None:
        given["polarisation"] = resolve_polarisation(polarisation)
    return ClimateSettings(**given, given=frozenset(names))


@dataclass(frozen=True)
class ResolvedLink:
    """Everything needed to analyse one link, flags merged over a link file."""

    title: str
    rasters: tuple[str, ...]
    vertical_unit: str | None
    nodata_fill_m: float | None
    site_a: Any
    site_b: Any
    radio: Any
    settings: Any
    obstruction_layers: tuple = ()
    surface_rasters: tuple[str, ...] = ()
    tree_allowance_m: float = 0.0
    mount_a: Any = None
    mount_b: Any = None
    max_mast_a_m: float | None = None
    max_mast_b_m: float | None = None


def _pick(flag: Any, spec: dict, key: str, default: Any = None) -> Any:
    if flag is not None:
        return flag
    return spec.get(key, default)


def _checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, flag: str, table: str,
             name: str | None = None, default: Any = None, opt: str | None = None,
             source: str = "link file") -> float | None:
    """A flag over a link-file key, checked by the shared value rule; None when neither is given.

    The message names the flag when the flag gave the value, else the link file and its table.
    ``opt``: the option's key in ``opts`` when it is not the flag's name.
    """
    from ..validation import check_number

    opt = opt or flag.lstrip("-").replace("-", "_")
    if opts.get(opt) is not None:
        tag = table.removeprefix("site_") if table.startswith("site_") else None
        value, where = opts[opt], (f"site {tag} ({flag})" if tag else flag)
    elif key in section:
        value, where = section[key], f"{source or 'link file'} [{table}] {key}"
    elif default is None:
        return None
    else:
        return check_number(default, name or key)
    return check_number(value, name or key, where)


def resolve_radio(opts: dict[str, Any], section: dict[str, Any] | None = None, source: str = "link file") -> Any:
    """Radio settings from flags over a link file's [radio] table; flags win."""
    from ..budget import Radio
    from ..errors import InputError

    section = section or {}
    radio_values = {k: _checked(opts, section, k, flag="--" + k.replace("_", "-"), table="radio", source=source)
                    for k in RADIO_FLAGS}
    if radio_values["freq_ghz"] is None:
        raise InputError("frequency missing: give --freq-ghz or [radio] freq_ghz in the link file")
    return Radio(**{k: v for k, v in radio_values.items() if v is not None}).validate()


def resolve_settings(
    opts: dict[str, Any], an: dict[str, Any] | None = None, climate_section: dict[str, Any] | None = None,
    source: str = "link file",
) -> Any:
    """Analysis settings (k, criterion, diffraction, climate) from flags over a link file's tables."""
    from ..errors import InputError
    from ..link import Criterion, Settings
    from ..validation import check_k_pair

    an = an or {}
    defaults = Settings()
    for key in ("diffraction_method", "polarisation", "ground"):
        if key in an and not isinstance(an[key], str):
            raise InputError(f"link file [analysis] {key} must be text, got {an[key]!r}")
    polarisation_given = opts.get("polarisation") is not None or "polarisation" in an
    polarisation = str(_pick(opts.get("polarisation"), an, "polarisation", defaults.polarisation))
    climate = resolve_climate(climate_section or {}, opts, polarisation, polarisation_given, source)
    k = parse_number(_pick(opts.get("k"), an, "k", defaults.k), "k")
    k_worst = parse_number(_pick(opts.get("k_worst"), an, "k_worst", defaults.k_worst), "k_worst")
    check_k_pair(k, k_worst)
    spacing = _pick(opts.get("spacing_m"), an, "sample_spacing_m")
    if isinstance(spacing, bool):
        raise InputError(f"sample spacing must be a number of metres, got {spacing!r}")
    try:
        settings = Settings(
            k=k,
            k_worst=k_worst,
            spacing_m=_opt_float(spacing),
            criterion=Criterion(
                min_f1_fraction=_checked(opts, an, "min_f1_fraction", flag="--min-f1-fraction",
                                         table="analysis", default=0.6, source=source),
                min_f1_fraction_worst=_checked(opts, an, "min_f1_fraction_worst", flag="--min-f1-fraction-worst",
                                               table="analysis", default=0.0, source=source),
            ),
            diffraction_method=str(_pick(opts.get("diffraction"), an, "diffraction_method", defaults.diffraction_method)),
            polarisation=polarisation,
            ground=str(_pick(opts.get("ground"), an, "ground", defaults.ground)),
            climate=climate,
        ).validate()
    except (TypeError, ValueError) as exc:
        if isinstance(exc, InputError):
            raise
        raise InputError(f"analysis settings must be numbers ({exc})") from None
    return settings


def resolve_link(link_file: str | None, opts: dict[str, Any]) -> ResolvedLink:
    """Merge a link file (if any) and command-line options; flags win."""
    from ..errors import InputError
    from ..io.linkfile import LinkSpec, read_link_file
    from ..link import Site
    from ..validation import check_number

    spec = read_link_file(link_file) if link_file else LinkSpec(path="", title=None)
    rasters = tuple(opts.get("dem") or ()) or tuple(spec.terrain.get("rasters", ()))
    if not rasters:
        raise InputError("no elevation raster: give --dem FILE (repeatable) or [terrain] rasters in the link file")

    def site(tag: str) -> Site:
        s = getattr(spec, f"site_{tag}")
        pos = opts.get(f"site_{tag}")
        lat, lon = pos if pos is not None else (s.get("lat"), s.get("lon"))
        if lat is None or lon is None:
            raise InputError(f"site {tag}: position missing; give --site-{tag} LAT,LON or [site_{tag}] lat/lon")
        name = _pick(opts.get(f"name_{tag}"), s, "name", tag.upper())
        agl = _checked(opts, s, "antenna_agl_m", flag=f"--agl-{tag}", table=f"site_{tag}", default=10.0,
                       source=spec.path)
        lat = check_number(lat, "latitude", f"site {tag}")
        lon = check_number(lon, "longitude", f"site {tag}")
        return Site(str(name), lat, lon, agl).validate(f"site {tag}")

    a, b = site("a"), site("b")
    radio = resolve_radio(opts, spec.radio, spec.path)
    settings = resolve_settings(opts, spec.analysis, spec.climate, spec.path)
    title = spec.title or f"{a.name} - {b.name}"
    urban = _resolve_urban(spec, opts)
    return ResolvedLink(
        title=title,
        rasters=rasters,
        vertical_unit=_vertical_unit(opts, spec),
        nodata_fill_m=_checked(opts, spec.terrain, "nodata_fill_m", flag="--nodata-fill-m", table="terrain",
                               source=spec.path),
        site_a=a,
        site_b=b,
        radio=radio,
        settings=settings,
        **urban,
    )


def _resolve_urban(spec: Any, opts: dict[str, Any]) -> dict[str, Any]:
    """Obstruction layers, surface rasters and antenna mounts from flags over the link file."""
    from ..errors import InputError
    from ..mounts import Mount
    from ..obstructions import LayerSpec, normalise_kind, parse_layer_spec
    from ..validation import check_number

    ob = spec.obstructions
    height_field = _pick(opts.get("height_field"), ob, "height_field")
    top_field = _pick(opts.get("top_field"), ob, "top_field")
    if opts.get("obstructions"):
        layers = tuple(parse_layer_spec(t, height_field=height_field, top_field=top_field)
                       for t in opts["obstructions"])
    else:
        layers = tuple(
            LayerSpec(
                path=e["file"],
                kind=normalise_kind(e.get("kind", "building"), f"{spec.path}: [obstructions]"),
                layer=e.get("layer"),
                height_field=e.get("height_field", height_field),
                top_field=e.get("top_field", top_field),
            )
            for e in ob.get("layers", [])
        )
    surface = tuple(opts.get("surface") or ()) or tuple(spec.terrain.get("surface", ()))
    vertical_crs = _pick(opts.get("vertical_crs"), spec.terrain, "vertical_crs")
    allowance = _checked(opts, ob, "tree_allowance_m", flag="--tree-allowance-m", table="obstructions",
                         default=0.0, source=spec.path)

    def mount(tag: str) -> Any:
        section = getattr(spec, f"site_{tag}")
        given = [(ref, opts[f"{flag}_{tag}"]) for flag, ref in MOUNT_KEYS.values()
                 if opts.get(f"{flag}_{tag}") is not None]
        flags = ", ".join(f"--{flag.replace('_', '-')}-{tag}" for flag, _ in MOUNT_KEYS.values())
        if len(given) > 1:
            raise InputError(f"site {tag}: give one antenna height, not several ({flags})")
        if not given:
            given = [(ref, section[key]) for key, (_, ref) in MOUNT_KEYS.items() if key in section]
            if len(given) > 1:
                keys = ", ".join(k for k in MOUNT_KEYS if k in section)
                raise InputError(f"{spec.path}: [site_{tag}] gives several antenna heights ({keys}); keep one")
        ref, height = given[0] if given else ("ground", 10.0)
        key = {"ground": "antenna_agl_m", "roof": "antenna_above_roof_m", "elevation": "antenna_amsl_m",
               "ellipsoid": "antenna_ellipsoidal_m"}[ref]
        height = check_number(height, key, f"site {tag}")
        return Mount(ref, height, vertical_crs=vertical_crs).validate(f"site {tag}")

    def max_mast(tag: str) -> float | None:
        value = _pick(opts.get(f"max_mast_{tag}"), getattr(spec, f"site_{tag}"), "max_mast_m")
        if value is None:
            return None
        return check_number(value, "max_mast_m", f"site {tag}")

    return {
        "obstruction_layers": layers,
        "surface_rasters": surface,
        "tree_allowance_m": allowance,
        "mount_a": mount("a"),
        "mount_b": mount("b"),
        "max_mast_a_m": max_mast("a"),
        "max_mast_b_m": max_mast("b"),
    }


def open_surroundings_of(resolved: ResolvedLink) -> Any:
    """Read the obstruction layers and open the surface rasters of a resolved link (None if none)."""
    from ..obstructions import Surroundings, read_obstruction_layer
    from ..terrain import ElevationModel

    if not resolved.obstruction_layers and not resolved.surface_rasters:
        return None
    layers = tuple(read_obstruction_layer(s) for s in resolved.obstruction_layers)
    surface = (ElevationModel(resolved.surface_rasters, vertical_unit=resolved.vertical_unit)
               if resolved.surface_rasters else None)
    return Surroundings(layers=layers, surface=surface, tree_allowance_m=resolved.tree_allowance_m)


@contextlib.contextmanager
def opened_link_data(resolved: ResolvedLink) -> Iterator[tuple[Any, Any]]:
    """Open the elevation model and the surroundings (layers, surface) of a resolved link; close both after."""
    from ..terrain import ElevationModel

    surroundings = open_surroundings_of(resolved)
    try:
        with ElevationModel(
            resolved.rasters, vertical_unit=resolved.vertical_unit, nodata_fill_m=resolved.nodata_fill_m
        ) as model:
            yield model, surroundings
    finally:
        if surroundings is not None and surroundings.surface is not None:
            surroundings.surface.close()


def analyse_resolved(resolved: ResolvedLink, model: Any, surroundings: Any, *, mount_a: Any = None,
                     mount_b: Any = None) -> Any:
    """Analyse one resolved link on open data, as ``terrahop link`` does; mounts may be overridden."""
    from ..link import analyse_link

    return analyse_link(
        model, resolved.site_a, resolved.site_b, resolved.radio, resolved.settings, name=resolved.title,
        surroundings=surroundings, mount_a=mount_a or resolved.mount_a, mount_b=mount_b or resolved.mount_b,
    )


def _opt_float(value: Any) -> float | None:
    return None if value is None else float(value)


#: Vertical units accepted for --vertical-unit and [terrain] vertical_unit.
VERTICAL_UNIT_CHOICES = ("m", "ft", "us-ft")


def _vertical_unit(opts: dict[str, Any], spec: Any) -> str | None:
    """--vertical-unit over [terrain] vertical_unit; InputError for anything but m, ft or us-ft."""
    from ..errors import InputError

    value = _pick(opts.get("vertical_unit"), spec.terrain, "vertical_unit")
    if value is None:
        return None
    if not isinstance(value, str) or value.strip().lower() not in VERTICAL_UNIT_CHOICES:
        raise InputError(f"{spec.path or 'link file'}: [terrain] vertical_unit must be one of "
                         f"{', '.join(VERTICAL_UNIT_CHOICES)}, got {value!r}")
    return value.strip().lower()
