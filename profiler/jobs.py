"""A link job: one link file plus overrides, resolved into what the engine needs.

Usable from Python as from the command line (no click here)::

    job = resolve_link_job("examples/demo-1-clear.toml", {"freq_ghz": 11.0})
    with open_job_data(job) as (model, surroundings):
        batch = analyse_job(job, model, surroundings)

``overrides`` maps option names to values; None means "not given".  The
names are the command-line flags with underscores (``freq_ghz``, ``agl_a``,
``site_a`` as a (lat, lon) pair, ``dem`` as a sequence of rasters ...,
see :data:`OVERRIDES`); an override wins over the link file, the link file
over the defaults.  Defaults are those of the Python types (:class:`Radio`,
:class:`Settings`, :class:`ClimateSettings`) and :data:`DEFAULT_AGL_M`;
:func:`default_text` gives them for help texts.  Errors about a value given
as an override carry its name in ``parameter`` (the CLI names its flag).
"""

from __future__ import annotations

import contextlib
import dataclasses
from fractions import Fraction
from typing import Any, Iterator

from .availability import ClimateSettings
from .climate import CLIMATE_SOURCES
from .budget import Radio
from .errors import PARAMETER, InputError
from .io.linkfile import VERTICAL_UNIT_CHOICES, LinkSpec, read_link_file
from .job_equipment import (  # noqa: F401  (re-exported: profiler.jobs is their import path too)
    PROFILE_GIVES, PROFILE_KEYS, RADIO_COLUMN, one_step_keys, resolve_antennas, resolve_install_date,
    resolve_radio_plan, site_radios, with_antenna_gains, with_equipment,
)
from .job_extras import (  # noqa: F401  (re-exported as above)
    open_water_layer, resolve_job_confidence, resolve_reflection, with_confidence,
)
from .job_base import DEFAULT_AGL_M, DEFAULT_TREE_ALLOWANCE_M, LinkJob, checked as _checked, pick as _pick
from .link_batch import LinkBatch
from .link_engine import analyse_link
from .link_types import Criterion, Settings, Site
from .losses.smooth_earth import resolve_polarisation
from .mounts import Mount
from .obstructions import LayerSpec, Surroundings, normalise_kind, parse_layer_spec, read_obstruction_layer
from .terrain import ElevationModel
from .validation import check_k_pair, check_number

__all__ = [
    "LinkJob",
    "resolve_link_job",
    "resolve_radio",
    "resolve_settings",
    "resolve_climate",
    "open_surroundings",
    "surroundings_from_options",
    "open_job_data",
    "analyse_job",
    "parse_number",
    "default_text",
    "RADIO_KEYS",
    "CLIMATE_KEYS",
    "MOUNT_KEYS",
    "DEFAULT_AGL_M",
    "VERTICAL_UNIT_CHOICES",
]

#: Radio overrides: the :class:`Radio` fields.
RADIO_KEYS = tuple(f.name for f in dataclasses.fields(Radio))
#: Climate overrides: the :class:`ClimateSettings` fields set by a number.
CLIMATE_KEYS = ("rain_rate_mm_h", "target_availability_pct", "dn1_n_per_km", "terrain_roughness_m",
                "pressure_hpa", "temperature_c", "water_vapour_g_m3")
#: Site keys and override prefixes giving an antenna height, and what each is measured from.
MOUNT_KEYS = {
    "antenna_agl_m": ("agl", "ground"),
    "antenna_above_roof_m": ("above_roof", "roof"),
    "antenna_amsl_m": ("amsl", "elevation"),
    "antenna_ellipsoidal_m": ("ellipsoidal", "ellipsoid"),
}



def default_text(name: str) -> str:
    """The default of setting ``name`` as a help text shows it ('20', '4/3', 'horizontal')."""
    settings, criterion, climate = Settings(), Criterion(), ClimateSettings()
    if name in ("k", "k_worst"):
        return str(Fraction(getattr(settings, name)).limit_denominator(100))
    for source in (criterion, settings, climate):
        if name in {f.name for f in dataclasses.fields(source)}:
            value = getattr(source, name)
            return f"{value:g}" if isinstance(value, float) else str(value)
    fields = {f.name: f.default for f in dataclasses.fields(Radio)}
    plain = {"agl": DEFAULT_AGL_M, "tree_allowance_m": DEFAULT_TREE_ALLOWANCE_M}
    if name in ("draws", "seed", "dem_error_corr_m", "antenna_error_m"):  # profiler.confidence
        from .confidence import ConfidenceSettings

        plain[name] = getattr(ConfidenceSettings(), name)
    value = fields.get(name, plain.get(name))
    if value is None or value is dataclasses.MISSING:
        raise KeyError(f"no default for {name!r}")
    return f"{value:g}"


def parse_number(value: Any, what: str) -> float:
    """A number, or a fraction written as 'P/Q' (e.g. k = '4/3'); raise InputError otherwise."""
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


def resolve_climate(
    section: dict[str, Any], opts: dict[str, Any], polarisation: str | None = None, polarisation_given: bool = False,
    source: str = "link file",
) -> ClimateSettings:
    """ClimateSettings from overrides over a link file's [climate] table; overrides win.

    The antenna polarisation is the one of ``polarisation`` / ``[analysis]
    polarisation``, shared with the diffraction methods.
    """
    values = {name: _checked(opts, section, name, opt=name, table="climate", source=source)
              for name in CLIMATE_KEYS}
    given: dict[str, Any] = {k: v for k, v in values.items() if v is not None}  # numbers, and polarisation text
    names = set(given) | ({"polarisation"} if polarisation_given else set())
    if polarisation is not None:
        given["polarisation"] = resolve_polarisation(polarisation)
    return ClimateSettings(**given, given=frozenset(names), source=_climate_source(section, opts, source))


def _climate_source(section: dict[str, Any], opts: dict[str, Any], source: str) -> str:
    """``climate`` override over [climate] source: "default" or "itu" (:data:`CLIMATE_SOURCES`)."""
    choices = ", ".join(CLIMATE_SOURCES)
    if opts.get("climate") is not None:
        value = opts["climate"]
        if not isinstance(value, str) or value.strip().lower() not in CLIMATE_SOURCES:
            raise InputError(f"{PARAMETER} must be one of {choices}, got {value!r}", parameter="climate",
                             value_word="SOURCE")
        return value.strip().lower()
    value = section.get("source", "default")
    if not isinstance(value, str) or value.strip().lower() not in CLIMATE_SOURCES:
        raise InputError(f"{source or 'link file'}: [climate] source must be one of {choices}, got {value!r}")
    return value.strip().lower()


def resolve_radio(opts: dict[str, Any], section: dict[str, Any] | None = None, source: str = "link file") -> Radio:
    """Radio settings from overrides over a link file's [radio] table; overrides win."""
    section = section or {}
    radio_values = {k: _checked(opts, section, k, opt=k, table="radio", source=source) for k in RADIO_KEYS}
    if radio_values["freq_ghz"] is None:
        raise InputError(f"frequency missing: give {PARAMETER} or [radio] freq_ghz in the link file",
                         parameter="freq_ghz")
    return Radio(**{k: v for k, v in radio_values.items() if v is not None}).validate()


def resolve_settings(
    opts: dict[str, Any], an: dict[str, Any] | None = None, climate_section: dict[str, Any] | None = None,
    source: str = "link file",
) -> Settings:
    """Analysis settings (k, criterion, diffraction, climate) from overrides over a link file's tables."""
    an = an or {}
    defaults, criterion = Settings(), Criterion()
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
            spacing_m=None if spacing is None else float(spacing),
            criterion=Criterion(
                min_f1_fraction=_checked(opts, an, "min_f1_fraction", opt="min_f1_fraction", table="analysis",
                                         default=criterion.min_f1_fraction, source=source),
                min_f1_fraction_worst=_checked(opts, an, "min_f1_fraction_worst", opt="min_f1_fraction_worst",
                                               table="analysis", default=criterion.min_f1_fraction_worst,
                                               source=source),
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


def resolve_link_job(link_file: str | None, overrides: dict[str, Any] | None = None) -> LinkJob:
    """Merge a link file (if any) and overrides into a :class:`LinkJob`; overrides win."""
    opts = dict(overrides or {})
    spec = read_link_file(link_file) if link_file else LinkSpec(path="", title=None)
    rasters = tuple(opts.get("dem") or ()) or tuple(spec.terrain.get("rasters", ()))
    terrain = _terrain_request(spec, opts)
    if not rasters and terrain is None:
        raise InputError(f"no elevation raster: give {PARAMETER} (repeatable) or [terrain] rasters in the link file, "
                         "or an open dataset ([terrain] source)", parameter="dem", value_word="FILE")
    a, b = _site(spec, opts, "a"), _site(spec, opts, "b")
    antennas = resolve_antennas(spec, opts)
    radio = with_antenna_gains(resolve_radio(opts, one_step_keys(spec.radio), spec.path), antennas)
    radio, radio_plan, eirp_limit = resolve_radio_plan(opts, spec.radio, spec.analysis, radio, spec.path)
    min_margin_db = _checked(opts, spec.analysis, "min_margin_db", opt="min_margin_db", table="analysis",
                             source=spec.path)
    settings = resolve_settings(opts, spec.analysis, spec.climate, spec.path)
    return LinkJob(
        title=spec.title or f"{a.name} - {b.name}",
        rasters=rasters,
        vertical_unit=_vertical_unit(opts, spec),
        nodata_fill_m=_checked(opts, spec.terrain, "nodata_fill_m", opt="nodata_fill_m", table="terrain",
                               source=spec.path),
        site_a=a,
        site_b=b,
        radio=radio,
        settings=settings,
        terrain=terrain,
        radio_plan=radio_plan,
        eirp_limit=eirp_limit,
        min_margin_db=min_margin_db,
        **_resolve_urban(spec, opts),
        antenna_a=antennas.get("a"),
        antenna_b=antennas.get("b"),
        install_date=resolve_install_date(opts),
        confidence=resolve_job_confidence(opts, spec),
        reflection=resolve_reflection(opts, spec.reflection, spec.path),
    )


def _terrain_request(spec: LinkSpec, opts: dict[str, Any]) -> Any:
    """The open dataset to fetch (``terrain`` over [terrain] source, with url and offline), or None."""
    from .terrain_sources import TerrainRequest, dataset

    source = _pick(opts.get("terrain"), spec.terrain, "source")
    if source is None:
        for key in ("terrain_url", "offline"):
            if opts.get(key):
                raise InputError(f"{PARAMETER} applies to an open dataset: give terrain as well",
                                 parameter=key)
        return None
    if not isinstance(source, str):
        raise InputError(f"{spec.path or 'link file'}: [terrain] source must be text, got {source!r}")
    try:
        name = dataset(source).name
    except InputError as exc:
        if opts.get("terrain") is None:
            raise InputError(f"{spec.path}: [terrain] source: " + exc.template.replace(
                "unknown terrain source", "unknown")) from None
        raise
    url = _pick(opts.get("terrain_url"), spec.terrain, "url")
    offline = bool(opts.get("offline")) or spec.terrain.get("offline", False)
    if url is not None and not isinstance(url, str):
        raise InputError(f"{spec.path}: [terrain] url must be text, got {url!r}")
    if opts.get("terrain_url") is None and url is not None and "://" not in url and spec.path:
        from pathlib import Path

        url = str(Path(spec.path).parent / url)  # a folder named in a link file is relative to the file
    if not isinstance(offline, bool):
        raise InputError(f"{spec.path}: [terrain] offline must be true or false, got {offline!r}")
    return TerrainRequest(name, url, offline)


def fetch_terrain(job: LinkJob, lats: Any = (), lons: Any = (), progress: Any = None) -> Any:
    """Fetch (or find in the cache) the tiles around the job's sites and ``lats``/``lons``; None without a source.

    ``progress`` is called with each count of bytes received.
    """
    if job.terrain is None:
        return None
    from .terrain_sources import ensure_area

    return ensure_area(job.terrain, [job.site_a.lat_deg, job.site_b.lat_deg, *lats],
                       [job.site_a.lon_deg, job.site_b.lon_deg, *lons],
                       terrain_margin_km(job.settings.climate), progress=progress)


def terrain_margin_km(climate: ClimateSettings) -> float:
    """Margin of fetched terrain around the sites, km: wide enough for sa when the maps are asked for.

    With ``--climate itu`` and no sa given, terrain roughness is taken over a
    110 km x 110 km square around the path centre (ITU-R P.530-17 section
    2.3.1), so the tiles must reach 55 km beyond it: a 60 km margin around the
    sites' box holds every such square.
    """
    from .terrain_sources.area import DEFAULT_MARGIN_KM

    if climate.source == "itu" and "terrain_roughness_m" in climate.defaults_used():
        return max(DEFAULT_MARGIN_KM, SA_FETCH_MARGIN_KM)
    return DEFAULT_MARGIN_KM


#: Fetch margin that covers the sa square (55 km from the path centre) with room to spare, km.
SA_FETCH_MARGIN_KM = 60.0


def _site(spec: LinkSpec, opts: dict[str, Any], tag: str) -> Site:
    """Site a or b: position, name and antenna height above ground, overrides over [site_a]/[site_b]."""
    s = getattr(spec, f"site_{tag}")
    pos = opts.get(f"site_{tag}")
    lat, lon = pos if pos is not None else (s.get("lat"), s.get("lon"))
    if lat is None or lon is None:
        raise InputError(f"site {tag}: position missing; give {PARAMETER} or [site_{tag}] lat/lon",
                         parameter=f"site_{tag}", value_word="LAT,LON")
    name = _pick(opts.get(f"name_{tag}"), s, "name", tag.upper())
    agl = _checked(opts, s, "antenna_agl_m", opt=f"agl_{tag}", table=f"site_{tag}", default=DEFAULT_AGL_M,
                   source=spec.path)
    lat = check_number(lat, "latitude", f"site {tag}")
    lon = check_number(lon, "longitude", f"site {tag}")
    return Site(str(name), lat, lon, agl).validate(f"site {tag}")


def _layers(spec: LinkSpec, opts: dict[str, Any]) -> tuple[LayerSpec, ...]:
    """Obstruction layers: the ``obstructions`` override ([KIND=]FILE[#LAYER] texts) or [obstructions] layers."""
    ob = spec.obstructions
    height_field = _pick(opts.get("height_field"), ob, "height_field")
    top_field = _pick(opts.get("top_field"), ob, "top_field")
    if opts.get("obstructions"):
        return tuple(parse_layer_spec(t, height_field=height_field, top_field=top_field)
                     for t in opts["obstructions"])
    return tuple(
        LayerSpec(
            path=e["file"],
            kind=normalise_kind(e.get("kind", "building"), f"{spec.path}: [obstructions]"),
            layer=e.get("layer"),
            height_field=e.get("height_field", height_field),
            top_field=e.get("top_field", top_field),
        )
        for e in ob.get("layers", [])
    )


def _mount(spec: LinkSpec, opts: dict[str, Any], tag: str, vertical_crs: str | None) -> Mount:
    """The one antenna height of site ``tag``, from an override or its link-file section (10 m above ground)."""
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
    ref, height = given[0] if given else ("ground", DEFAULT_AGL_M)
    key = {"ground": "antenna_agl_m", "roof": "antenna_above_roof_m", "elevation": "antenna_amsl_m",
           "ellipsoid": "antenna_ellipsoidal_m"}[ref]
    height = check_number(height, key, f"site {tag}")
    return Mount(ref, height, vertical_crs=vertical_crs).validate(f"site {tag}")


def _max_mast(spec: LinkSpec, opts: dict[str, Any], tag: str) -> float | None:
    value = _pick(opts.get(f"max_mast_{tag}"), getattr(spec, f"site_{tag}"), "max_mast_m")
    if value is None:
        return None
    return check_number(value, "max_mast_m", f"site {tag}")


def _resolve_urban(spec: LinkSpec, opts: dict[str, Any]) -> dict[str, Any]:
    """Obstruction layers, surface rasters and antenna mounts from overrides over the link file."""
    vertical_crs = _pick(opts.get("vertical_crs"), spec.terrain, "vertical_crs")
    return {
        "obstruction_layers": _layers(spec, opts),
        "surface_rasters": tuple(opts.get("surface") or ()) or tuple(spec.terrain.get("surface", ())),
        "tree_allowance_m": _checked(opts, spec.obstructions, "tree_allowance_m", opt="tree_allowance_m",
                                     table="obstructions", default=DEFAULT_TREE_ALLOWANCE_M, source=spec.path),
        "mount_a": _mount(spec, opts, "a", vertical_crs),
        "mount_b": _mount(spec, opts, "b", vertical_crs),
        "max_mast_a_m": _max_mast(spec, opts, "a"),
        "max_mast_b_m": _max_mast(spec, opts, "b"),
    }


def _vertical_unit(opts: dict[str, Any], spec: LinkSpec) -> str | None:
    """``vertical_unit`` over [terrain] vertical_unit; InputError for anything but m, ft or us-ft."""
    value = _pick(opts.get("vertical_unit"), spec.terrain, "vertical_unit")
    if value is None:
        return None
    if not isinstance(value, str) or value.strip().lower() not in VERTICAL_UNIT_CHOICES:
        raise InputError(f"{spec.path or 'link file'}: [terrain] vertical_unit must be one of "
                         f"{', '.join(VERTICAL_UNIT_CHOICES)}, got {value!r}")
    return value.strip().lower()


def open_surroundings(job: LinkJob) -> Surroundings | None:
    """Read the obstruction layers and open the surface rasters of a job (None if it has neither)."""
    return _open_surroundings(job.obstruction_layers, job.surface_rasters, job.vertical_unit, job.tree_allowance_m)


def surroundings_from_options(opts: dict[str, Any]) -> Surroundings | None:
    """The surroundings given as overrides alone (``obstructions``, ``height_field``, ``top_field``,
    ``tree_allowance_m``, ``surface``, ``vertical_unit``), read and opened as for a link; None without any."""
    spec = LinkSpec(path="", title=None)
    tree = _checked(opts, {}, "tree_allowance_m", opt="tree_allowance_m", table="obstructions",
                    default=DEFAULT_TREE_ALLOWANCE_M, source="")
    return _open_surroundings(_layers(spec, opts), tuple(opts.get("surface") or ()), opts.get("vertical_unit"),
                              tree)


def _open_surroundings(layer_specs: tuple, surface_rasters: tuple, vertical_unit: str | None,
                       tree_allowance_m: float) -> Surroundings | None:
    if not layer_specs and not surface_rasters:
        return None
    layers = tuple(read_obstruction_layer(s) for s in layer_specs)
    surface = ElevationModel(surface_rasters, vertical_unit=vertical_unit) if surface_rasters else None
    return Surroundings(layers=layers, surface=surface, tree_allowance_m=tree_allowance_m)


@contextlib.contextmanager
def open_job_data(job: LinkJob, lats: Any = (), lons: Any = (),
                  fetched: Any = None) -> Iterator[tuple[ElevationModel, Surroundings | None]]:
    """Open the elevation model and the surroundings (layers, surface) of a job; close both after.

    With an open dataset (``job.terrain``) its tiles around the sites (and
    ``lats``/``lons``, other pairs' ends) are fetched first; given rasters come
    before its VRT, so they win where they cover.  ``fetched``: the result of
    :func:`fetch_terrain` when the caller fetched already.
    """
    if fetched is None:
        fetched = fetch_terrain(job, lats, lons)
    rasters = job.rasters + ((fetched.vrt,) if fetched is not None else ())
    surroundings = open_surroundings(job)
    try:
        with ElevationModel(rasters, vertical_unit=job.vertical_unit, nodata_fill_m=job.nodata_fill_m) as model:
            if fetched is not None:
                model.terrain_source = fetched.provenance()
            yield model, surroundings
    finally:
        if surroundings is not None and surroundings.surface is not None:
            surroundings.surface.close()


def analyse_job(job: LinkJob, model: ElevationModel, surroundings: Surroundings | None, *,
                mount_a: Any = None, mount_b: Any = None) -> LinkBatch:
    """Analyse one job on open data, as ``terrahop link`` does; mounts may be overridden."""
    batch = analyse_link(
        model, job.site_a, job.site_b, job.radio, job.settings, name=job.title,
        surroundings=surroundings, mount_a=mount_a or job.mount_a, mount_b=mount_b or job.mount_b,
        radio_plan=job.radio_plan, eirp_limit=job.eirp_limit,
        reflection=job.reflection, water_layer=open_water_layer(job.reflection),
    )
    return with_confidence(with_equipment(batch, job), job, surroundings)
