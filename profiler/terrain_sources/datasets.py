"""The open elevation datasets terrahop can fetch: tile names, base URLs, sizes, vertical datums.

Base URLs and tile layouts are written from memory (not re-read from the
providers' pages when this was written); every base URL can be replaced with
``--terrain-url`` / ``TERRAHOP_TERRAIN_URL``, the tile names keep the layout.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass

from ..errors import InputError

__all__ = ["Dataset", "DATASETS", "dataset", "tile_origins", "TILE_ROWS_ENV"]

#: Environment variable giving the row count of a tile to expect instead of the dataset's own
#: (a reduced-resolution mirror; the tests serve 1 x 1 degree tiles of a few hundred cells).
#: GeoTIFF datasets only: SRTM HGT files have their size fixed by the format.
TILE_ROWS_ENV = "TERRAHOP_TILE_ROWS"


def _hemi(value: int, pos: str, neg: str, width: int) -> str:
    return f"{pos if value >= 0 else neg}{abs(value):0{width}d}"


def _copernicus_width_factor(lat0: int) -> float:
    """Copernicus DEM columns per row by latitude band (the product handbook's table, from memory)."""
    a = max(abs(lat0), abs(lat0 + 1))
    if a <= 50:
        return 1.0
    if a <= 60:
        return 2 / 3
    if a <= 70:
        return 1 / 2
    if a <= 80:
        return 1 / 3
    if a <= 85:
        return 1 / 5
    return 1 / 10


@dataclass(frozen=True)
class Dataset:
    """One open elevation dataset: how its tiles are named, sized and referenced vertically."""

    name: str
    title: str
    base_url: str  # from memory; replaceable
    kind: str  # "cog" (GeoTIFF) or "hgt" (gzip-compressed SRTM HGT)
    rows: int  # rows of a 1 x 1 degree tile
    resolution: str
    vertical_datum: str  # geoid the heights are above
    vertical_epsg: int
    surface_model: bool  # True when roofs and canopy are in the heights
    nodata: float | None

    def tile_key(self, lat0: int, lon0: int) -> str:
        """Short tile name, e.g. N45E007 (south-west corner)."""
        return _hemi(lat0, "N", "S", 2) + _hemi(lon0, "E", "W", 3)

    def tile_path(self, lat0: int, lon0: int) -> str:
        """Path of the tile under the base URL, in the dataset's own layout."""
        if self.kind == "hgt":
            return f"{_hemi(lat0, 'N', 'S', 2)}/{self.tile_key(lat0, lon0)}.hgt.gz"
        code = "10" if self.name == "copernicus-30" else "30"
        stem = f"Copernicus_DSM_COG_{code}_{_hemi(lat0, 'N', 'S', 2)}_00_{_hemi(lon0, 'E', 'W', 3)}_00_DEM"
        return f"{stem}/{stem}.tif"

    def expected_rows(self) -> int:
        """Rows of one tile (``TERRAHOP_TILE_ROWS`` for GeoTIFF datasets when set)."""
        if self.kind == "cog" and os.environ.get(TILE_ROWS_ENV):
            try:
                rows = int(os.environ[TILE_ROWS_ENV])
            except ValueError:
                raise InputError(f"{TILE_ROWS_ENV} must be a whole number of rows, got "
                                 f"{os.environ[TILE_ROWS_ENV]!r}") from None
            if rows < 2:
                raise InputError(f"{TILE_ROWS_ENV} must be at least 2, got {rows}")
            return rows
        return self.rows

    def expected_size(self, lat0: int) -> tuple[int, int]:
        """(width, height) in cells of the tile whose south edge is ``lat0``."""
        rows = self.expected_rows()
        if self.kind == "hgt":
            return rows, rows
        return max(1, round(rows * _copernicus_width_factor(lat0))), rows

    def compound_crs(self) -> str:
        """Horizontal WGS84 plus the dataset's geoid, as an EPSG pair."""
        return f"EPSG:4326+{self.vertical_epsg}"

    def url(self, base: str, lat0: int, lon0: int) -> str:
        """Full URL of a tile under ``base`` (the dataset's own or a mirror's)."""
        return base.rstrip("/") + "/" + self.tile_path(lat0, lon0)


#: Our names of the datasets, lower case.  Sizes, datums and URLs: from memory (see the module docstring).
DATASETS: dict[str, Dataset] = {
    d.name: d
    for d in (
        Dataset("copernicus-30", "Copernicus DEM GLO-30", "https://copernicus-dem-30m.s3.amazonaws.com",
                "cog", 3600, "1 arc-second (about 30 m)", "EGM2008", 3855, True, None),
        Dataset("copernicus-90", "Copernicus DEM GLO-90", "https://copernicus-dem-90m.s3.amazonaws.com",
                "cog", 1200, "3 arc-second (about 90 m)", "EGM2008", 3855, True, None),
        Dataset("srtm-1", "SRTM 1 arc-second (HGT)", "https://s3.amazonaws.com/elevation-tiles-prod/skadi",
                "hgt", 3601, "1 arc-second (about 30 m)", "EGM96", 5773, False, -32768.0),
    )
}


def dataset(name: str) -> Dataset:
    """The dataset called ``name``; InputError naming the known ones otherwise."""
    key = str(name).strip().lower()
    if key not in DATASETS:
        raise InputError(f"unknown terrain source {name!r}; use one of {', '.join(DATASETS)}",
                         parameter="terrain", value_word="SOURCE")
    return DATASETS[key]


def tile_origins(bbox: tuple[float, float, float, float]) -> list[tuple[int, int]]:
    """South-west corners (lat0, lon0) of the 1 x 1 degree tiles a W,S,E,N box touches."""
    w, s, e, n = bbox
    lats = range(math.floor(s), max(math.floor(s) + 1, math.ceil(n)))
    lons = range(math.floor(w), max(math.floor(w) + 1, math.ceil(e)))
    return [(la, lo) for la in lats for lo in lons if -90 <= la < 90 and -180 <= lo < 180]
