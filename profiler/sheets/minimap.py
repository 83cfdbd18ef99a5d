"""The sheet's small map: hillshade of the elevation rasters around the path.

Only the window of each raster that the map covers is read (decimated on
read when the raster is much finer than the map), then reprojected with
rasterio into a local azimuthal equidistant frame centred on the path, in
metres with true north up at the centre.  No web tiles: works offline.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from ..terrain import raster_read_error
from .style import COLOURS

__all__ = ["MapGrid", "map_frame", "read_map_grid", "elevation_grid", "hillshade", "draw_minimap", "nice_scale_length_m"]


@dataclass(frozen=True)
class MapGrid:
    """Elevation (m, NaN where no data) on a regular grid of the map frame.

    ``extent_m`` is (left, right, bottom, top) in frame metres; ``path_x_m``,
    ``path_y_m`` the path in the same frame; ``frame`` the PROJ string.
    """

    elevation_m: np.ndarray
    extent_m: tuple[float, float, float, float]
    path_x_m: np.ndarray
    path_y_m: np.ndarray
    frame: str
    centre_lat_deg: float
    centre_lon_deg: float

    @property
    def cell_m(self) -> tuple[float, float]:
        left, right, bottom, top = self.extent_m
        h, w = self.elevation_m.shape
        return (right - left) / w, (top - bottom) / h


def map_frame(lat_deg: float, lon_deg: float) -> str:
    """PROJ string of the local azimuthal equidistant frame centred at a point (WGS84, metres)."""
    return f"+proj=aeqd +lat_0={lat_deg:.8f} +lon_0={lon_deg:.8f} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs"


def read_map_grid(
    sources: Sequence[Any],
    path_lat_deg: np.ndarray,
    path_lon_deg: np.ndarray,
    *,
    aspect: float = 1.0,
    max_px: int = 520,
    margin_fraction: float = 0.18,
) -> MapGrid:
    """Elevation around a path, reprojected into the local map frame.

    ``sources`` are :class:`profiler.terrain.RasterSource` (first wins where
    they overlap); ``aspect`` is the map's width / height.  Each raster is
    read only over the window the map covers.
    """
    from pyproj import CRS, Transformer

    lat = np.asarray(path_lat_deg, dtype=float)
    lon = np.asarray(path_lon_deg, dtype=float)
    mid = len(lat) // 2
    frame = map_frame(float(lat[mid]), float(lon[mid]))
    dst_crs = CRS.from_proj4(frame)
    to_frame = Transformer.from_crs("EPSG:4326", dst_crs, always_xy=True)
    px, py = to_frame.transform(lon, lat)
    px, py = np.asarray(px, dtype=float), np.asarray(py, dtype=float)
    (left, right, bottom, top), (width, height) = _map_extent(px, py, aspect, max_px, margin_fraction)
    out = elevation_grid(sources, dst_crs, (left, right, bottom, top), (width, height))
    return MapGrid(
        elevation_m=out,
        extent_m=(left, right, bottom, top),
        path_x_m=px,
        path_y_m=py,
        frame=frame,
        centre_lat_deg=float(lat[mid]),
        centre_lon_deg=float(lon[mid]),
    )


def elevation_grid(sources: Sequence[Any], dst_crs: Any, bounds: tuple[float, float, float, float],
                   size: tuple[int, int]) -> np.ndarray:
    """Heights (m, NaN where none) of the rasters over a north-up grid of ``dst_crs``.

    ``bounds`` is (left, right, bottom, top) in ``dst_crs`` units, ``size``
    (width, height) in pixels; the first source wins where they overlap.
    """
    from rasterio.transform import from_origin

    left, right, bottom, top = bounds
    width, height = size
    dst_transform = from_origin(left, top, (right - left) / width, (top - bottom) / height)
    out = np.full((height, width), np.nan)
    for s in sources:
        part = _reprojected(s, dst_crs, dst_transform, (left, right, bottom, top), (width, height))
        if part is None:
            continue
        fill = np.isnan(out) & ~np.isnan(part)
        out[fill] = part[fill]
    return out


def hillshade(elevation_m: np.ndarray, dx_m: float, dy_m: float) -> np.ndarray:
    """Light (0.45 dark to 1 lit, 1 where no data) of a height grid lit from the north-west.

    matplotlib's LightSource (azimuth 315 degrees, altitude 40 degrees,
    vertical exaggeration 2), lightened so lines drawn over it stay readable.
    """
    from matplotlib.colors import LightSource

    z = elevation_m
    if not np.isfinite(z).any():
        return np.ones(z.shape)
    filled = np.where(np.isfinite(z), z, np.nanmean(z))
    shade = LightSource(azdeg=315, altdeg=40).hillshade(filled, vert_exag=2.0, dx=dx_m, dy=dy_m)
    shade = 0.45 + 0.55 * shade  # light, so the path and labels stay readable in print
    return np.where(np.isfinite(z), shade, 1.0)


def _map_extent(px: np.ndarray, py: np.ndarray, aspect: float, max_px: int,
                margin_fraction: float) -> tuple[tuple[float, float, float, float], tuple[int, int]]:
    """((left, right, bottom, top) in frame metres, (width, height) in pixels) of a map around the path."""
    cx, cy = (px.min() + px.max()) / 2.0, (py.min() + py.max()) / 2.0
    length = float(np.hypot(px[-1] - px[0], py[-1] - py[0]))
    margin = max(margin_fraction * length, 300.0)
    half_w = (px.max() - px.min()) / 2.0 + margin
    half_h = (py.max() - py.min()) / 2.0 + margin
    if half_w / half_h < aspect:
        half_w = half_h * aspect
    else:
        half_h = half_w / aspect
    if aspect >= 1:
        width, height = max_px, max(int(round(max_px / aspect)), 16)
    else:
        width, height = max(int(round(max_px * aspect)), 16), max_px
    return (cx - half_w, cx + half_w, cy - half_h, cy + half_h), (width, height)


def _reprojected(s: Any, dst_crs: Any, dst_transform: Any, bounds: tuple[float, float, float, float],
                 size: tuple[int, int]) -> np.ndarray | None:
    """One raster's heights (m) over the map grid, NaN where it has none; None if it does not reach the map."""
    import rasterio
    from affine import Affine
    from rasterio.errors import WindowError
    from rasterio.warp import Resampling, reproject, transform_bounds
    from rasterio.windows import Window, from_bounds

    left, right, bottom, top = bounds
    width, height = size
    with rasterio.open(s.path) as ds:
        try:
            b = transform_bounds(dst_crs, ds.crs, left, bottom, right, top, densify_pts=21)
            win = from_bounds(*b, transform=ds.transform)
            win = win.round_offsets(op="floor").round_lengths(op="ceil")
            win = Window(win.col_off - 1, win.row_off - 1, win.width + 2, win.height + 2)
            win = win.intersection(Window(0, 0, ds.width, ds.height))
        except WindowError:
            return None  # this raster does not reach the map
        if win.width < 1 or win.height < 1:
            return None
        step = max(1, math.ceil(max(win.width / width, win.height / height) / 1.5))
        shape = (max(1, math.ceil(win.height / step)), max(1, math.ceil(win.width / step)))
        try:
            block = ds.read(1, window=win, out_shape=shape, masked=True, resampling=Resampling.average)
        except Exception as exc:  # noqa: BLE001 - rasterio/GDAL read errors: one line naming the file
            raise raster_read_error(s.path, exc) from None
        src_transform = ds.window_transform(win) @ Affine.scale(win.width / shape[1], win.height / shape[0])
        src = block.astype(np.float64).filled(np.nan) * s.unit_factor_m
        part = np.full((height, width), np.nan)
        reproject(
            src, part, src_transform=src_transform, src_crs=ds.crs, src_nodata=np.nan,
            dst_transform=dst_transform, dst_crs=dst_crs, dst_nodata=np.nan,
            resampling=Resampling.bilinear,
        )
    return part


def nice_scale_length_m(span_m: float) -> float:
    """A round scale-bar length (1, 2 or 5 x 10^n m) near a quarter of ``span_m``."""
    target = max(span_m / 4.0, 1e-9)
    power = 10.0 ** math.floor(math.log10(target))
    for step in (5.0, 2.0, 1.0):
        if step * power <= target:
            return step * power
    return power  # pragma: no cover - the loop always returns


def draw_minimap(ax: Any, grid: MapGrid, *, type_scale: float = 1.0, worst_index: int | None = None,
                 miles: bool = False) -> None:
    """Hillshade, the path, both sites, a north arrow and a scale bar on ``ax``.

    ``worst_index`` (a profile sample) marks the worst point on the path.
    """
    fs = 6.5 * type_scale
    z = grid.elevation_m
    left, right, bottom, top = grid.extent_m
    if np.isfinite(z).any():
        shade = hillshade(z, *grid.cell_m)
        ax.imshow(shade, extent=grid.extent_m, origin="upper", cmap="gray", vmin=0, vmax=1,
                  interpolation="bilinear", zorder=0)
    ax.plot(grid.path_x_m, grid.path_y_m, color="white", lw=3.2 * type_scale, solid_capstyle="round", zorder=2)
    ax.plot(grid.path_x_m, grid.path_y_m, color=COLOURS["line"], lw=1.6 * type_scale, solid_capstyle="round",
            zorder=3)
    span_x, span_y = right - left, top - bottom
    if worst_index is not None and 0 <= worst_index < len(grid.path_x_m):
        ax.plot([grid.path_x_m[worst_index]], [grid.path_y_m[worst_index]], marker="X", ms=7 * type_scale,
                mfc=COLOURS["worst_point"], mec="white", mew=0.8 * type_scale, zorder=4)
    for i, tag, colour in ((0, "a", COLOURS["site_a"]), (-1, "b", COLOURS["site_b"])):
        x, y = grid.path_x_m[i], grid.path_y_m[i]
        ax.plot([x], [y], marker="o", ms=6.5 * type_scale, mfc=colour, mec="white", mew=1.0 * type_scale, zorder=4)
        # Put the letter on the far side of the site, away from the path.
        other = grid.path_x_m[-1 - i if i == 0 else 0], grid.path_y_m[-1 - i if i == 0 else 0]
        vx, vy = x - other[0], y - other[1]
        norm = math.hypot(vx, vy) or 1.0
        ax.annotate(tag, xy=(x, y), xytext=(9 * vx / norm, 9 * vy / norm), textcoords="offset points",
                    ha="center", va="center", fontsize=fs * 1.25, fontweight="bold", color=colour, zorder=5,
                    bbox=dict(boxstyle="circle,pad=0.12", fc="white", ec=colour, lw=0.7 * type_scale))
    arrow_at, bar_at = _free_corners(grid)
    # North arrow (true north is up at the centre of an azimuthal frame).
    ax_x, ax_y = arrow_at
    ax.annotate("", xy=(ax_x, ax_y + 0.075), xytext=(ax_x, ax_y - 0.075), xycoords="axes fraction",
                arrowprops=dict(arrowstyle="-|>,head_width=0.35,head_length=0.6", color=COLOURS["ink"],
                                lw=1.2 * type_scale))
    ax.text(ax_x, ax_y - 0.10, "N", transform=ax.transAxes, ha="center", va="top", fontsize=fs * 1.2,
            fontweight="bold", color=COLOURS["ink"],
            bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.8))
    # Scale bar.
    if miles:  # a round number of miles, or of feet below half a mile
        mile_m, foot_m = 1609.344, 0.3048
        if span_x / 4.0 >= 0.5 * mile_m:
            bar_units = nice_scale_length_m(span_x / mile_m)
            bar, label = bar_units * mile_m, f"{bar_units:g} mi"
        else:
            bar_units = nice_scale_length_m(span_x / foot_m)
            bar, label = bar_units * foot_m, f"{bar_units:g} ft"
    else:
        bar = nice_scale_length_m(span_x)
        label = f"{bar / 1000:g} km" if bar >= 1000 else f"{bar:g} m"
    x0 = left + (bar_at[0] - 0.125) * span_x
    y0 = bottom + (bar_at[1] - 0.03) * span_y
    h = 0.018 * span_y
    half = bar / 2.0
    ax.add_patch(_rect(x0 - 0.02 * span_x, y0 - 0.035 * span_y, bar + 0.04 * span_x, 0.12 * span_y,
                       fc="white", ec="none", alpha=0.85))
    ax.add_patch(_rect(x0, y0, half, h, fc=COLOURS["ink"], ec=COLOURS["ink"], lw=0.6 * type_scale))
    ax.add_patch(_rect(x0 + half, y0, half, h, fc="white", ec=COLOURS["ink"], lw=0.6 * type_scale))
    ax.text(x0 + bar / 2, y0 + h + 0.012 * span_y, label, ha="center", va="bottom", fontsize=fs, color=COLOURS["ink"],
            zorder=7)
    ax.set_xlim(left, right)
    ax.set_ylim(bottom, top)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xticks([])
    ax.set_yticks([])
    for spine in ax.spines.values():
        spine.set_linewidth(0.7)


def _free_corners(grid: MapGrid) -> tuple[tuple[float, float], tuple[float, float]]:
    """Axes-fraction centres for the north arrow and the scale bar, away from the path.

    The arrow prefers a top corner and the bar a bottom one, unless the path
    runs close by (common practice of map layout, our own rule).
    """
    left, right, bottom, top = grid.extent_m
    fx = (grid.path_x_m - left) / (right - left)
    fy = (grid.path_y_m - bottom) / (top - bottom)

    def room(cx: float, cy: float) -> float:
        return float(np.min(np.hypot(fx - cx, fy - cy)))

    arrows = [(0.92, 0.86), (0.08, 0.86), (0.92, 0.20), (0.08, 0.20)]
    arrow = max(arrows, key=lambda p: room(*p) + (0.15 if p[1] > 0.5 else 0.0))
    bars = [(0.17, 0.08), (0.83, 0.08), (0.17, 0.92), (0.83, 0.92)]
    bars = [b for b in bars if abs(b[0] - arrow[0]) > 0.5 or abs(b[1] - arrow[1]) > 0.5]
    bar = max(bars, key=lambda p: room(*p) + (0.15 if p[1] < 0.5 else 0.0))
    return arrow, bar


def _rect(x: float, y: float, w: float, h: float, **kw: Any) -> Any:
    from matplotlib.patches import Rectangle

    return Rectangle((x, y), w, h, zorder=6, **kw)
