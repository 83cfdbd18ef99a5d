"""``terrahop link --profile-csv FILE``: the sampled profile of one link, one row per sample.

The values are the engine's own arrays (profiler.geometry.Clearance at the
design and the worst-case k), not recomputed: distance, position, ground,
clutter, earth bulge at both k, the ray (straight line between the antennas
over the flattened earth), the first Fresnel radius and the clearance.
Heights in metres above the rasters' vertical datum.
"""

from __future__ import annotations

import csv
import os
import tempfile
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from ..errors import InputError

__all__ = ["PROFILE_COLUMNS", "profile_columns", "check_profile_csv_path", "write_profile_csv"]

#: Column names, units in the names; "design" at the design k, "worst" at the worst-case k.
PROFILE_COLUMNS = (
    "distance_km", "lat_deg", "lon_deg", "ground_m", "clutter_m", "bulge_design_m", "bulge_worst_m",
    "ray_m", "f1_radius_m", "clearance_design_m", "clearance_worst_m",
)


def profile_columns(batch: Any, i: int) -> dict[str, np.ndarray]:
    """The columns of link i of a LinkBatch (its own samples only, no padding)."""
    p = batch.profiles
    n = int(p.n_samples[i])
    d, w = batch.design.clearance, batch.worst.clearance
    return {
        "distance_km": p.distance_m[i, :n] / 1000.0,
        "lat_deg": p.lat_deg[i, :n],
        "lon_deg": p.lon_deg[i, :n],
        "ground_m": p.ground_m[i, :n],
        "clutter_m": p.clutter_m[i, :n],
        "bulge_design_m": d.bulge_m[i, :n],
        "bulge_worst_m": w.bulge_m[i, :n],
        "ray_m": d.line_m[i, :n],
        "f1_radius_m": d.f1_m[i, :n],
        "clearance_design_m": d.clearance_m[i, :n],
        "clearance_worst_m": w.clearance_m[i, :n],
    }


def check_profile_csv_path(out: str | os.PathLike, inputs: Iterable[Any]) -> None:
    """InputError (one line) when ``out`` is one of ``inputs`` or its folder cannot take a new file."""
    out_p = Path(out)
    if out_p.is_dir():
        raise InputError(f"--profile-csv {out} is a folder; give a file name")
    real_out = os.path.realpath(out_p)
    for given in inputs:
        if given is None or str(given) == "":
            continue
        src = Path(str(given).split(" [")[0])
        same = os.path.realpath(src) == real_out
        if not same and src.exists() and out_p.exists():
            try:
                same = os.path.samefile(src, out_p)
            except OSError:
                same = False
        if same:
            raise InputError(f"--profile-csv {out} would overwrite the input {given}; choose another file")
    folder = out_p.parent if str(out_p.parent) else Path(".")
    if folder.exists() and not folder.is_dir():
        raise InputError(f"--profile-csv {out}: {folder} is a file, not a folder")
    if not folder.is_dir():
        raise InputError(f"--profile-csv {out}: the folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"--profile-csv {out}: cannot write in the folder {folder} (permission denied)")


def write_profile_csv(out: str | os.PathLike, columns: dict[str, np.ndarray]) -> None:
    """Write the columns as CSV: a temporary file beside ``out``, then renamed (no half-written file)."""
    out_p = Path(out)
    folder = out_p.parent if str(out_p.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{out_p.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", newline="", encoding="utf-8") as fh:
            writer = csv.writer(fh)
            writer.writerow(PROFILE_COLUMNS)
            rows = zip(*(np.asarray(columns[c], dtype=float) for c in PROFILE_COLUMNS))
            for row in rows:
                writer.writerow([_text(v) for v in row])
        os.replace(tmp, out_p)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise InputError(f"--profile-csv {out}: could not write the file ({exc.strerror or exc})") from None


def _text(value: float) -> str:
    return "" if not np.isfinite(value) else repr(float(value))
