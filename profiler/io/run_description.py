"""The description of a run: which software, command, radio, settings and files made an output.

Built once per run by :func:`describe_run` and written unchanged into every
output of that run: the GeoPackage's ``run`` table and metadata
(:func:`profiler.io.gpkg_run.write_run_tables`), the ``<name>.run.json``
sidecar beside CSV, GeoJSON and KML (:func:`write_sidecar`), and the KML's
``ExtendedData``.  Key names are fixed once released (``software``,
``created_utc``, ``command``, ``radio``, ``k``, ``k_worst``, ``criterion``,
``min_margin_db``, ``diffraction_method``, ``climate``, ``terrain``,
``sites_file``); keys may be added.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import json
import math
import os
from pathlib import Path
from typing import Any, Iterable, Sequence

from .._version import __version__

__all__ = ["describe_run", "file_entry", "unwritable_reason", "sidecar_path", "write_sidecar", "run_json",
           "SIDECAR_SUFFIX", "RUN_DESCRIPTION_VERSION"]

#: Suffix of the sidecar file that holds the run description beside CSV, GeoJSON and KML outputs.
SIDECAR_SUFFIX = ".run.json"
#: Version of the layout of the description (raised when a key changes meaning).
RUN_DESCRIPTION_VERSION = 1


def sha256_file(path: str | os.PathLike) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def file_entry(path: str | os.PathLike, **extra: Any) -> dict:
    """``{path (absolute), sha256, ...extra}`` of a file (sha256 None if it cannot be read)."""
    p = Path(path)
    try:
        digest: str | None = sha256_file(p)
    except OSError:
        digest = None
    return {"path": str(p.resolve()), "sha256": digest, **extra}


def _vrt_sources(path: str) -> list[str]:
    """The files a VRT reads (empty for other rasters or when it cannot be opened)."""
    if not str(path).lower().endswith(".vrt"):
        return []
    try:
        import rasterio

        with rasterio.open(path) as ds:
            return [f for f in ds.files if Path(f).resolve() != Path(path).resolve()]
    except Exception:  # noqa: BLE001 - a description never fails the run; the VRT itself is listed
        return []


def terrain_entries(dem: Iterable[str | os.PathLike] = (), surface: Iterable[str | os.PathLike] = ()) -> list[dict]:
    """One entry per raster file: ``{path, sha256, role}`` (role ``dem`` or ``surface``).

    The files a VRT reads follow it, with ``"via"`` naming the VRT.
    """
    out: list[dict] = []
    for role, paths in (("dem", dem), ("surface", surface)):
        for p in paths:
            out.append(file_entry(p, role=role))
            out += [file_entry(f, role=role, via=str(Path(p).resolve())) for f in _vrt_sources(str(p))]
    return out


def _plain(value: Any) -> Any:
    """A JSON-ready copy: numpy scalars to numbers, NaN to None, per-row arrays summarised."""
    import numpy as np

    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, frozenset, set)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        if value.ndim == 0:
            return _plain(value.item())
        return {"per_row": True, "min": _plain(np.nanmin(value)) if value.size else None,
                "max": _plain(np.nanmax(value)) if value.size else None}
    if isinstance(value, np.generic):
        return _plain(value.item())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, Path):
        return str(value)
    return value


def _climate(settings: Any) -> dict:
    """The climate settings with the source of every value (given, default, or an ITU-R map per path)."""
    climate = settings.climate
    out = _plain(climate.as_dict())
    if "sources" not in out:
        out["source"] = climate.source
        out["sources"] = {name: climate.origin(name) for name in out if name not in ("source", "polarisation")}
    if climate.source == "itu":
        from ..climate import ORIGIN_P453, ORIGIN_P837, ORIGIN_TERRAIN

        # Per-path values: the figures above are the fallbacks; each path's own are in its record.
        out["sources"].update(rain_rate_mm_h=ORIGIN_P837, dn1_n_per_km=ORIGIN_P453,
                              terrain_roughness_m=ORIGIN_TERRAIN)
        out["per_path"] = ["rain_rate_mm_h", "dn1_n_per_km", "terrain_roughness_m"]
    return out


def describe_run(
    *,
    command: Sequence[str],
    radio: Any,
    settings: Any,
    min_margin_db: float | None = None,
    dem: Iterable[str | os.PathLike] = (),
    surface: Iterable[str | os.PathLike] = (),
    sites_file: str | os.PathLike | None = None,
    other_inputs: dict[str, Any] | None = None,
    created_utc: _dt.datetime | None = None,
) -> dict:
    """The run description (a plain dict, JSON-ready) of one command.

    ``command`` is the argument list (``["terrahop", "screen", ...]``);
    ``radio`` a :class:`profiler.budget.Radio` (per-site arrays are given as
    their range); ``settings`` the :class:`profiler.link_types.Settings`;
    ``min_margin_db`` the fade margin, dB, a link needs to be ``viable``;
    ``dem``/``surface`` the raster files, hashed with SHA-256;
    ``sites_file`` the sites (or pairs) file, hashed; ``other_inputs`` more
    named inputs (link files, obstruction layers), each a path or a list of paths.
    """
    when = (created_utc or _dt.datetime.now(_dt.timezone.utc)).astimezone(_dt.timezone.utc)
    criterion = settings.criterion
    description: dict[str, Any] = {
        "description_version": RUN_DESCRIPTION_VERSION,
        "software": {"name": "terrahop", "version": __version__},
        "created_utc": when.replace(microsecond=0).isoformat().replace("+00:00", "Z"),
        "command": [str(c) for c in command],
        "radio": _plain(radio),
        "k": float(settings.k),
        "k_worst": float(settings.k_worst),
        "criterion": {
            "min_f1_fraction": float(criterion.min_f1_fraction),
            "min_f1_fraction_worst": float(criterion.min_f1_fraction_worst),
            "text": criterion.describe(settings.k, settings.k_worst),
        },
        "min_margin_db": None if min_margin_db is None else float(min_margin_db),
        "diffraction_method": settings.diffraction_method,
        "sample_spacing_m": None if settings.spacing_m is None else float(settings.spacing_m),
        "polarisation": settings.polarisation,
        "ground": settings.ground,
        "climate": _climate(settings),
        "terrain": terrain_entries(dem, surface),
        "sites_file": None if sites_file is None else file_entry(sites_file),
    }
    for name, paths in (other_inputs or {}).items():
        if paths is None:
            continue
        if isinstance(paths, (str, os.PathLike)):
            description[name] = file_entry(paths)
        else:
            description[name] = [file_entry(p) for p in paths]
    return description


def run_json(description: dict) -> str:
    """The description as JSON text (what the ``run`` table and the sidecar hold)."""
    return json.dumps(description, indent=1, sort_keys=False, allow_nan=False)


def unwritable_reason(path: str | os.PathLike) -> str | None:
    """Why a file cannot be written at ``path`` (folder missing, not a folder, permission), or None.

    The folder is probed by creating and removing an empty file, which also
    catches read-only file systems and root-owned places the mode bits do not show.
    """
    path = Path(path)
    folder = path.parent
    if not folder.exists():
        return f"the folder {folder} does not exist"
    if not folder.is_dir():
        return f"{folder} is not a folder"
    if path.is_dir():
        return "it is a folder; give a file name"
    probe = folder / f".terrahop-probe-{os.getpid()}"
    try:
        fd = os.open(probe, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
    except OSError as exc:
        return f"cannot write in {folder} ({exc.strerror or exc})"
    os.close(fd)
    os.unlink(probe)
    if path.exists() and not os.access(path, os.W_OK):
        return "the file exists and cannot be written (permission denied)"
    return None


def sidecar_path(out: str | os.PathLike) -> Path:
    """``<folder>/<name>.run.json`` for an output ``<folder>/<name>`` (``r.csv`` -> ``r.csv.run.json``).

    The whole name is kept so that results of one stem in several formats
    (``r.csv``, ``r.kml``) each keep their own description.
    """
    out = Path(out)
    return out.with_name(out.name + SIDECAR_SUFFIX)


def write_sidecar(path: str | os.PathLike, description: dict) -> Path:
    """Write the description to ``path`` as JSON (the same text as the GeoPackage ``run`` table); return it."""
    path = Path(path)
    path.write_text(run_json(description) + "\n", encoding="utf-8")
    return path
