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
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Iterator, overload

import numpy as np

from .availability import ClimateSettings
from .climate import CLIMATE_SOURCES
from .budget import Radio
from .errors import PARAMETER, InputError, ModelValidityError, TerrahopError
from .io.linkfile import VERTICAL_UNIT_CHOICES, LinkSpec, read_link_file
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

#: Antenna height above ground when neither an override nor the link file gives one, m (common practice).
DEFAULT_AGL_M = 10.0
#: Added to every tree height when not given, m.
DEFAULT_TREE_ALLOWANCE_M = 0.0
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


@dataclass(frozen=True)
class LinkJob:
    """Everything needed to analyse one link, overrides merged over a link file."""

    title: str
    rasters: tuple[str, ...]
    vertical_unit: str | None
    nodata_fill_m: float | None
    site_a: Site
    site_b: Site
    radio: Radio
    settings: Settings
    obstruction_layers: tuple = ()
    surface_rasters: tuple[str, ...] = ()
    tree_allowance_m: float = DEFAULT_TREE_ALLOWANCE_M
    mount_a: Any = None
    mount_b: Any = None
    max_mast_a_m: float | None = None
    max_mast_b_m: float | None = None
    #: Open dataset fetched around the sites (profiler.terrain_sources.TerrainRequest), or None.
    terrain: Any = None
    #: Antennas of the two ends (profiler.equipment.antennas.Antenna), or None where the gain is a number.
    antenna_a: Any = None
    antenna_b: Any = None
    #: Date of the magnetic declination in the installer figures (None: no installer figures).
    install_date: Any = None
    #: Radio profile applied (profiler.equipment.modulation.RadioPlan) and EIRP limit (EirpLimit), or None.
    radio_plan: Any = None
    eirp_limit: Any = None
    #: Fade margin, dB, a link needs at the design k to be viable (--min-margin-db, [analysis]); None: default.
    min_margin_db: float | None = None
    #: Monte Carlo confidence asked for (profiler.confidence.ConfidenceSettings), or None.
    confidence: Any = None
    #: Ground-reflection search (profiler.reflection.ReflectionSettings); None: not searched.
    reflection: Any = None


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


def _pick(override: Any, spec: dict, key: str, default: Any = None) -> Any:
    if override is not None:
        return override
    return spec.get(key, default)


@overload
def _checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: float, source: str = "link file") -> float: ...
@overload
def _checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: None = None, source: str = "link file") -> float | None: ...
def _checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: float | None = None, source: str = "link file") -> float | None:
    """An override over a link-file key, checked by the shared value rule; None when neither is given.

    The message names the override (``parameter``) when it gave the value, else the link file and its table.
    """
    if opts.get(opt) is not None:
        tag = table.removeprefix("site_") if table.startswith("site_") else None
        where = f"site {tag} ({PARAMETER})" if tag else PARAMETER
        try:
            return check_number(opts[opt], name or key, where)
        except InputError as exc:
            raise InputError(exc.template, parameter=opt) from None
    if key in section:
        return check_number(section[key], name or key, f"{source or 'link file'} [{table}] {key}")
    if default is None:
        return None
    return check_number(default, name or key)


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
    radio = with_antenna_gains(resolve_radio(opts, _one_step_keys(spec.radio), spec.path), antennas)
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
        confidence=_resolve_confidence(opts, spec),
        reflection=resolve_reflection(opts, spec.reflection, spec.path),
    )


def _resolve_confidence(opts: dict[str, Any], spec: LinkSpec) -> Any:
    """Confidence settings from the options over the link file's [confidence] (profiler.confidence);
    None when neither gives any.  A bad file value is named by file, table and key."""
    from .confidence import OPTIONS, resolve_confidence

    for key, value in spec.confidence.items():
        if opts.get(key) is None:
            try:
                resolve_confidence({key: value})
            except InputError as exc:
                raise InputError(f"{spec.path}: [confidence] {exc.render(lambda name, word: name)}") from None
    merged = {k: spec.confidence.get(k) if opts.get(k) is None else opts[k] for k in OPTIONS}
    return resolve_confidence(merged)


def resolve_reflection(opts: dict[str, Any], section: dict[str, Any] | None = None,
                       source: str = "link file") -> Any:
    """Reflection settings (profiler.reflection) from --water, --sea-level-water, --reflection-k-min/-max
    over a link file's [reflection] table; overrides win."""
    from .reflection import DEFAULT_K_MAX, DEFAULT_K_MIN, ReflectionSettings

    section = section or {}
    water = opts.get("water") or section.get("water")
    sea = opts.get("sea_level_water") or bool(section.get("sea_level_water", False))
    k_min = _pick(opts.get("reflection_k_min"), section, "k_min", DEFAULT_K_MIN)
    k_max = _pick(opts.get("reflection_k_max"), section, "k_max", DEFAULT_K_MAX)
    return ReflectionSettings(k_min=k_min, k_max=k_max, water_file=water, sea_level_water=bool(sea)).validate()


def open_water_layer(reflection: Any) -> Any:
    """The water polygons named by reflection settings (profiler.reflection_water), or None."""
    if reflection is None or not reflection.water_file:
        return None
    from .reflection_water import read_water_layer

    return read_water_layer(reflection.water_file)


# --- antennas and installer figures (profiler.equipment) -----------------------


def resolve_antennas(spec: LinkSpec, opts: dict[str, Any]) -> dict[str, Any]:
    """The antenna of each end: ``antenna_a``/``antenna_b`` (a file) over [antenna_a]/[antenna_b].

    Flags win over the link file as everywhere: an antenna flag replaces the file's
    [radio] gain, a gain flag replaces the file's antenna.  Two ways of giving one
    gain in the same place are refused: ``gain_a_dbi`` with ``antenna_a``, or
    [radio] gain_a_dbi with [antenna_a] in one link file.
    """
    from .equipment.antennas import antenna_from_link_table, read_antenna_file

    out: dict[str, Any] = {}
    for tag in ("a", "b"):
        flag, gain = opts.get(f"antenna_{tag}"), opts.get(f"gain_{tag}_dbi")
        table = getattr(spec, f"antenna_{tag}")
        if flag is not None and gain is not None:
            raise InputError(f"give the site {tag} gain once: {{parameter}} or --gain-{tag}-dbi, not both",
                             parameter=f"antenna_{tag}", value_word="FILE")
        if flag is not None:
            out[tag] = read_antenna_file(flag)
        elif table and gain is None:
            if f"gain_{tag}_dbi" in spec.radio:
                raise InputError(f"{spec.path}: [antenna_{tag}] and [radio] gain_{tag}_dbi both give the site {tag} "
                                 "gain; keep one")
            out[tag] = antenna_from_link_table(table, spec.path, f"antenna_{tag}")
    return out


def with_antenna_gains(radio: Radio, antennas: dict[str, Any]) -> Radio:
    """``radio`` with each end's gain taken from its antenna at the radio's frequency (band checked)."""
    gains = {f"gain_{tag}_dbi": ant.gain_dbi_at(float(radio.freq_ghz)) for tag, ant in antennas.items()}
    return dataclasses.replace(radio, **gains).validate() if gains else radio


def resolve_install_date(opts: dict[str, Any]) -> Any:
    """Date of the declination: ``date`` (YYYY-MM-DD) or today (UTC); refused outside the magnetic model."""
    import datetime as _dt

    from .equipment.installation import check_date, parse_date

    given = opts.get("date")
    if given is None:
        date = _dt.datetime.now(_dt.timezone.utc).date()
    else:
        try:
            date = parse_date(given, PARAMETER)
        except InputError as exc:
            raise InputError(exc.template, parameter="date", value_word="YYYY-MM-DD") from None
    try:
        check_date(date, PARAMETER if given is not None else "today's date")
    except ModelValidityError as exc:
        raise type(exc)(exc.template, parameter="date", value_word="YYYY-MM-DD") from None
    return date


def with_equipment(batch: LinkBatch, job: LinkJob) -> LinkBatch:
    """The batch with the job's antennas and, when the job has a date, the installer figures."""
    antennas = {tag: a for tag, a in (("a", job.antenna_a), ("b", job.antenna_b)) if a is not None}
    installation = None
    if job.install_date is not None:
        from .equipment.installation import installation_figures

        installation = installation_figures(batch, job.install_date)
    return dataclasses.replace(batch, antennas=antennas or None, installation=installation)
#: Settings of a one-step radio that a radio profile gives instead (refused beside a profile).
PROFILE_GIVES = ("bandwidth_mhz", "noise_figure_db", "required_snr_db")
#: Keys of a link file's [radio] table that are not Radio fields.
PROFILE_KEYS = ("profile", "channel_mhz", "max_eirp_dbm")


#: Column of a sites file naming each site's radio profile (screening).
RADIO_COLUMN = "radio"


def site_radios(opts: dict[str, Any], sites: Any, sites_file: str | None, radio: Radio,
                min_margin_db: float | None = None) -> Any:
    """The radio profiles of a screening run (:class:`profiler.equipment.modulation.SiteRadios`), or None.

    ``radio_profile`` (``--radio``) gives every site one profile; a ``radio``
    column of the sites names a profile file per site (relative to the sites
    file; a blank cell takes ``--radio`` if given, else the flags' one-step
    radio ``radio``, whose ``bandwidth_mhz``/``required_snr_db`` flags then
    apply to those sites only).  ``max_eirp_dbm`` sets the EIRP limit of all;
    without it each profile band's own.  ``min_margin_db``: the margin a
    step needs to be chosen (screen's viable margin).  A profile that cannot
    be used stops the run with one line naming the site that names it.
    """
    from .equipment.modulation import DEFAULT_MIN_MARGIN_DB, SiteRadios

    extra: Any = getattr(sites, "extra", None)
    column = extra is not None and RADIO_COLUMN in getattr(extra, "columns", ())
    if opts.get("radio_profile") is None and not column and opts.get("max_eirp_dbm") is None:
        for key in ("channel_mhz",):
            if opts.get(key) is not None:
                raise InputError(f"{PARAMETER} applies to a radio profile's steps: give --radio or a radio column",
                                 parameter=key)
        return None
    margin = DEFAULT_MIN_MARGIN_DB if min_margin_db is None else min_margin_db
    plans: list[Any] = []
    limits: list[Any] = []
    names: list[str] = []
    index: dict[str | None, int] = {}

    def plan_of(path: str | None, where: str) -> int:
        if path in index:
            return index[path]
        if path is None:  # the flags' one-step radio
            plain = {k: v for k, v in opts.items() if k not in ("channel_mhz", "radio_profile")}
            _, plan, limit = resolve_radio_plan(plain, {}, {}, radio, "")
            names.append("the one-step radio of the flags")
        else:
            given = dict(opts, radio_profile=path, min_margin_db=margin)
            if opts.get("radio_profile") != path:  # a site's own profile: the one-step flags are not for it
                given = {k: v for k, v in given.items() if k not in PROFILE_GIVES}
            try:
                _, plan, limit = resolve_radio_plan(given, {}, {}, radio, "")
            except TerrahopError as exc:
                if not where:
                    raise
                raise type(exc)(f"{where}: " + exc.template, parameter=exc.parameter,
                                value_word=exc.value_word) from None
            names.append(str(path))
        index[path] = len(plans)
        plans.append(plan)
        limits.append(limit)
        return index[path]

    default = opts.get("radio_profile")
    n = len(sites)
    site_plan = np.zeros(n, dtype=np.int16)
    if not column:
        site_plan[:] = plan_of(default, "")
    else:
        from pathlib import Path

        base = Path(sites_file).parent if sites_file else Path(".")
        cells = extra[RADIO_COLUMN].to_numpy()
        for i in range(n):  # one look-up per site (files are read once each)
            cell = cells[i]
            text = "" if cell is None or (isinstance(cell, float) and cell != cell) else str(cell).strip()
            where = (f"{sites_file or sites.source}: site {str(sites.names[i])!r} (row {int(sites.rows[i])}), "
                     f"column {RADIO_COLUMN} {text!r}")
            path = default if not text else (text if Path(text).is_absolute() else str(base / text))
            site_plan[i] = plan_of(path, where if text else "")
    return SiteRadios(plans=tuple(plans), limits=tuple(limits), site_plan=site_plan, names=tuple(names),
                      site_rows=np.asarray(sites.rows))


def _one_step_keys(section: dict[str, Any]) -> dict[str, Any]:
    """A [radio] table without the radio-profile keys (those are not :class:`Radio` fields)."""
    return {k: v for k, v in section.items() if k not in PROFILE_KEYS}


def resolve_radio_plan(opts: dict[str, Any], section: dict[str, Any], analysis: dict[str, Any], radio: Radio,
                       source: str = "link file") -> tuple[Radio, Any, Any]:
    """(radio the engine analyses, RadioPlan or None, EirpLimit or None) from overrides over [radio].

    ``radio_profile`` over [radio] profile names a radio profile
    (:mod:`profiler.equipment.radios`); ``channel_mhz`` over [radio]
    channel_mhz picks its channel; ``min_margin_db`` over [analysis]
    min_margin_db is the margin a step needs to be chosen (default 10 dB).
    With a profile, ``bandwidth_mhz``, ``noise_figure_db`` and
    ``required_snr_db`` come from it: given as overrides, or in the same link
    file as the profile, they are refused; a link file's own are replaced when
    the profile comes as an override (the record lists them).  A transmit
    power given with a profile may only lower the profile's.  ``max_eirp_dbm``
    over [radio] max_eirp_dbm over the profile band's limit is the EIRP limit.
    """
    from .equipment.modulation import DEFAULT_MIN_MARGIN_DB, RadioPlan
    from .equipment.radios import EirpLimit, read_radio_profile, step_table

    where = source or "link file"
    path = opts.get("radio_profile") or section.get("profile")
    channel = _checked(opts, section, "channel_mhz", opt="channel_mhz", table="radio", source=source)
    margin = _checked(opts, analysis, "min_margin_db", opt="min_margin_db", table="analysis", source=source)
    limit_value = _checked(opts, section, "max_eirp_dbm", opt="max_eirp_dbm", table="radio", source=source)
    limit = None
    if limit_value is not None:
        limit = EirpLimit(limit_value, "--max-eirp-dbm" if opts.get("max_eirp_dbm") is not None
                          else f"{where} [radio] max_eirp_dbm")
    if path is None:
        # min_margin_db without a profile is fine: it is also the viable margin of the verdict (--kml).
        if channel is not None:
            if opts.get("channel_mhz") is not None:
                raise InputError(f"{PARAMETER} applies to a radio profile's steps: give a radio profile as well",
                                 parameter="channel_mhz")
            raise InputError(f"{where}: [radio] channel_mhz applies to a radio profile's steps: give [radio] profile")
        return radio, None, limit
    for key in PROFILE_GIVES:
        if opts.get(key) is not None:
            raise InputError(f"{PARAMETER} describes a one-step radio; the radio profile gives it: drop one of the two",
                             parameter=key)
        if key in section and opts.get("radio_profile") is None:
            raise InputError(f"{where}: [radio] {key} and [radio] profile are both given; the profile gives "
                             f"{key}: drop one of the two")
    replaced = tuple(f"{where} [radio] {k}" for k in PROFILE_GIVES if k in section)
    profile = read_radio_profile(path)
    band = profile.band(radio.freq_ghz)
    chosen = profile.channel(channel)
    cap = opts.get("tx_power_dbm") if opts.get("tx_power_dbm") is not None else section.get("tx_power_dbm")
    try:
        steps = step_table(profile, chosen, None if cap is None else float(cap), radio.tx_power_dbm)
    except InputError as exc:
        if opts.get("tx_power_dbm") is None and exc.parameter == "tx_power_dbm":
            raise InputError(exc.template.replace(f"({PARAMETER} ", f"({where} [radio] tx_power_dbm = ")) from None
        raise
    if limit is None and band.max_eirp_dbm is not None:
        limit = EirpLimit(band.max_eirp_dbm, f"radio profile {profile.path}, band {band.describe()}")
    plan = RadioPlan(profile=profile, channel_mhz=chosen.width_mhz, freq_ghz=float(radio.freq_ghz), band=band,
                     steps=steps, min_margin_db=DEFAULT_MIN_MARGIN_DB if margin is None else margin,
                     replaced=replaced)
    return plan.engine_radio(radio).validate(), plan, limit


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


def with_confidence(batch: LinkBatch, job: LinkJob, surroundings: Any) -> LinkBatch:
    """``batch`` with its Monte Carlo confidence (profiler.confidence) when the job asks for it."""
    if job.confidence is None:
        return batch
    from .confidence import confidence_for_batch

    return dataclasses.replace(batch, confidence=confidence_for_batch(
        batch, job.confidence, tree_allowance_m=job.tree_allowance_m if surroundings is not None else None))
