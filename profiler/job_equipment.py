"""The equipment of a link job: radio profile, antennas and installation date, from overrides over a link file.

Part of :mod:`profiler.jobs` (which re-exports every name here): click-free,
usable from Python.  ``resolve_radio_plan`` puts a radio profile over [radio]
(the one-step keys refused or replaced), ``site_radios`` gives screening its
radio per site (``--radio`` or a sites file's radio column), ``resolve_antennas``
and ``resolve_install_date`` read the antennas and the date of the installer
figures, ``with_antenna_gains`` and ``with_equipment`` apply them.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from .budget import Radio
from .errors import PARAMETER, InputError, ModelValidityError, TerrahopError
from .io.linkfile import LinkSpec
from .job_base import LinkJob, checked as _checked
from .link_batch import LinkBatch

__all__ = [
    "PROFILE_GIVES", "PROFILE_KEYS", "RADIO_COLUMN", "resolve_radio_plan", "one_step_keys", "site_radios",
    "resolve_antennas", "with_antenna_gains", "resolve_install_date", "with_equipment",
]

# --- radio profiles (profiler.equipment.radios, .modulation) ------------------

#: Settings of a one-step radio that a radio profile gives instead (refused beside a profile).
PROFILE_GIVES = ("bandwidth_mhz", "noise_figure_db", "required_snr_db")
#: Keys of a link file's [radio] table that are not Radio fields.
PROFILE_KEYS = ("profile", "channel_mhz", "max_eirp_dbm")
#: Column of a sites file naming each site's radio profile (screening).
RADIO_COLUMN = "radio"


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


def one_step_keys(section: dict[str, Any]) -> dict[str, Any]:
    """A [radio] table without the radio-profile keys (those are not :class:`Radio` fields)."""
    return {k: v for k, v in section.items() if k not in PROFILE_KEYS}


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
