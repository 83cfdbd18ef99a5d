"""Writing a coverage result: the multi-band Cloud-Optimised GeoTIFF, the ranked candidate sites, the map (PNG).

Every file is written under a temporary name beside its final name and
renamed when complete, so an existing output is replaced whole or not at all.
An edge module: rasterio, csv, geopandas (GeoPackage), KML through
:mod:`profiler.io.kml`, matplotlib for the picture.
"""

from __future__ import annotations

import csv
import math
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from .engine import BANDS
from .run import CoverageResult

__all__ = ["CAUTION", "check_output_path", "write_raster", "write_candidates", "draw_png", "candidate_rows",
           "RASTER_SUFFIXES", "SITES_SUFFIXES"]

#: Said on the picture and in the raster's metadata (the README's cautions say more).
CAUTION = ("Computed from terrain (and surface) heights only: buildings and trees missing from the rasters, "
           "interference and equipment limits are not included. Check every subscriber with a site visit.")

RASTER_SUFFIXES = (".tif", ".tiff")
SITES_SUFFIXES = (".csv", ".gpkg", ".kml")
_UNITS = {name: unit for name, unit, _ in BANDS}
_TEXT = {name: text for name, _, text in BANDS}


def check_output_path(path: str, flag: str, suffixes: tuple[str, ...], inputs: list[str]) -> Path:
    """InputError unless ``path`` has one of ``suffixes``, its folder exists and is writable, and it is no input."""
    p = Path(path)
    if p.suffix.lower() not in suffixes:
        raise InputError(f"{flag} {path}: the file name must end in {', '.join(suffixes)}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{flag} {path}: the folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"{flag} {path}: the folder {folder} is not writable")
    if p.is_dir():
        raise InputError(f"{flag} {path} is a folder; give a file name")
    for given in inputs:
        if given and os.path.realpath(given) == os.path.realpath(p):
            raise InputError(f"{flag} {path} would overwrite the input {given}; choose another file")
    return p


def _tmp(path: Path) -> Path:
    return path.with_name(f".{path.name}.{os.getpid()}.tmp{path.suffix}")


def write_raster(path: str, result: CoverageResult, tags: dict[str, Any]) -> None:
    """The bands as one Cloud-Optimised GeoTIFF (float32, NaN nodata, band descriptions and units, overviews)."""
    import rasterio
    from rasterio.shutil import copy as rio_copy
    from rasterio.transform import Affine

    plan = result.plan
    grid = plan.grid
    names = list(result.bands)
    final = Path(path)
    work = _tmp(final.with_suffix(".work.tif"))
    tmp = _tmp(final)
    profile = {"driver": "GTiff", "width": grid.width, "height": grid.height, "count": len(names),
               "dtype": "float32", "nodata": float("nan"), "crs": grid.crs, "transform": Affine(*grid.transform),
               "tiled": True, "blockxsize": 256, "blockysize": 256, "compress": "deflate"}
    try:
        with rasterio.open(work, "w", **profile) as dst:
            for i, name in enumerate(names, start=1):
                dst.write(result.bands[name], i)
                dst.set_band_description(i, name)
                dst.update_tags(i, unit=_UNITS[name], meaning=_TEXT[name])
            dst.units = tuple(_UNITS[n] for n in names)
            dst.update_tags(**{k: str(v) for k, v in tags.items()}, caution=CAUTION)
        try:
            rio_copy(work, tmp, driver="COG", compress="DEFLATE", predictor="YES", overview_resampling="nearest")
        except Exception:  # noqa: BLE001 - a GDAL without the COG driver: tiled GeoTIFF with overviews
            with rasterio.open(work, "r+") as dst:
                levels = [f for f in (2, 4, 8, 16, 32) if min(grid.width, grid.height) // f >= 64]
                if levels:
                    dst.build_overviews(levels, rasterio.enums.Resampling.nearest)
            rio_copy(work, tmp, driver="GTiff", tiled=True, copy_src_overviews=True, compress="DEFLATE")
        os.replace(tmp, final)
    except OSError as exc:
        raise InputError(f"cannot write {path}: {exc.strerror or exc}") from None
    except rasterio.errors.RasterioError as exc:
        raise InputError(f"cannot write {path}: {' '.join(str(exc).split())}") from None
    finally:
        for p in (work, tmp):
            try:
                p.unlink()
            except OSError:
                pass


def candidate_rows(result: CoverageResult, names: list[str], lat: np.ndarray, lon: np.ndarray,
                   agl: np.ndarray) -> list[dict[str, Any]]:
    """One row per candidate site, ranked by fade margin (largest first; sites without a figure last)."""
    c = result.candidates
    radius = result.plan.settings.radius_m
    rows = []
    for i, name in enumerate(names):
        d = float(c["distance_m"][i])
        row: dict[str, Any] = {"name": name, "lat": float(lat[i]), "lon": float(lon[i]),
                               "antenna_agl_m": float(agl[i]) if np.isfinite(agl[i])
                               else float(result.plan.settings.rx_agl_m),
                               "distance_km": round(d / 1000.0, 4), "azimuth_deg": round(float(c["azimuth_deg"][i]), 2)}
        for name_b in result.plan.bands:
            v = float(c[name_b][i])
            row[name_b] = None if not math.isfinite(v) else (int(v) if name_b in ("line_of_sight", "step")
                                                              else round(v, 3))
        if d > radius:
            row["note"] = "beyond the coverage radius"
        elif d < 1.0:
            row["note"] = "at the hub"
        elif row["fade_margin_db"] is None:
            row["note"] = "no terrain on the way (outside the rasters or nodata)"
        else:
            row["note"] = ""
        rows.append(row)
    rows.sort(key=lambda r: (r["fade_margin_db"] is None, -(r["fade_margin_db"] or 0.0)))
    for rank, row in enumerate(rows, start=1):
        row["rank"] = rank if row["fade_margin_db"] is not None else None
    return rows


def write_candidates(path: str, rows: list[dict[str, Any]], title: str) -> None:
    """Ranked candidate sites as CSV, GeoPackage (points, EPSG:4326) or KML, by the file's suffix."""
    final = Path(path)
    tmp = _tmp(final)
    keys = ["rank", *[k for k in (rows[0] if rows else {"name": 0}) if k != "rank"]]
    try:
        suffix = final.suffix.lower()
        if suffix == ".csv":
            with open(tmp, "w", newline="", encoding="utf-8") as fh:
                w = csv.DictWriter(fh, fieldnames=keys)
                w.writeheader()
                for r in rows:
                    w.writerow({k: "" if r.get(k) is None else r.get(k) for k in keys})
        elif suffix == ".gpkg":
            import geopandas as gpd
            from shapely.geometry import Point

            frame = gpd.GeoDataFrame([{k: r.get(k) for k in keys} for r in rows],
                                     geometry=[Point(r["lon"], r["lat"]) for r in rows], crs="EPSG:4326")
            frame.to_file(tmp, layer="candidates", driver="GPKG")
        else:
            from ..io.kml import KmlSite, write_kml

            sites = [KmlSite(f"{r['rank'] or '-'}. {r['name']}", r["lon"], r["lat"],
                             {k: r[k] for k in keys if k not in ("name", "lat", "lon") and r.get(k) is not None})
                     for r in rows]
            write_kml(tmp, title, [], sites, None)
        os.replace(tmp, final)
    except OSError as exc:
        raise InputError(f"cannot write {path}: {exc.strerror or exc}") from None
    finally:
        try:
            tmp.unlink()
        except OSError:
            pass


def _nice_length_m(span_m: float) -> float:
    """A round scale-bar length near a fifth of the span (1, 2 or 5 times a power of ten), m."""
    target = span_m / 5.0
    power = 10.0 ** math.floor(math.log10(target))
    return max(f * power for f in (1.0, 2.0, 5.0) if f * power <= target)


def draw_png(path: str, result: CoverageResult, title: str) -> None:
    """The coverage map: fade margin in classes (our palette), hub, legend, scale bar, caution note."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.colors import BoundaryNorm, ListedColormap
    from matplotlib.patches import Patch

    from ..sheets.style import COLOURS, RC_PARAMS

    plan = result.plan
    grid = plan.grid
    margin = result.bands["fade_margin_db"]
    los = result.bands["line_of_sight"]
    # Classes of fade margin, dB (our own breaks): none, under 0, 0-10, 10-20, 20 and more.
    edges = [-1e9, 0.0, 10.0, 20.0, 1e9]
    colours = [COLOURS["bad"], COLOURS["criterion"], COLOURS["fresnel"], COLOURS["good"]]
    labels = ["below 0 dB (no link)", "0 to 10 dB (marginal)", "10 to 20 dB", "20 dB and more"]
    a, _, c, _, e, f = grid.transform
    extent = (c, c + a * grid.width, f + e * grid.height, f)
    from pyproj import CRS

    crs = CRS.from_user_input(grid.crs)
    # Ground metres per grid unit along x at the hub (a geographic grid: degrees of longitude, 1 degree =
    # 111.32 km x cos(latitude) on the equator's radius; enough for a scale bar).
    per_unit = (crs.axis_info[0].unit_conversion_factor if crs.is_projected
                else 111_320.0 * math.cos(math.radians(plan.hub.lat_deg)))
    with plt.rc_context(RC_PARAMS):  # type: ignore[arg-type]
        fig, ax = plt.subplots(figsize=(7.0, 7.6), dpi=90)
        ax.set_facecolor(COLOURS["band"])
        ax.imshow(np.ma.masked_invalid(margin), extent=extent, cmap=ListedColormap(colours),
                  norm=BoundaryNorm(edges, len(colours)), interpolation="nearest")
        blocked = np.where(los == 0, 1.0, np.nan)
        ax.imshow(np.ma.masked_invalid(blocked), extent=extent, cmap=ListedColormap([COLOURS["ink"]]), alpha=0.3,
                  interpolation="nearest")
        hx, hy = _hub_xy(result)
        ax.plot([hx], [hy], marker="^", markersize=11, color=COLOURS["site_a"], markeredgecolor="white",
                linestyle="none")
        ax.annotate(plan.hub.name, (hx, hy), xytext=(6, 6), textcoords="offset points", fontsize=8,
                    color=COLOURS["ink"])
        handles: list[Any] = [Patch(facecolor=col, label=lab) for col, lab in zip(colours, labels)]
        handles.append(Patch(facecolor=COLOURS["ink"], alpha=0.3, label="ray from the hub blocked"))
        handles.append(plt.Line2D([], [], marker="^", color=COLOURS["site_a"], linestyle="none",
                                  label=f"hub ({plan.hub.agl_m:g} m above ground)"))
        ax.legend(handles=handles, loc="upper left", fontsize=7, framealpha=0.9, title="fade margin",
                  title_fontsize=7)
        if per_unit > 0:
            span = extent[1] - extent[0]
            bar = _nice_length_m(span * per_unit)
            x0 = extent[0] + 0.06 * span
            y0 = extent[2] + 0.05 * (extent[3] - extent[2])
            ax.plot([x0, x0 + bar / per_unit], [y0, y0], color=COLOURS["ink"], linewidth=3, solid_capstyle="butt")
            ax.text(x0 + bar / per_unit / 2.0, y0 + 0.022 * (extent[3] - extent[2]),
                    f"{bar / 1000:g} km" if bar >= 1000 else f"{bar:g} m", ha="center", fontsize=8)
        ax.set_xticks([])
        ax.set_yticks([])
        s = plan.settings
        ax.set_title(f"{title}\n{s.radio.freq_ghz:g} GHz, receivers {s.rx_agl_m:g} m above "
                     f"{'the surface' if s.rx_above_surface else 'ground'}, radius {s.radius_m / 1000:g} km, "
                     f"k = {s.k:.3g}, {s.method}", fontsize=9)
        fig.text(0.02, 0.015, "Caution: " + CAUTION, fontsize=6.5, wrap=True, color=COLOURS["muted"])
        fig.subplots_adjust(left=0.03, right=0.97, top=0.92, bottom=0.07)
        final = Path(path)
        tmp = _tmp(final)
        try:
            fig.savefig(tmp, format="png")
            os.replace(tmp, final)
        except OSError as exc:
            raise InputError(f"cannot write {path}: {exc.strerror or exc}") from None
        finally:
            plt.close(fig)
            try:
                tmp.unlink()
            except OSError:
                pass


def _hub_xy(result: CoverageResult) -> tuple[float, float]:
    from pyproj import Transformer

    hub = result.plan.hub
    x, y = Transformer.from_crs("EPSG:4326", result.plan.grid.crs, always_xy=True).transform(hub.lon_deg, hub.lat_deg)
    return float(x), float(y)
