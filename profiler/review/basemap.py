"""The review page's relief: a hillshade of the terrain rasters in Web Mercator, as a PNG data URI.

Web Mercator (EPSG:3857) so that the image lines up with XYZ basemap tiles
(``--tiles``); the heights are read and shaded by the sheets' own minimap
code (:func:`profiler.sheets.minimap.elevation_grid`, :func:`hillshade`).
The PNG (grey plus alpha, transparent where there is no data) is written
with zlib, after the PNG specification (ISO/IEC 15948:2004, W3C PNG 2nd
edition), so no imaging library is needed.
"""

from __future__ import annotations

import base64
import math
import struct
import zlib
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

__all__ = ["Relief", "relief_image", "png_grey_alpha", "mercator_xy", "MERCATOR_HALF_M"]

#: Half the width of the Web Mercator world, metres (pi x 6378137 m, EPSG:3857).
MERCATOR_HALF_M = math.pi * 6378137.0


@dataclass(frozen=True)
class Relief:
    """A hillshade image and where it lies: ``bounds`` (west, south, east, north) in world units 0..1.

    World units: Web Mercator x and y scaled so the world is the unit square,
    y growing southwards (the XYZ tile convention).
    """

    data_uri: str
    bounds: tuple[float, float, float, float]
    size_px: tuple[int, int]


def mercator_xy(lon_deg: Any, lat_deg: Any) -> tuple[np.ndarray, np.ndarray]:
    """World units (0..1, y southwards) of WGS84 positions, spherical Web Mercator (EPSG:3857 / EPSG:1024)."""
    lon = np.asarray(lon_deg, dtype=float)
    lat = np.clip(np.asarray(lat_deg, dtype=float), -85.05112878, 85.05112878)
    x = (lon + 180.0) / 360.0
    s = np.sin(np.radians(lat))
    y = 0.5 - np.log((1.0 + s) / (1.0 - s)) / (4.0 * math.pi)
    return x, y


def png_grey_alpha(grey: np.ndarray, alpha: np.ndarray) -> bytes:
    """An 8-bit grey + alpha PNG (colour type 4) of two uint8 arrays of one shape."""
    h, w = grey.shape
    pixels = np.dstack([grey, alpha]).astype(np.uint8).reshape(h, w * 2)
    raw = np.concatenate([np.zeros((h, 1), np.uint8), pixels], axis=1).tobytes()  # filter 0 per row

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)

    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", w, h, 8, 4, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b""))


def relief_image(sources: Sequence[Any], lon_deg: np.ndarray, lat_deg: np.ndarray, *,
                 max_px: int = 1400, margin_fraction: float = 0.08) -> Relief | None:
    """Hillshade of ``sources`` (RasterSource) around the given positions; None if the rasters hold nothing there."""
    from pyproj import CRS

    from ..sheets.minimap import elevation_grid, hillshade

    x, y = mercator_xy(lon_deg, lat_deg)
    if x.size == 0:
        return None
    x0, x1, y0, y1 = float(x.min()), float(x.max()), float(y.min()), float(y.max())
    span = max(x1 - x0, y1 - y0, 1e-6)
    pad = margin_fraction * span + 2e-6
    x0, x1, y0, y1 = max(x0 - pad, 0.0), min(x1 + pad, 1.0), max(y0 - pad, 0.0), min(y1 + pad, 1.0)
    aspect = (x1 - x0) / (y1 - y0)
    width = max_px if aspect >= 1 else max(int(round(max_px * aspect)), 16)
    height = max(int(round(max_px / aspect)), 16) if aspect >= 1 else max_px
    to_m = 2.0 * MERCATOR_HALF_M
    left, right = x0 * to_m - MERCATOR_HALF_M, x1 * to_m - MERCATOR_HALF_M
    top, bottom = MERCATOR_HALF_M - y0 * to_m, MERCATOR_HALF_M - y1 * to_m
    z = elevation_grid(sources, CRS.from_epsg(3857), (left, right, bottom, top), (width, height))
    if not np.isfinite(z).any():
        return None
    # Mercator metres are 1/cos(lat) ground metres: shade with ground cell sizes.
    lat_mid = math.radians(float(np.mean(lat_deg)))
    dx = (right - left) / width * math.cos(lat_mid)
    dy = (top - bottom) / height * math.cos(lat_mid)
    shade = hillshade(z, dx, dy)
    # Stretch the light between its 2nd and 98th percentiles to 0.5-1: gentle relief stays visible
    # on a screen, and lines drawn over it stay readable (our own choice of range).
    have = np.isfinite(z)
    lo, hi = np.percentile(shade[have], [2, 98])
    if hi - lo > 1e-6:
        shade = 0.5 + 0.5 * np.clip((shade - lo) / (hi - lo), 0.0, 1.0)
    grey = np.clip(np.round(shade * 255.0), 0, 255).astype(np.uint8)
    alpha = np.where(np.isfinite(z), 255, 0).astype(np.uint8)
    png = png_grey_alpha(grey, alpha)
    return Relief("data:image/png;base64," + base64.b64encode(png).decode("ascii"), (x0, y0, x1, y1),
                  (width, height))
