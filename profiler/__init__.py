"""terrahop: terrain-aware point-to-point radio path profiler.

The package is named ``profiler``; the command is ``terrahop``.  The names
below are the Python face of the engine the command runs: the same code, the
same numbers.  They are imported on first use, so ``import profiler`` stays
light (no numpy, rasterio or geopandas until a name needs them).

Terrain
    ``ElevationModel(paths, vertical_unit=None, nodata_fill_m=None)`` opens one
    or many elevation rasters (GeoTIFF, VRT, any GDAL format, any CRS) as one
    surface; ``open_elevation`` does the same.  Close it, or use it in a
    ``with`` block.

One link, or many
    ``Site(name, lat_deg, lon_deg, antenna_agl_m)`` is one end (WGS84 degrees,
    antenna height above ground in metres).  ``Radio(freq_ghz, ...)`` holds
    power, gains, losses and the receiver (dBm, dBi, dB, MHz).  ``Settings``
    holds the k-factors, sample spacing, clearance ``Criterion``, diffraction
    method and ``ClimateSettings`` (gases, rain, multipath).
    ``analyse_link(model, site_a, site_b, radio, settings)`` returns a
    ``LinkBatch`` of one link; ``analyse_links`` takes lists of sites and
    returns one batch for all of them.  ``batch.record(i)`` is the JSON
    object that ``terrahop link --json`` prints; array fields such as
    ``batch.meets_criterion`` hold one value per link.

Availability
    ``availability_for_links(fade_margin_db, distance_m, freq_ghz, ...)``
    gives the rain availability and multipath outage of many hops at once
    (ITU-R P.530-17); ``analyse_links`` already calls it for each link.

Antenna heights
    ``solve_heights(batch, solve="both")`` finds the lowest antenna heights
    that meet the clearance criterion, with the same engine.

Screening many sites
    ``screen(sites, model, radio, settings, out, plan=PairPlan(...))`` checks
    every planned pair of a site table, ranks the links by fade margin and
    gives each a ``Verdict``; ``read_sites`` reads a CSV or point layer.

Errors
    ``errors`` holds the exception types.  Everything a planner can cause or
    fix derives from ``TerrahopError``: ``InputError`` (a setting or
    coordinate), ``DataError`` and ``DataFileError`` (rasters and layers),
    ``ModelValidityError``; ``ModelValidityWarning`` marks results outside a
    method's published range.

Demo data
    ``demo_path("data", "demo", "terrain.tif")`` is the invented demo terrain
    (``examples/`` holds the demo link files), wherever terrahop is installed.

Example: the first demo link (invented place), analysed from Python.

>>> import profiler
>>> model = profiler.ElevationModel([profiler.demo_path("data", "demo", "terrain.tif")])
>>> a = profiler.Site("Orrin Water Tank", lat_deg=-30.426077, lon_deg=-20.973967, antenna_agl_m=20)
>>> b = profiler.Site("Brackwell Silo", lat_deg=-30.403493, lon_deg=-20.916715, antenna_agl_m=15)
>>> radio = profiler.Radio(freq_ghz=5.8, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)
>>> batch = profiler.analyse_link(model, a, b, radio, profiler.Settings(k=4 / 3, k_worst=2 / 3))
>>> record = batch.record(0)
>>> print(f"{record['distance_km']:.3f} km, worst point {record['clearance']['worst_f1_fraction']:+.2f} F1")
6.044 km, worst point +0.81 F1
>>> print(f"fade margin {record['budget']['fade_margin_db']:+.1f} dB, meets: {record['meets_criterion']}")
fade margin +20.6 dB, meets: True
>>> model.close()

The command-line guide is ``terrahop --help``; README.md has the Python API
section, DEVELOPERS.md the map of the package.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from ._version import __version__

#: Public name -> module that defines it (its import path, which stays valid).
_EXPORTS = {
    # terrain
    "ElevationModel": "profiler.terrain",
    "open_elevation": "profiler.terrain",
    # one link, or many
    "Site": "profiler.link",
    "Settings": "profiler.link",
    "Criterion": "profiler.link",
    "LinkBatch": "profiler.link",
    "analyse_link": "profiler.link",
    "analyse_links": "profiler.link",
    "Radio": "profiler.budget",
    # availability
    "ClimateSettings": "profiler.availability",
    "availability_for_links": "profiler.availability",
    # antenna heights
    "solve_heights": "profiler.heights",
    "HeightSolution": "profiler.heights",
    # screening
    "screen": "profiler.screening",
    "PairPlan": "profiler.screening",
    "ScreenSummary": "profiler.screening",
    "Verdict": "profiler.screening",
    "read_sites": "profiler.io.sites",
    # errors
    "TerrahopError": "profiler.errors",
    "InputError": "profiler.errors",
    "DataError": "profiler.errors",
    "DataFileError": "profiler.errors",
    "ModelValidityError": "profiler.errors",
    "ModelValidityWarning": "profiler.errors",
    # demo data
    "demo_path": "profiler.demo_files",
}

#: Submodules offered as attributes (``profiler.errors``).
_SUBMODULES = ("errors",)

__all__ = ["__version__", *_EXPORTS, *_SUBMODULES]

if TYPE_CHECKING:  # the real names, for type checkers and editors
    from . import errors
    from .availability import ClimateSettings, availability_for_links
    from .budget import Radio
    from .demo_files import demo_path
    from .errors import (DataError, DataFileError, InputError, ModelValidityError, ModelValidityWarning,
                         TerrahopError)
    from .heights import HeightSolution, solve_heights
    from .io.sites import read_sites
    from .link import Criterion, LinkBatch, Settings, Site, analyse_link, analyse_links
    from .screening import PairPlan, ScreenSummary, Verdict, screen
    from .terrain import ElevationModel, open_elevation


def __getattr__(name: str) -> Any:
    """Import a public name on first use (PEP 562) and keep it."""
    if name in _EXPORTS:
        value = getattr(importlib.import_module(_EXPORTS[name]), name)
    elif name in _SUBMODULES:
        value = importlib.import_module(f"{__name__}.{name}")
    else:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    globals()[name] = value
    return value


_MODULE_DUNDERS = ("__doc__", "__file__", "__loader__", "__name__", "__package__", "__path__", "__spec__")


def __dir__() -> list[str]:
    """The public names and the module's own dunders (not the helpers of this face)."""
    return sorted({*__all__, *(n for n in _MODULE_DUNDERS if n in globals())})
