"""The tiles an area needs: a box (or sites plus a margin) -> tiles in the cache -> one VRT."""

from __future__ import annotations

import hashlib
import math
import os
import urllib.parse
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterable

from ..errors import InputError, TerrahopWarning
from .cache import cache_root, check_writable, dataset_folder
from .datasets import dataset, tile_origins
from .fetch import TerrainFetch, fetch_tiles
from .vrt import write_vrt

__all__ = ["TerrainRequest", "ensure_bbox", "ensure_area", "bbox_around", "URL_ENV", "DEFAULT_MARGIN_KM",
           "SeaTileWarning"]

#: Environment variable replacing a dataset's base URL (tile names keep the dataset's layout).
URL_ENV = "TERRAHOP_TERRAIN_URL"
#: Margin around the sites, km (paths bulge little beyond the box of their ends).
DEFAULT_MARGIN_KM = 5.0
#: Metres per degree of latitude, mean (common practice; the box is padded, not measured).
_M_PER_DEG = 111_320.0


class SeaTileWarning(TerrahopWarning):
    """A tile the source does not have, read as 0 m on the dataset's geoid."""


@dataclass(frozen=True)
class TerrainRequest:
    """Which dataset to use, from which base URL (None: ``TERRAHOP_TERRAIN_URL``, else the dataset's own), offline or not."""

    source: str
    url: str | None = None
    offline: bool = False

    def base_url(self) -> str:
        """The base URL in force: the request's, ``TERRAHOP_TERRAIN_URL``, or the dataset's own.

        A plain path of an existing folder is taken as a ``file://`` URL.
        """
        given = self.url or os.environ.get(URL_ENV)
        if not given:
            return dataset(self.source).base_url
        where = "--terrain-url" if self.url else URL_ENV
        scheme = given.split("://", 1)[0].lower() if "://" in given else ""
        if not scheme:
            if os.path.isdir(given):
                return Path(given).resolve().as_uri()
            raise InputError(f"{where} {given!r} is neither a URL (http://, https://, file://) nor an existing folder")
        try:
            urllib.parse.urlsplit(given)
        except ValueError as exc:
            raise InputError(f"{where} {given!r} is not a URL ({exc})") from None
        if scheme not in ("http", "https", "file", "ftp"):
            raise InputError(f"{where} {given!r}: terrahop fetches over http, https, ftp or file, not {scheme}")
        return given


def bbox_around(lats: Iterable[float], lons: Iterable[float], margin_km: float) -> tuple[float, float, float, float]:
    """W,S,E,N box of the points plus ``margin_km`` on every side, degrees."""
    lats, lons = [float(v) for v in lats], [float(v) for v in lons]
    if not lats:
        raise InputError("no sites to fetch terrain around")
    if not (math.isfinite(margin_km) and 0 <= margin_km <= 500):
        raise InputError(f"{{parameter}} must be 0 to 500 km, got {margin_km:g}", parameter="margin_km",
                         value_word="KM")
    s, n = min(lats), max(lats)
    dlat = margin_km * 1000 / _M_PER_DEG
    widest = min(89.0, max(abs(s), abs(n)) + dlat)
    dlon = min(180.0, margin_km * 1000 / (_M_PER_DEG * math.cos(math.radians(widest))))
    return (max(-180.0, min(lons) - dlon), max(-90.0, s - dlat), min(180.0, max(lons) + dlon), min(90.0, n + dlat))


def ensure_bbox(request: TerrainRequest, bbox: tuple[float, float, float, float], *, vrt: str | None = None,
                progress: Callable[[int], None] | None = None) -> TerrainFetch:
    """Tiles of ``bbox`` (W,S,E,N degrees) in the cache (fetched unless offline) and a VRT of them."""
    d = dataset(request.source)
    w, s, e, n = bbox
    if not (-180 <= w < e <= 180 and -90 <= s < n <= 90):
        raise InputError(f"{{parameter}}: the box must have W < E and S < N within -180..180 and -90..90, "
                         f"got {w:g},{s:g},{e:g},{n:g}",
                         parameter="bbox", value_word="W,S,E,N")
    origins = tile_origins(bbox)
    folder = dataset_folder(cache_root(), d.name)
    if not request.offline:
        check_writable(folder)
    base = request.base_url()
    tiles = fetch_tiles(folder, d, base, origins, offline=request.offline, progress=progress)
    notes = []
    for t in tiles:
        if t.path is None:
            note = (f"{d.name} tile {t.key} does not exist at the source (open sea): its heights are read as "
                    f"0 m above {d.vertical_datum}")
            notes.append(note)
            warnings.warn(note, SeaTileWarning, stacklevel=2)
    if vrt is None:
        digest = hashlib.sha256(",".join(t.key for t in tiles).encode()).hexdigest()[:12]
        vrt_path = folder / "areas" / f"{d.name}-{digest}.vrt"
    else:
        vrt_path = Path(vrt)
    try:
        write_vrt(vrt_path, folder, d, [(la, lo, t) for (la, lo), t in zip(origins, tiles)])
    except OSError as exc:
        from ..errors import DataFileError

        raise DataFileError(f"cannot write the VRT {vrt_path} ({exc.strerror or exc})") from None
    return TerrainFetch(d, base, tuple(tiles), str(vrt_path), tuple(notes))


def ensure_area(request: TerrainRequest, lats: Iterable[float], lons: Iterable[float],
                margin_km: float = DEFAULT_MARGIN_KM, **kwargs) -> TerrainFetch:
    """Tiles around the sites (their box plus ``margin_km``) and a VRT of them (see :func:`ensure_bbox`)."""
    return ensure_bbox(request, bbox_around(lats, lons, margin_km), **kwargs)
