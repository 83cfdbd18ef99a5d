"""Vertical datums: which one heights refer to, and ellipsoidal -> raster datum.

terrahop works in the vertical datum of the elevation rasters.  A planner
who measured an antenna with GNSS has a height above the WGS84 ellipsoid;
it is converted to the raster's datum with a geoid grid through PROJ
(H = h - N, N the geoid undulation), or refused with a message when the
raster's datum is unknown or PROJ lacks the grid.  Datums are never mixed
silently.
"""

from __future__ import annotations

import enum
import os
from dataclasses import dataclass

import numpy as np

from .errors import PARAMETER, DataError, InputError
from .terrain import DATUM_NOT_STATED, ElevationModel

__all__ = [
    "GeoidConversion", "raster_vertical_crs", "ellipsoidal_to_raster_datum", "SYSTEM_GRID_DIRS",
    "DatumName", "DatumSource", "name_datum", "apply_datum_name", "datum_of_record", "UNSTATED",
    "PLANNER_NOTE", "raster_datum", "stated_datums", "planner_datum_text",
]

#: How terrain.py describes a raster that does not state its vertical datum (the record's text).
UNSTATED = DATUM_NOT_STATED
#: Written after a datum name in inputs.vertical_datum when the planner, not the rasters, named it.
PLANNER_NOTE = " (stated by the planner; the rasters do not say)"


class DatumSource(str, enum.Enum):
    """Who stated the vertical datum: the rasters, the planner (``vertical_crs``), or nobody."""

    RASTER = "raster"
    PLANNER = "planner"
    UNKNOWN = "unknown"


def raster_datum(text: str) -> str | None:
    """The datum name of one raster (``RasterSource.vertical_datum``), or None when the file states none."""
    return None if text == DATUM_NOT_STATED else text


def stated_datums(text: str | None) -> list[str]:
    """The datum names in a provenance text (names joined by "; "), without the unstated ones."""
    names = [n.strip() for n in (text or "").split(";")]
    return [n for n in names if n and raster_datum(n) is not None]


def planner_datum_text(name: str) -> str:
    """inputs.vertical_datum for a datum the planner named and the rasters do not state."""
    return f"{name}{PLANNER_NOTE}"


def _parse_datum_text(text: str) -> tuple[str | None, DatumSource]:
    """(name or None, who stated it) from the text of inputs.vertical_datum: the one reader of that text."""
    text = text.strip()
    if not text or raster_datum(text) is None or text.startswith("as the raster"):
        return None, DatumSource.UNKNOWN
    if text.endswith(PLANNER_NOTE):
        return text[: -len(PLANNER_NOTE)], DatumSource.PLANNER
    return text, DatumSource.RASTER

#: Folders where operating-system packages put PROJ grids (Debian's proj-data
#: installs egm96_15.gtx in /usr/share/proj); searched after pyproj's own.
SYSTEM_GRID_DIRS = ("/usr/share/proj", "/usr/local/share/proj")


@dataclass(frozen=True)
class GeoidConversion:
    """An ellipsoidal height brought to the raster's vertical datum, metres."""

    ellipsoidal_m: float
    height_m: float
    undulation_m: float
    vertical_crs: str
    operation: str


def raster_vertical_crs(model: ElevationModel, given: str | None = None):
    """The vertical CRS of the terrain: stated in the rasters, or ``given`` (e.g. 'EPSG:5773').

    Raises InputError when neither says, or when they disagree.
    """
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    stated = []
    for s in model.sources:
        crs = CRS.from_wkt(s.crs_wkt)
        if crs.is_compound:
            stated += [sub for sub in crs.sub_crs_list if sub.is_vertical]
    given_crs = None
    if given:
        try:
            given_crs = CRS.from_user_input(given)
        except CRSError:
            raise InputError(f"vertical CRS {given!r} is not known to PROJ; give e.g. EPSG:5773 (EGM96 height)") from None
        if not given_crs.is_vertical:
            raise InputError(f"{given!r} ({given_crs.name}) is not a vertical CRS; give e.g. EPSG:5773 (EGM96 height)")
    if stated:
        names = sorted({c.name for c in stated})
        if len(names) > 1:
            raise DataError(f"the elevation rasters use different vertical datums ({', '.join(names)})")
        if given_crs is not None and given_crs.name != stated[0].name:
            raise InputError(
                f"the elevation rasters state their heights are {stated[0].name}, "
                f"but {given!r} ({given_crs.name}) was given; drop the option or fix the raster"
            )
        return stated[0]
    if given_crs is None:
        raise InputError(
            "the elevation rasters do not state their vertical datum, so an ellipsoidal (GNSS) "
            f"height cannot be converted; say which it is with {PARAMETER} (e.g. EPSG:5773 for "
            "EGM96 heights, EPSG:3855 for EGM2008) or give the antenna height above ground",
            parameter="vertical_crs",
        )
    return given_crs


def _add_system_grid_dirs() -> None:
    import pyproj.datadir

    current = pyproj.datadir.get_data_dir().split(os.pathsep)
    for d in SYSTEM_GRID_DIRS:
        if os.path.isdir(d) and d not in current:
            pyproj.datadir.append_data_dir(d)


def ellipsoidal_to_raster_datum(lon_deg: float, lat_deg: float, ellipsoidal_m: float, vertical_crs) -> GeoidConversion:
    """Convert a WGS84 ellipsoidal height to ``vertical_crs`` with the geoid grid PROJ holds.

    H = h - N (geoid undulation N from the grid; e.g. the EGM96 15' grid for
    EPSG:5773).  Refuses (DataError) when PROJ has no grid-based operation
    available: the ballpark fallback (N = 0) is never used.
    """
    from pyproj import CRS
    from pyproj.crs import CompoundCRS
    from pyproj.transformer import TransformerGroup

    _add_system_grid_dirs()
    target = CompoundCRS(name=f"WGS 84 + {vertical_crs.name}", components=[CRS("EPSG:4326"), vertical_crs])
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            group = TransformerGroup(CRS("EPSG:4979"), target, always_xy=True)
    except Exception as exc:  # pragma: no cover - PROJ errors vary
        raise DataError(f"PROJ cannot relate WGS84 ellipsoidal heights to {vertical_crs.name}: {exc}") from None
    usable = [t for t in group.transformers if "ballpark" not in t.description.lower()]
    if not usable:
        missing = sorted({g.short_name for op in group.unavailable_operations for g in op.grids})
        hint = (
            f"PROJ lacks the geoid grid {', '.join(missing)}; install it (Debian: apt-get install "
            f"proj-data, or projsync --file {missing[0]})" if missing
            else f"PROJ knows no geoid model for {vertical_crs.name}"
        )
        raise DataError(
            f"cannot convert an ellipsoidal (GNSS) height to {vertical_crs.name}: {hint}; "
            "or give the antenna height above ground"
        )
    t = usable[0]
    _, _, height = t.transform(lon_deg, lat_deg, ellipsoidal_m)
    height = float(height)
    if not np.isfinite(height):
        raise DataError(
            f"the geoid grid for {vertical_crs.name} does not cover ({lat_deg:.6f}, {lon_deg:.6f})"
        )
    return GeoidConversion(
        ellipsoidal_m=float(ellipsoidal_m),
        height_m=height,
        undulation_m=float(ellipsoidal_m) - height,
        vertical_crs=vertical_crs.name,
        operation=t.description,
    )


@dataclass(frozen=True)
class DatumName:
    """The vertical datum heights are given in: its name, who stated it, and whether it is a sea level.

    ``source`` is a :class:`DatumSource`: the rasters, the planner
    (``vertical_crs``, ``[terrain] vertical_crs``) or unknown (``name`` is then None).
    """

    name: str | None
    source: DatumSource
    sea_level: bool

    @property
    def known(self) -> bool:
        return self.source is not DatumSource.UNKNOWN

    def phrase(self) -> str:
        """'above the datum EGM96 height (stated by the planner...)', for the end of a height."""
        if not self.known:
            return "above the datum of the elevation rasters (not stated in the files)"
        return f"above the datum {self.name}{self._origin()}"

    def short(self) -> str:
        """The words after a height: 'above sea level' (a sea-level datum), else 'above the datum'."""
        return "above sea level" if self.sea_level else "above the datum"

    def _origin(self) -> str:
        return PLANNER_NOTE if self.source is DatumSource.PLANNER else ""

    def record(self) -> str:
        """The text of the JSON key inputs.vertical_datum."""
        if not self.known:
            return UNSTATED
        return f"{self.name}{self._origin()}"


def _is_sea_level(crs) -> bool:
    """True for a vertical CRS of gravity-related heights pointing up (orthometric or normal
    heights: EGM96, EGM2008, NAVD88, MSL...), whose zero is a model of mean sea level.

    The EPSG dataset names this axis "Gravity-related height" for such CRSs; ellipsoidal
    heights and depths are not (EPSG Guidance Note 7-1, axis names; common practice to read
    a geoid-based height as "above sea level").
    """
    try:
        axes = crs.axis_info
    except Exception:  # pragma: no cover - pyproj quirks
        return False
    return bool(crs.is_vertical and axes and axes[0].name.lower() == "gravity-related height"
                and axes[0].direction.lower() == "up")


def _vertical_crs(text: str):
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    try:
        crs = CRS.from_user_input(text)
    except CRSError:
        return None
    return crs if crs.is_vertical else None


def name_datum(stated: str | None, given: str | None = None) -> DatumName:
    """Which vertical datum the heights use: the rasters' (``stated``, as in the provenance) or ``given``.

    ``stated`` is the provenance's vertical_datum text (names joined by "; ",
    or :data:`UNSTATED`).  Raises InputError for a ``given`` that is not a
    vertical CRS, or one that contradicts the rasters.
    """
    names = stated_datums(stated)
    given_crs = None
    if given:
        given_crs = _vertical_crs(str(given))
        if given_crs is None:
            raise InputError(f"{PARAMETER} {given!r} is not a vertical CRS known to PROJ; "
                             "give e.g. EPSG:5773 (EGM96 height) or EPSG:3855 (EGM2008 height)",
                             parameter="vertical_crs")
    if names:
        name = names[0] if len(names) == 1 else "; ".join(names)
        if given_crs is not None and given_crs.name not in names:
            raise InputError(
                f"the elevation rasters state their heights are {name}, but {PARAMETER} {given!r} "
                f"({given_crs.name}) was given; drop the option or fix the raster", parameter="vertical_crs",
            )
        crs = given_crs if given_crs is not None else _vertical_crs(names[0])
        sea = len(names) == 1 and crs is not None and _is_sea_level(crs)
        return DatumName(name, DatumSource.RASTER, sea)
    if given_crs is not None:
        return DatumName(given_crs.name, DatumSource.PLANNER, _is_sea_level(given_crs))
    return DatumName(None, DatumSource.UNKNOWN, False)


def apply_datum_name(record: dict, given: str | None) -> DatumName:
    """Name the datum of a link's JSON record from its rasters or ``given``; set inputs.vertical_datum
    and inputs.vertical_datum_sea_level.  Returns the name."""
    inputs = record.setdefault("inputs", {})
    stated = (record.get("provenance") or {}).get("vertical_datum", inputs.get("vertical_datum"))
    datum = name_datum(stated, given)
    if not datum.known:
        # a geoid conversion may already have named it (profiler.link_record)
        name, source = _parse_datum_text(str(inputs.get("vertical_datum") or ""))
        if source is DatumSource.PLANNER:
            assert name is not None  # _parse_datum_text names every planner-stated datum
            crs = _vertical_crs(name)
            datum = DatumName(name, DatumSource.PLANNER, crs is not None and _is_sea_level(crs))
    inputs["vertical_datum"] = datum.record()
    inputs["vertical_datum_sea_level"] = datum.sea_level
    return datum


def datum_of_record(record: dict) -> DatumName:
    """The DatumName a record states (after :func:`apply_datum_name`, or from its plain text)."""
    inputs = record.get("inputs", {})
    name, source = _parse_datum_text(str(inputs.get("vertical_datum") or ""))
    if name is None:
        return DatumName(None, DatumSource.UNKNOWN, False)
    sea = inputs.get("vertical_datum_sea_level")
    if sea is None:
        crs = _vertical_crs(name)
        sea = crs is not None and _is_sea_level(crs)
    return DatumName(name, source, bool(sea))
