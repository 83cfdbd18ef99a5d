"""Write screening results: a line layer of pairs and a point layer of sites.

GeoPackage (.gpkg: layers ``links`` and ``sites`` in one file), GeoJSON
(.geojson/.json) or CSV (.csv), chosen by the output's extension; for
GeoJSON and CSV the sites go to ``<stem>-sites<ext>`` beside it.  Rows are
ranked by fade margin (best first, pairs that could not be profiled last)
and written in batches, so memory stays bounded.  Each file is written under
a temporary name in the staging folder and renamed into place when complete.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = ["write_outputs", "OUTPUT_SUFFIXES", "LINK_COLUMNS", "SITE_COLUMNS", "rank_order"]

OUTPUT_SUFFIXES = {".gpkg": "GPKG", ".geojson": "GeoJSON", ".json": "GeoJSON", ".csv": "CSV"}

#: Rows per write batch.
WRITE_BATCH = 50_000

#: Columns of the line layer, in order (site extras follow as a_<col>, b_<col>).
LINK_COLUMNS = (
    "rank", "site_a", "site_b", "verdict", "fade_margin_db", "distance_km",
    "azimuth_a_to_b_deg", "azimuth_b_to_a_deg", "lat_a", "lon_a", "lat_b", "lon_b",
    "ground_a_m", "ground_b_m", "agl_a_m", "agl_b_m", "antenna_a_amsl_m", "antenna_b_amsl_m",
    "worst_f1_fraction", "worst_clearance_m", "worst_point_km", "line_of_sight",
    "wc_worst_f1_fraction", "wc_worst_clearance_m", "wc_worst_point_km", "wc_line_of_sight",
    "meets_criterion", "free_space_db", "diffraction_db", "gases_db", "total_loss_db",
    "eirp_dbm", "rx_level_dbm", "noise_floor_dbm", "snr_db",
    "wc_diffraction_db", "wc_total_loss_db", "wc_rx_level_dbm", "wc_snr_db", "wc_fade_margin_db",
    "availability_pct", "meets_availability", "rain_outage_min_per_year", "multipath_min_per_year",
    "multipath_worst_month_min", "availability_note",
    "method", "k", "k_worst", "samples", "spacing_m", "mast_raise_m", "problem",
)
#: Columns of the point layer, in order (extra site columns follow).
SITE_COLUMNS = (
    "name", "lat", "lon", "antenna_agl_m", "pairs", "viable_links", "marginal_links",
    "blocked_links", "error_links", "best_fade_margin_db", "best_partner",
)
_BOOL = {"line_of_sight", "wc_line_of_sight", "meets_criterion"}


def rank_order(cols: dict[str, np.ndarray]) -> np.ndarray:
    """Row order by fade margin, best first; ties and unprofiled pairs by pair index."""
    fade = cols["fade_margin_db"]
    key = np.where(np.isfinite(fade) & (cols["status"] == 0), -fade, np.inf)
    return np.lexsort((cols["pair"], key))


def _site_stats(n_sites: int, cols: dict, codes: np.ndarray, names: np.ndarray) -> dict[str, np.ndarray]:
    a, b = cols["a"], cols["b"]
    stats: dict[str, np.ndarray] = {"pairs": np.bincount(a, minlength=n_sites) + np.bincount(b, minlength=n_sites)}
    for code, label in ((0, "viable_links"), (1, "marginal_links"), (2, "blocked_links"), (3, "error_links")):
        m = codes == code
        stats[label] = np.bincount(a[m], minlength=n_sites) + np.bincount(b[m], minlength=n_sites)
    fade = np.where(codes == 3, -np.inf, cols["fade_margin_db"])
    fade = np.where(np.isnan(fade), -np.inf, fade)
    best = np.full(n_sites, -np.inf)
    partner = np.full(n_sites, -1, dtype=np.int64)
    for ends, other in ((a, b), (b, a)):
        order = np.argsort(fade, kind="stable")  # ascending: the last write per site is its best
        best_here = np.full(n_sites, -np.inf)
        partner_here = np.full(n_sites, -1, dtype=np.int64)
        best_here[ends[order]] = fade[order]
        partner_here[ends[order]] = other[order]
        better = best_here > best
        best = np.where(better, best_here, best)
        partner = np.where(better, partner_here, partner)
    stats["best_fade_margin_db"] = np.where(np.isfinite(best), best, np.nan)
    stats["best_partner"] = np.where(partner >= 0, names[np.maximum(partner, 0)], "")
    return stats


def _link_frame(cols: dict, codes: np.ndarray, problems: dict, sites, settings, verdict_names):
    """One batch of rows (columns already in rank order) as a DataFrame of the link layer."""
    import pandas as pd

    a, b = cols["a"], cols["b"]
    n = a.size
    data: dict[str, Any] = {}
    for name in LINK_COLUMNS:
        if name in cols:
            v = cols[name]
            data[name] = v.astype(bool) if name in _BOOL else v
    data.update(
        site_a=sites.names[a], site_b=sites.names[b],
        verdict=np.asarray(verdict_names, dtype=object)[codes],
        lat_a=sites.lat_deg[a], lon_a=sites.lon_deg[a], lat_b=sites.lat_deg[b], lon_b=sites.lon_deg[b],
        agl_a_m=sites.antenna_agl_m[a], agl_b_m=sites.antenna_agl_m[b],
        method=np.full(n, settings.diffraction_method, dtype=object),
        k=np.full(n, settings.k), k_worst=np.full(n, settings.k_worst),
        problem=np.array([problems.get(int(p), "") for p in cols["pair"]], dtype=object),
        **_availability_data(cols),
    )
    frame = pd.DataFrame({name: data[name] for name in LINK_COLUMNS if name in data})
    if sites.gain_dbi is not None:
        frame["gain_a_dbi"] = sites.gain_dbi[a]
        frame["gain_b_dbi"] = sites.gain_dbi[b]
    if sites.max_mast_m is not None:
        raise_m = frame["mast_raise_m"].to_numpy()
        frame["fixable_with_masts"] = (
            np.isfinite(raise_m)
            & (sites.antenna_agl_m[a] + raise_m <= sites.max_mast_m[a])
            & (sites.antenna_agl_m[b] + raise_m <= sites.max_mast_m[b])
        )
    for col in sites.extra.columns:
        values = sites.extra[col].to_numpy()
        frame[f"a_{col}"] = values[a]
        frame[f"b_{col}"] = values[b]
    return frame


def _availability_data(cols: dict) -> dict[str, np.ndarray]:
    """Target verdict (empty where not estimated) and the availability note of each row."""
    if "availability_status" not in cols:
        return {}
    from ..availability import availability_note

    meets = cols["meets_availability"]
    verdict = np.where(meets == 2, None, meets == 1).astype(object)
    keys = np.stack([cols["availability_status"], cols["rain_range"], cols["multipath_status"]], axis=1)
    unique, inverse = np.unique(keys, axis=0, return_inverse=True)
    texts = np.array([availability_note(*map(int, k)) for k in unique], dtype=object)
    return {"meets_availability": verdict, "availability_note": texts[np.asarray(inverse).reshape(-1)]}


def _lines(frame) -> Any:
    import shapely

    coords = np.stack(
        [np.column_stack([frame["lon_a"], frame["lat_a"]]), np.column_stack([frame["lon_b"], frame["lat_b"]])],
        axis=1,
    )
    return shapely.linestrings(coords)


def write_outputs(
    out: str | os.PathLike, staging: Path, sites, keys: dict, codes: np.ndarray, ranked, problems: dict,
    settings,
) -> list[str]:
    """Write the ranked links and the sites; return the paths written.

    ``keys`` holds the columns pair, a, b and fade_margin_db of every row in
    pair order, ``codes`` their verdict codes; ``ranked(start, stop)`` returns
    all columns of rows ``start:stop`` in rank order (:func:`rank_order`), so
    only one batch of rows is in memory at a time.
    """
    import pyogrio

    out = Path(out)
    suffix = out.suffix.lower()
    check_output_path(out)
    driver = OUTPUT_SUFFIXES[suffix]
    # The file is private until renamed into place: no need for SQLite's crash journal.
    saved = {k: pyogrio.get_gdal_config_option(k) for k in _FAST_SQLITE}
    pyogrio.set_gdal_config_options(_FAST_SQLITE)
    try:
        return _write(out, suffix, driver, staging, sites, keys, codes, ranked, problems, settings)
    finally:
        pyogrio.set_gdal_config_options(saved)


def check_output_path(out: str | os.PathLike) -> None:
    """Raise InputError unless ``out`` has a known extension and a folder that exists."""
    out = Path(out)
    if out.suffix.lower() not in OUTPUT_SUFFIXES:
        raise InputError(f"output {out}: unknown extension {out.suffix!r}; use .gpkg, .geojson or .csv")
    if not out.parent.exists():
        raise InputError(f"output {out}: the folder {out.parent} does not exist")


_FAST_SQLITE = {"OGR_SQLITE_SYNCHRONOUS": "OFF", "OGR_SQLITE_JOURNAL": "OFF"}

try:  # pyarrow lets GDAL write whole batches at once (about twice as fast)
    import pyarrow  # noqa: F401

    _HAVE_ARROW = True
except ImportError:  # pragma: no cover - pyarrow is a dependency; tolerate its absence
    _HAVE_ARROW = False


def _write(out, suffix, driver, staging, sites, keys, codes, ranked, problems, settings) -> list[str]:
    import geopandas as gpd
    import pandas as pd
    import pyogrio

    from ..screening import VERDICTS

    verdict_names = [VERDICTS[k] for k in sorted(VERDICTS)]
    order = rank_order(keys)
    ranked_codes = codes[order]
    n_rows = order.size
    del order
    tmp_links = staging / f"links.tmp{suffix}"
    sites_out = out if driver == "GPKG" else out.with_name(f"{out.stem}-sites{out.suffix}")
    tmp_sites = tmp_links if driver == "GPKG" else staging / f"sites.tmp{suffix}"
    for p in {tmp_links, tmp_sites}:
        if p.exists():
            p.unlink()
    first = True
    for start in range(0, max(n_rows, 1), WRITE_BATCH):
        stop = min(start + WRITE_BATCH, n_rows)
        frame = _link_frame(ranked(start, stop), ranked_codes[start:stop], problems, sites, settings,
                            verdict_names)
        frame.insert(0, "rank", np.arange(start + 1, stop + 1))
        if driver == "CSV":
            frame.to_csv(tmp_links, mode="w" if first else "a", header=first, index=False)
        else:
            gdf = gpd.GeoDataFrame(frame, geometry=_lines(frame), crs="EPSG:4326")
            pyogrio.write_dataframe(gdf, tmp_links, layer="links", driver=driver, append=not first,
                                    use_arrow=_HAVE_ARROW)
        first = False
        del frame
    stats = _site_stats(len(sites), keys, codes, sites.names)
    site_frame = pd.DataFrame({
        "name": sites.names, "lat": sites.lat_deg, "lon": sites.lon_deg,
        "antenna_agl_m": sites.antenna_agl_m, **stats,
    })
    if sites.gain_dbi is not None:
        site_frame["gain_dbi"] = sites.gain_dbi
    if sites.max_mast_m is not None:
        site_frame["max_mast_m"] = sites.max_mast_m
    for col in sites.extra.columns:
        if col not in site_frame:
            site_frame[col] = sites.extra[col].to_numpy()
    if driver == "CSV":
        site_frame.to_csv(tmp_sites, index=False)
    else:
        import shapely

        gdf = gpd.GeoDataFrame(site_frame, geometry=shapely.points(sites.lon_deg, sites.lat_deg), crs="EPSG:4326")
        pyogrio.write_dataframe(gdf, tmp_sites, layer="sites", driver=driver, append=driver == "GPKG",
                                use_arrow=_HAVE_ARROW)
    os.replace(tmp_links, out)
    written = [str(out)]
    if driver != "GPKG":
        os.replace(tmp_sites, sites_out)
        written.append(str(sites_out))
    return written
