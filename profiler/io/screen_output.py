"""Write screening results: a line layer of pairs and a point layer of sites.

GeoPackage (.gpkg: layers ``links`` and ``sites`` in one file, plus the
``run`` table and GeoPackage metadata of :mod:`profiler.io.gpkg_run`),
GeoJSON (.geojson/.json, RFC 7946), CSV (.csv) or KML/KMZ (.kml/.kmz, sites
and links in one file, :mod:`profiler.io.kml`), chosen by the output's
extension; for GeoJSON and CSV the sites go to ``<stem>-sites<ext>`` beside
it, and CSV, GeoJSON and KML get the run description as ``<name>.run.json`` (``r.csv.run.json``).
Lines follow the geodesic (:mod:`profiler.io.geolines`); rows that could not
be profiled have no geometry.  CSV, GeoJSON and KML numbers are rounded per
:mod:`profiler.io.rounding`; the GeoPackage keeps full precision.  Rows are
ranked by fade margin (best first, pairs that could not be profiled last)
and written in batches, so memory stays bounded.  Each file is written under
a temporary name in the staging folder; when both are complete the renames
are recorded and done (:func:`profiler.io.stage.finish_renames`), so the
result, its ``-sites`` file and its run description are replaced together
or not at all.
"""

from __future__ import annotations

import importlib.util
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..availability import availability_note
from ..errors import InputError
from .columns import CONFIDENCE_COLUMNS, RANK_COLUMNS
from .columns import (CODED_COLUMNS, FLAG_COLUMNS, KEPT_IN_ERROR_ROWS, LINK_COLUMNS, RADIO_COLUMNS, SITE_COLUMNS,
                      VERDICTS, PairStatus, Verdict)
from .run_description import sidecar_path, unwritable_reason, write_sidecar
from .stage import crash_point, finish_renames, lock_path, staging_folder

__all__ = ["write_outputs", "output_paths", "check_output_path", "check_outputs_spare_inputs", "OUTPUT_SUFFIXES",
           "LINK_COLUMNS", "SITE_COLUMNS", "rank_order", "check_csv_geometry", "CSV_GEOMETRY"]

OUTPUT_SUFFIXES = {".gpkg": "GPKG", ".geojson": "GeoJSON", ".json": "GeoJSON", ".csv": "CSV", ".kml": "KML",
                   ".kmz": "KML"}
#: Values of ``--csv-geometry``: none (no geometry column, the default) or wkt (a ``wkt`` column).
CSV_GEOMETRY = ("none", "wkt")

#: Rows per write batch.
WRITE_BATCH = 50_000


def check_rank_by(rank_by: str, confidence: bool) -> str:
    """The ranking column, checked: p_meets needs a run with confidence (one-line InputError)."""
    from ..errors import InputError

    if rank_by not in RANK_COLUMNS:
        raise InputError(f"--rank-by must be one of {', '.join(RANK_COLUMNS)}, got {rank_by!r}")
    if rank_by == "p_meets" and not confidence:
        raise InputError("--rank-by p_meets needs the confidence estimate: give --draws, --dem-error-m or "
                         "another confidence option")
    return rank_by


def rank_order(cols: dict[str, np.ndarray], rank_by: str = "fade_margin_db") -> np.ndarray:
    """Row order by fade margin (or ``rank_by`` p_meets, then fade margin), best first; ties and unprofiled
    pairs by pair index."""
    fade = cols["fade_margin_db"]
    if rank_by == "p_meets":
        ok = cols["status"] == PairStatus.PROFILED
        p = np.where(ok & np.isfinite(cols["p_meets"]), -cols["p_meets"], np.inf)
        f = np.where(np.isfinite(fade) & ok, -fade, np.inf)
        return np.lexsort((cols["pair"], f, p))
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
                radio_columns: bool = False, confidence_columns: bool = False):
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
                          and (radio_columns or name not in RADIO_COLUMNS)
                          and (confidence_columns or name not in CONFIDENCE_COLUMNS)})
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
    settings, radio_columns: bool = False, run_description: dict | None = None, csv_geometry: str = "none",
    confidence_columns: bool = False, rank_by: str = "fade_margin_db",
) -> list[str]:
    """Write the ranked links and the sites; return the paths written.

    ``keys`` holds the columns pair, a, b and fade_margin_db of every row in
    pair order, ``codes`` their verdict codes; ``ranked(start, stop)`` returns
    all columns of rows ``start:stop`` in rank order (:func:`rank_order`), so
    only one batch of rows is in memory at a time.  ``stage`` is the run's
    :class:`profiler.io.stage.Stage`: the files are written in its folder,
    then renamed into place together.  ``run_description``
    (:mod:`profiler.io.run_description`) goes into the GeoPackage or the
    ``.run.json`` sidecar; ``csv_geometry`` is ``none`` or ``wkt``.
    """
    import pyogrio

    out = Path(out)
    suffix = out.suffix.lower()
    check_output_path(out)
    check_csv_geometry(csv_geometry, out)
    driver = OUTPUT_SUFFIXES[suffix]
    # The file is private until renamed into place: no need for SQLite's crash journal.
    saved = {k: pyogrio.get_gdal_config_option(k) for k in _FAST_SQLITE}
    pyogrio.set_gdal_config_options(_FAST_SQLITE)
    try:
        return _write(out, suffix, driver, stage, sites, keys, codes, ranked, problems, settings,
                      run_description, csv_geometry, radio_columns, confidence_columns, rank_by)
    finally:
        pyogrio.set_gdal_config_options(saved)


def check_output_path(out: str | os.PathLike) -> None:
    """Raise InputError unless ``out`` has a known extension and a folder that exists."""
    out = Path(out)
    if out.suffix.lower() not in OUTPUT_SUFFIXES:
        raise InputError(f"output {out}: unknown extension {out.suffix!r}; use .gpkg, .geojson, .csv, .kml or .kmz")
    reason = unwritable_reason(out)
    if reason is not None:
        raise InputError(f"output {out}: {reason}")


def check_csv_geometry(csv_geometry: str, out: str | os.PathLike) -> None:
    """Raise InputError for an unknown ``--csv-geometry`` or one given with an output that is not CSV."""
    if csv_geometry not in CSV_GEOMETRY:
        raise InputError(f"--csv-geometry {csv_geometry!r} is unknown; use one of {', '.join(CSV_GEOMETRY)}")
    if csv_geometry != "none" and OUTPUT_SUFFIXES.get(Path(out).suffix.lower()) != "CSV":
        raise InputError(f"--csv-geometry {csv_geometry} applies to CSV output only; --out {out} is not .csv "
                         "(GeoPackage, GeoJSON and KML carry their geometry)")


def output_paths(out: str | os.PathLike) -> list[Path]:
    """The files a run writing ``out`` leaves: the result, for CSV and GeoJSON its sites file, and
    for CSV, GeoJSON and KML the run description ``<name>.run.json`` (``r.csv.run.json``)."""
    out = Path(out)
    driver = OUTPUT_SUFFIXES.get(out.suffix.lower())
    if driver == "GPKG":
        return [out]
    if driver == "KML":
        return [out, sidecar_path(out)]
    return [out, out.with_name(f"{out.stem}-sites{out.suffix}"), sidecar_path(out)]


def check_outputs_spare_inputs(out: str | os.PathLike, inputs) -> None:
    """Raise InputError if any path a run writing ``out`` uses is one of ``inputs``.

    The paths written are the result, its sites file, the lock file and the
    staging folder (an input inside that folder counts too: it is removed at
    the end).  Paths are compared after resolving links, and by identity for
    files that exist (hard links, case-insensitive file systems).
    """
    written = [(p, "the result" if k == 0 else "the run description" if p.name.endswith(".run.json")
                else "the result's sites file") for k, p in enumerate(output_paths(out))]
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


def _write(out, suffix, driver, stage, sites, keys, codes, ranked, problems, settings, run_description,
           csv_geometry, radio_columns: bool = False, confidence_columns: bool = False,
           rank_by: str = "fade_margin_db") -> list[str]:
    import geopandas as gpd
    import pandas as pd
    import pyogrio

    from .geolines import line_geometries
    from .rounding import round_frame

    verdict_names = [VERDICTS[k].value for k in sorted(VERDICTS)]
    order = rank_order(keys, rank_by)
    ranked_codes = codes[order]
    n_rows = order.size
    del order
    staging = stage.folder
    tmp_links = staging / f"links.tmp{suffix}"
    sites_out = out if driver in ("GPKG", "KML") else out.with_name(f"{out.stem}-sites{out.suffix}")
    tmp_sites = tmp_links if driver in ("GPKG", "KML") else staging / f"sites.tmp{suffix}"
    tmp_run = staging / "run.tmp.json"
    for p in {tmp_links, tmp_sites, tmp_run}:
        if p.exists():
            p.unlink()
    kml_links: list = []
    first = True
    for start in range(0, max(n_rows, 1), WRITE_BATCH):
        stop = min(start + WRITE_BATCH, n_rows)
        batch_codes = ranked_codes[start:stop]
        frame = _link_frame(ranked(start, stop), batch_codes, problems, sites, settings, verdict_names,
                            radio_columns, confidence_columns)
        frame.insert(0, "rank", np.arange(start + 1, stop + 1))
        # A row that could not be profiled gets no line (not one between its two ends).
        drawn = batch_codes != Verdict.ERROR.code
        lon_a, lat_a, lon_b, lat_b = (frame[c].to_numpy(dtype=float) for c in ("lon_a", "lat_a", "lon_b", "lat_b"))
        if driver == "CSV":
            written = round_frame(frame)
            if csv_geometry == "wkt":
                written["wkt"] = _wkt(line_geometries(lon_a, lat_a, lon_b, lat_b, drawn))
            written.to_csv(tmp_links, mode="w" if first else "a", header=first, index=False)
        elif driver == "KML":
            kml_links += _kml_links(round_frame(frame), line_geometries(lon_a, lat_a, lon_b, lat_b, drawn))
        else:
            rounded = driver == "GeoJSON"
            lines = line_geometries(lon_a, lat_a, lon_b, lat_b, drawn, unwrap=driver == "GPKG")
            gdf = gpd.GeoDataFrame(round_frame(frame) if rounded else frame, geometry=lines, crs="EPSG:4326")
            pyogrio.write_dataframe(gdf, tmp_links, layer="links", driver=driver, append=not first,
                                    use_arrow=_have_arrow(), **_layer_options(driver, first))
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
    import shapely

    points = shapely.points(sites.lon_deg, sites.lat_deg)
    if driver == "CSV":
        written = round_frame(site_frame)
        if csv_geometry == "wkt":
            written["wkt"] = _wkt(points)
        written.to_csv(tmp_sites, index=False)
    elif driver == "KML":
        from .kml import write_kml

        write_kml(tmp_links, out.stem, kml_links, _kml_sites(round_frame(site_frame)), run_description)
    else:
        rounded = driver == "GeoJSON"
        gdf = gpd.GeoDataFrame(round_frame(site_frame) if rounded else site_frame, geometry=points, crs="EPSG:4326")
        pyogrio.write_dataframe(gdf, tmp_sites, layer="sites", driver=driver, append=driver == "GPKG",
                                use_arrow=_have_arrow(), **_layer_options(driver, driver != "GPKG"))
    if driver == "GPKG" and run_description is not None:
        from .gpkg_run import write_run_tables

        write_run_tables(tmp_links, run_description, ("links", "sites"))
    _fsync(tmp_links)
    crash_point("links written")
    renames = [(tmp_links, out)]
    if driver not in ("GPKG", "KML"):
        _fsync(tmp_sites)
        crash_point("sites written")
        renames.append((tmp_sites, sites_out))
    if driver != "GPKG" and run_description is not None:
        write_sidecar(tmp_run, run_description)
        _fsync(tmp_run)
        renames.append((tmp_run, sidecar_path(out)))
    finish_renames(stage, renames)
    return [str(dst) for _, dst in renames]


def _layer_options(driver: str, creating: bool) -> dict:
    """GeoJSON per RFC 7946 (no ``crs`` member, lines cut at the antimeridian by us), 6 decimals of degree."""
    if driver == "GeoJSON" and creating:
        return {"layer_options": {"RFC7946": "YES", "COORDINATE_PRECISION": "6"}}
    return {}


def _wkt(geoms) -> Any:
    """WKT of each geometry, 6 decimals of degree; empty where there is none."""
    import shapely

    text = shapely.to_wkt(geoms, rounding_precision=6, trim=True)
    return np.where(shapely.is_missing(geoms), "", text)


def _kml_links(frame, geoms) -> list:
    """KML links of one batch of the links layer (rounded), in rank order."""
    import shapely

    from .kml import KmlLink

    keys = ("rank", "distance_km", "fade_margin_db", "wc_fade_margin_db", "worst_clearance_m", "worst_f1_fraction",
            "wc_worst_clearance_m", "wc_worst_f1_fraction", "line_of_sight", "meets_criterion", "availability_pct",
            "meets_availability", "availability_note", "mast_raise_m", "problem")
    present = [k for k in keys if k in frame.columns]
    out = []
    records = frame[["site_a", "site_b", "verdict", *present]].to_dict("records")
    for row, geom in zip(records, geoms):
        parts = [] if geom is None else [shapely.get_coordinates(g) for g in shapely.get_parts(geom)]
        numbers = {k: (None if _missing(row[k]) else row[k]) for k in present}
        for text in ("problem", "availability_note"):  # empty text: nothing to say
            if not numbers.get(text):
                numbers.pop(text, None)
        out.append(KmlLink(f"{row['site_a']} - {row['site_b']}", Verdict(row["verdict"]), parts, numbers))
    return out


def _kml_sites(frame) -> list:
    from .kml import KmlSite

    keys = [c for c in frame.columns if c not in ("name",)]
    return [KmlSite(str(r["name"]), float(r["lon"]), float(r["lat"]),
                    {k: (None if _missing(r[k]) else r[k]) for k in keys})
            for r in frame.to_dict("records")]


def _missing(value) -> bool:
    import pandas as pd

    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def _fsync(path: Path) -> None:
    with open(path, "rb") as fh:
        os.fsync(fh.fileno())
