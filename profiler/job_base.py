"""What every part of a link job shares: :class:`LinkJob` and the reading of one override over a link-file key.

Shared by :mod:`profiler.jobs` and the job modules it imports
(:mod:`profiler.job_equipment`, :mod:`profiler.job_extras`); imports none of
them.  :mod:`profiler.jobs` re-exports the names (their usual import path).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, overload

from .budget import Radio
from .errors import PARAMETER, InputError
from .link_types import Settings, Site
from .validation import check_number

__all__ = ["DEFAULT_AGL_M", "DEFAULT_TREE_ALLOWANCE_M", "LinkJob", "pick", "checked"]

#: Antenna height above ground when neither an override nor the link file gives one, m (common practice).
DEFAULT_AGL_M = 10.0
#: Added to every tree height when not given, m.
DEFAULT_TREE_ALLOWANCE_M = 0.0


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


def pick(override: Any, spec: dict, key: str, default: Any = None) -> Any:
    if override is not None:
        return override
    return spec.get(key, default)


@overload
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: float, source: str = "link file") -> float: ...
@overload
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: None = None, source: str = "link file") -> float | None: ...
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
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
