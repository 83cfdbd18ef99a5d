"""How an antenna height is given, and where that puts the antenna.

A planner may give an antenna height above the ground, above the roof of
the building the site stands in (found in the obstruction layers), as an
elevation in the rasters' vertical datum, or above the WGS84 ellipsoid (a
GNSS reading, converted with a geoid grid).  :func:`place_sites` turns each
into a height above ground for the engine and keeps a record of the ground,
roof and datum used, for the JSON result.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np

from .errors import PARAMETER, DataError, InputError
from .obstructions import RoofInfo, Surroundings
from .terrain import ElevationModel
from .validation import check_number
from .vertical import GeoidConversion, ellipsoidal_to_raster_datum, raster_vertical_crs

__all__ = ["REFERENCES", "Mount", "Placement", "place_sites"]

#: Ways to give an antenna height, and what each is measured from.
REFERENCES = {
    "ground": "above the ground at the site",
    "roof": "above the roof of the building the site stands in",
    "elevation": "elevation in the vertical datum of the elevation rasters",
    "ellipsoid": "above the WGS84 ellipsoid (GNSS), converted with a geoid grid",
}


@dataclass(frozen=True)
class Mount:
    """An antenna height and what it is measured from (one of :data:`REFERENCES`).

    ``vertical_crs`` (e.g. 'EPSG:5773') names the rasters' vertical datum for
    an ellipsoidal height when the rasters do not state it.
    """

    reference: str = "ground"
    height_m: float = 10.0
    vertical_crs: str | None = None

    def validate(self, where: str) -> "Mount":
        if self.reference not in REFERENCES:
            raise InputError(f"{where}: unknown antenna height reference {self.reference!r}; use one of "
                             f"{', '.join(REFERENCES)}")
        if not isinstance(self.height_m, (int, float)) or not math.isfinite(self.height_m):
            raise InputError(f"{where}: antenna height must be a finite number, got {self.height_m!r}")
        # Ranges shared with every entry point (profiler.validation.LIMITS).
        limit = {"ground": "antenna_agl_m", "roof": "antenna_above_roof_m", "elevation": "antenna_amsl_m",
                 "ellipsoid": "antenna_ellipsoidal_m"}.get(self.reference)
        if limit is not None:
            check_number(self.height_m, limit, where)
        return self


@dataclass(frozen=True)
class Placement:
    """Where a mount put the antenna: heights in metres in the rasters' vertical datum."""

    reference: str
    given_m: float
    ground_m: float
    antenna_agl_m: float
    antenna_amsl_m: float
    roof: RoofInfo | None = None
    geoid: GeoidConversion | None = None
    warning: str | None = None

    def record(self) -> dict:
        """Keys added to the site's JSON object."""
        out: dict = {
            "antenna_reference": self.reference,
            "antenna_given_m": self.given_m,
            "roof_m": None if self.roof is None else self.roof.roof_m,
            "building": None if self.roof is None else {
                "layer": self.roof.layer, "feature": self.roof.feature, "height_m": self.roof.height_m,
            },
        }
        if self.reference == "roof":
            out["antenna_above_roof_m"] = self.given_m
        if self.geoid is not None:
            out.update({
                "antenna_ellipsoidal_m": self.geoid.ellipsoidal_m,
                "geoid_undulation_m": self.geoid.undulation_m,
                "geoid_vertical_crs": self.geoid.vertical_crs,
                "geoid_operation": self.geoid.operation,
            })
        return out


def place_sites(
    model: ElevationModel,
    sites: Sequence,
    mounts: Sequence[Mount | None] | None,
    surroundings: Surroundings | None = None,
    role: str = "site",
) -> tuple[tuple, tuple[Placement, ...]]:
    """Resolve each site's mount to a height above ground.

    Returns the sites with ``antenna_agl_m`` set, and one Placement each.
    A None mount keeps the site's own height above ground.  Raises
    InputError for a roof mount outside every building, an antenna below
    ground, or a bad mount; DataError for a site outside the rasters.
    """
    mounts = list(mounts) if mounts is not None else [None] * len(sites)
    if len(mounts) != len(sites):
        raise InputError(f"{len(sites)} sites but {len(mounts)} antenna mounts")
    lon = np.array([s.lon_deg for s in sites], dtype=float)
    lat = np.array([s.lat_deg for s in sites], dtype=float)
    ground, _ = model.sample(lon, lat)
    placed, placements = [], []
    for site, mount, g in zip(sites, mounts, ground):
        where = f"{role} {site.name!r}" if site.name else role
        mount = (mount or Mount("ground", site.antenna_agl_m)).validate(where)
        g = float(g)
        if not np.isfinite(g):
            if mount.reference == "ground":
                placed.append(replace(site, antenna_agl_m=float(mount.height_m)))
                placements.append(Placement("ground", mount.height_m, g, mount.height_m, g))
                continue
            raise DataError(
                f"{where} ({site.lat_deg:.6f}, {site.lon_deg:.6f}) has no ground elevation "
                "(outside the rasters or nodata)"
            )
        roof = surroundings.roof_at(site.lon_deg, site.lat_deg, g) if surroundings is not None else None
        geoid = None
        warning = None
        if mount.reference == "ground":
            agl = mount.height_m
            if roof is not None and roof.height_m > agl:
                warning = (
                    f"{where} stands in building {roof.feature} whose roof is {roof.height_m:.1f} m above "
                    f"ground, higher than the antenna ({agl:g} m above ground): the building itself blocks "
                    "the path; give the height above the roof instead if the antenna is on it"
                )
        elif mount.reference == "roof":
            if surroundings is None or not any(l.kind == "building" for l in surroundings.layers):
                raise InputError(
                    f"{where}: an antenna height above the roof needs a building layer "
                    f"({PARAMETER}); or give the height above ground", parameter="surroundings",
                )
            if roof is None:
                raise InputError(
                    f"{where} ({site.lat_deg:.6f}, {site.lon_deg:.6f}) is not inside any building of the "
                    "obstruction layers, so there is no roof to measure from; check the position "
                    "(it must fall within the footprint) or give the height above ground"
                )
            agl = roof.height_m + mount.height_m
        elif mount.reference == "elevation":
            agl = mount.height_m - g
        else:  # ellipsoid
            vcrs = raster_vertical_crs(model, mount.vertical_crs)
            geoid = ellipsoidal_to_raster_datum(site.lon_deg, site.lat_deg, mount.height_m, vcrs)
            agl = geoid.height_m - g
        if agl < 0:
            raise InputError(
                f"{where}: the antenna ({mount.height_m:g} m {REFERENCES[mount.reference]}) would be "
                f"{-agl:.2f} m below the ground ({g:.2f} m in the rasters' datum)"
            )
        placed.append(replace(site, antenna_agl_m=float(agl)))
        placements.append(Placement(mount.reference, float(mount.height_m), g, float(agl), g + float(agl),
                                    roof=roof, geoid=geoid, warning=warning))
    return tuple(placed), tuple(placements)
