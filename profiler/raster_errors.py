"""Raster read errors a planner can act on: which file, GDAL's cause, any missing VRT source.

rasterio reports most GDAL failures as "Read failed. See previous exception";
these helpers dig out the cause and say what it means (common practice).
"""

from __future__ import annotations

import os
import re

from .errors import DataFileError

__all__ = ["missing_vrt_sources", "raster_read_error"]


def _read_errors() -> tuple[type[BaseException], ...]:
    """Exceptions rasterio raises when GDAL cannot open or read a file."""
    from rasterio.errors import RasterioError

    try:
        from rasterio._err import CPLE_BaseError
    except ImportError:  # pragma: no cover - private module moved
        return (RasterioError,)
    return (RasterioError, CPLE_BaseError)


def _is_remote(path: str) -> bool:
    return path.startswith(("/vsi", "http://", "https://", "s3://", "gs://"))


def missing_vrt_sources(path: str, _seen: frozenset = frozenset()) -> list[str]:
    """Local source files a VRT names that do not exist (nested VRTs followed), as absolute paths."""
    import xml.etree.ElementTree as ET

    if _is_remote(path) or not path.lower().endswith(".vrt") or path in _seen or not os.path.isfile(path):
        return []
    try:
        root = ET.parse(path).getroot()
    except (ET.ParseError, OSError):
        return []  # GDAL reports what it cannot parse
    base = os.path.dirname(os.path.abspath(path))
    missing: list[str] = []
    for el in root.iter("SourceFilename"):
        name = (el.text or "").strip()
        if not name or _is_remote(name) or re.match(r"^[A-Za-z][A-Za-z0-9_]+:", name):
            continue  # remote, or a driver-prefixed name such as NETCDF:file.nc:var (GDAL checks those)
        full = os.path.join(base, name) if el.get("relativeToVRT") == "1" else name
        full = os.path.abspath(full)
        if not os.path.exists(full):
            missing.append(full)
        else:
            missing += missing_vrt_sources(full, _seen | {path})
    return list(dict.fromkeys(missing))


def _gdal_cause(exc: BaseException) -> str:
    """The first GDAL message behind a rasterio error (rasterio's own says only 'see previous')."""
    texts = []
    seen = set()
    c: BaseException | None = exc
    while c is not None and id(c) not in seen:
        seen.add(id(c))
        text = str(c).strip()
        if text and "See previous exception" not in text:
            texts.append(text)
        c = c.__cause__ or c.__context__
    # The innermost message names the low-level cause (short read, missing file).
    return texts[-1] if texts else str(exc)


def raster_read_error(path: str, exc: BaseException, what: str = "elevation raster") -> DataFileError:
    """One-line DataFileError naming the raster, the cause and any missing VRT source."""
    missing = missing_vrt_sources(path)
    if missing:
        more = f" (and {len(missing) - 1} more)" if len(missing) > 1 else ""
        return DataFileError(f"cannot read {what} {path}: its source file {missing[0]}{more} does not exist")
    return DataFileError(f"cannot read {what} {path}: {_explain(_gdal_cause(exc))}")


def _explain(cause: str) -> str:
    """GDAL's message with what it means for the planner in front."""
    if "No such file" in cause or "does not exist" in cause:
        return f"a file it refers to is missing ({cause})"
    if any(w in cause for w in ("Read error", "got ", "IReadBlock", "TIFFRead", "TIFFFill", "truncated",
                                "Failed to read directory")):
        return f"the file is damaged or truncated ({cause})"
    return cause
