"""Write screening results: a line layer of pairs and a point layer of sites.

GeoPackage (.gpkg: layers ``links`` and ``sites`` in one file), GeoJSON
(.geojson/.json) or CSV (.csv), chosen by the output's extension; for
GeoJSON and CSV the sites go to ``<stem>-sites<ext>`` beside it.  Rows are
ranked by fade margin (best first, pairs that could not be profiled last)
and written in batches, so memory stays bounded.  Each file is written under
a temporary name in the staging folder; when both are complete the renames
are recorded and done (:func:`profiler.io.stage.finish_renames`), so the
result and its ``-sites`` file are replaced together or not at all.
"""

from __future__ import annotations

import importlib.util
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..availability import availability_note
from ..errors import InputError
from .columns import (CODED_COLUMNS, FLAG_COLUMNS, KEPT_IN_ERROR_ROWS, LINK_COLUMNS, RADIO_COLUMNS, SITE_COLUMNS,
                      VERDICTS, PairStatus, Verdict)
from .stage import crash_point, finish_renames, lock_path, staging_folder

__all__ = ["write_outputs", "output_paths", "check_output_path", "check_outputs_spare_inputs", "OUTPUT_SUFFIXES", "LINK_COLUMNS", "SITE_COLUMNS", "rank_order"]

OUTPUT_SUFFIXES = {".gpkg": "GPKG", ".geojson": "GeoJSON", ".json": "GeoJSON", ".csv": "CSV"}

#: Rows per write batch.
WRITE_BATCH = 50_000


def rank_order(cols: dict[str, np.ndarray]) -> np.ndarray:
    """Row order by fade margin, best first; ties and unprofiled pairs by pair index."""
    fade = cols["fade_margin_db"]
    key = np.where(np.isfinite(fade) & (cols["status"] == PairStatus.PROFILED), -fade, np.inf)
    return np.lexsort((cols["pair"], key))


def _site_stats(n_sites: int, cols: dict, codes: np.ndarray, names: np.ndarray) -> dict[str, np.ndarray]:
    a, b = cols["a"], cols["b"]
    stats: dict[str, np.ndarray] = {"pairs": np.bincount(a, minlength=n_sites) + np.bincount(b, minlength=n_sites)}
    for verdict in Verdict:
        m = codes == verdict.code
        stats[verdict.column] = np.bincount(a[m], minlength=n_sites) + np.bincount(b[m], minlength=n_sites)
    fade = np.where(codes == Verdict.ERROR.code, -np.inf, cols["fade_margin_db"])
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


def _link_frame(cols: dict, codes: np.ndarray, problems: dict, sites, settings, verdict_names,
                radio_columns: bool = False):
    """One batch of rows (columns already in rank order) as a DataFrame of the link layer.

    ``radio_columns``: the run used a radio profile or an EIRP limit (else those columns are left out).
    """
    import pandas as pd

    a, b = cols["a"], cols["b"]
    n = a.size
    data: dict[str, Any] = {}
    failed = cols["status"] != PairStatus.PROFILED  # error rows: flags are unknown (NULL), not False
    for name in LINK_COLUMNS:
        if name in cols:
            v = cols[name]
            data[name] = _flags(v, failed) if name in FLAG_COLUMNS else v
    data.update(
        site_a=sites.names[a], site_b=sites.names[b],
        verdict=np.asarray(verdict_names, dtype=object)[codes],
        lat_a=sites.lat_deg[a], lon_a=sites.lon_deg[a], lat_b=sites.lat_deg[b], lon_b=sites.lon_deg[b],
        method=np.full(n, settings.diffraction_method, dtype=object),
        k=np.full(n, settings.k), k_worst=np.full(n, settings.k_worst),
        problem=np.array([problems.get(int(p), "") for p in cols["pair"]], dtype=object),
        **_availability_data(cols, failed),
    )
    if radio_columns:
        data.update(_radio_data(cols, failed))
    for name, labels in CODED_COLUMNS.items():  # codes as words; none in rows that could not be profiled
        if name in data:
            words = np.asarray(labels, dtype=object)[data[name]]
            data[name] = words if name in KEPT_IN_ERROR_ROWS else np.where(failed, None, words)
    frame = pd.DataFrame({name: data[name] for name in LINK_COLUMNS if name in data
                          and (radio_columns or name not in RADIO_COLUMNS)})
    if sites.gain_dbi is not None:
        frame["gain_a_dbi"] = sites.gain_dbi[a]
        frame["gain_b_dbi"] = sites.gain_dbi[b]
    if sites.max_mast_m is not None:
        raise_m = frame["mast_raise_m"].to_numpy()
        with np.errstate(invalid="ignore"):
            fixable = (
                np.isfinite(raise_m)
                & (sites.antenna_agl_m[a] + raise_m <= sites.max_mast_m[a])
                & (sites.antenna_agl_m[b] + raise_m <= sites.max_mast_m[b])
            )
        frame["fixable_with_masts"] = _flags(fixable, failed)
    for col in sites.extra.columns:
        values = sites.extra[col].to_numpy()
        frame[f"a_{col}"] = values[a]
        frame[f"b_{col}"] = values[b]
    return frame


def _radio_data(cols: dict, failed: np.ndarray) -> dict[str, Any]:
    """best_step as an integer column, NULL where no step was chosen or the pair was not profiled."""
    import pandas as pd

    if "best_step" not in cols:
        return {}
    step = cols["best_step"]
    return {"best_step": pd.array(np.where((step <= 0) | failed, None, step), dtype="Int16")}  # type: ignore[call-overload]


def _flags(values: np.ndarray, failed: np.ndarray):
    """A yes/no column with NULL in the rows that could not be profiled."""
    import pandas as pd

    # numpy stubs reject None as the scalar of np.where; at run time it gives an object array with NULLs
    return pd.array(np.where(failed, None, values.astype(bool)), dtype="boolean")  # type: ignore[call-overload]


def _availability_data(cols: dict, failed: np.ndarray) -> dict[str, Any]:
    """Target verdict (NULL where not estimated or not profiled) and the availability note of each row."""
    if "availability_status" not in cols:
        return {}
    import pandas as pd

    meets = cols["meets_availability"]
    verdict = pd.array(np.where((meets == 2) | failed, None, meets == 1), dtype="boolean")
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
    out: str | os.PathLike, stage, sites, keys: dict, codes: np.ndarray, ranked, problems: dict,
    settings, radio_columns: bool = False,
) -> list[str]:
    """Write the ranked links and the sites; return the paths written.

    ``keys`` holds the columns pair, a, b and fade_margin_db of every row in
    pair order, ``codes`` their verdict codes; ``ranked(start, stop)`` returns
    all columns of rows ``start:stop`` in rank order (:func:`rank_order`), so
    only one batch of rows is in memory at a time.  ``stage`` is the run's
    :class:`profiler.io.stage.Stage`: the files are written in its folder,
    then renamed into place together.
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
        return _write(out, suffix, driver, stage, sites, keys, codes, ranked, problems, settings, radio_columns)
    finally:
        pyogrio.set_gdal_config_options(saved)


def check_output_path(out: str | os.PathLike) -> None:
    """Raise InputError unless ``out`` has a known extension and a folder that exists."""
    out = Path(out)
    if out.suffix.lower() not in OUTPUT_SUFFIXES:
        raise InputError(f"output {out}: unknown extension {out.suffix!r}; use .gpkg, .geojson or .csv")
    if not out.parent.exists():
        raise InputError(f"output {out}: the folder {out.parent} does not exist")


def output_paths(out: str | os.PathLike) -> list[Path]:
    """The files a run writing ``out`` leaves: the result and, for CSV and GeoJSON, its sites file."""
    out = Path(out)
    if OUTPUT_SUFFIXES.get(out.suffix.lower()) == "GPKG":
        return [out]
    return [out, out.with_name(f"{out.stem}-sites{out.suffix}")]


def check_outputs_spare_inputs(out: str | os.PathLike, inputs) -> None:
    """Raise InputError if any path a run writing ``out`` uses is one of ``inputs``.

    The paths written are the result, its sites file, the lock file and the
    staging folder (an input inside that folder counts too: it is removed at
    the end).  Paths are compared after resolving links, and by identity for
    files that exist (hard links, case-insensitive file systems).
    """
    written = [(p, "the result" if k == 0 else "the result's sites file") for k, p in enumerate(output_paths(out))]
    written += [(lock_path(out), "the lock file"), (staging_folder(out), "the staging folder")]
    for given in inputs:
        if given is None or str(given) == "":
            continue
        src = Path(given)
        real_src = Path(os.path.realpath(src))
        for path, role in written:
            real = Path(os.path.realpath(path))
            same = real == real_src
            if not same and src.exists() and path.exists():
                try:
                    same = os.path.samefile(src, path)
                except OSError:
                    same = False
            inside = role == "the staging folder" and real in real_src.parents
            if same or inside:
                raise InputError(
                    f"--out {out} would overwrite the input {given} (as {role}, {path.name}); "
                    "choose another --out"
                )


_FAST_SQLITE = {"OGR_SQLITE_SYNCHRONOUS": "OFF", "OGR_SQLITE_JOURNAL": "OFF"}


def _have_arrow() -> bool:
    """True when pyarrow is installed: it lets GDAL write whole batches at once (about twice as fast).

    Looked up, not imported, so importing this module stays light.
    """
    return importlib.util.find_spec("pyarrow") is not None


def _write(out, suffix, driver, stage, sites, keys, codes, ranked, problems, settings,
           radio_columns: bool = False) -> list[str]:
    import geopandas as gpd
    import pandas as pd
    import pyogrio

    verdict_names = [VERDICTS[k].value for k in sorted(VERDICTS)]
    order = rank_order(keys)
    ranked_codes = codes[order]
    n_rows = order.size
    del order
    staging = stage.folder
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
                            verdict_names, radio_columns)
        frame.insert(0, "rank", np.arange(start + 1, stop + 1))
        if driver == "CSV":
            frame.to_csv(tmp_links, mode="w" if first else "a", header=first, index=False)
        else:
            gdf = gpd.GeoDataFrame(frame, geometry=_lines(frame), crs="EPSG:4326")
            pyogrio.write_dataframe(gdf, tmp_links, layer="links", driver=driver, append=not first,
                                    use_arrow=_have_arrow())
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
                                use_arrow=_have_arrow())
    _fsync(tmp_links)
    crash_point("links written")
    renames = [(tmp_links, out)]
    if driver != "GPKG":
        _fsync(tmp_sites)
        crash_point("sites written")
        renames.append((tmp_sites, sites_out))
    finish_renames(stage, renames)
    return [str(dst) for _, dst in renames]


def _fsync(path: Path) -> None:
    with open(path, "rb") as fh:
        os.fsync(fh.fileno())
