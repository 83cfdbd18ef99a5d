"""Downloading tiles into the cache: temporary name, Range resume, retries, a lock per tile, checks.

Each tile is downloaded to ``<tile>.part``; a cut download resumes with an
HTTP Range request (RFC 9110 section 14) where the server allows it.  The
finished file is checked (it opens as a raster of the expected size and
bounds) and only then renamed to its final name, so the cache holds whole
tiles or nothing.  A tile the source does not have (HTTP 404, or a missing
file under a ``file://`` base) is remembered as "no tile" (open sea).
Transient failures (5xx, 429, time-outs, resets, cut bodies) are retried
with doubling back-off.  One process at a time downloads a given tile
(``fcntl.flock`` on ``<tile>.lock``).  Proxies come from the usual
environment variables (urllib's default ``ProxyHandler``).
"""

from __future__ import annotations

import contextlib
import fcntl
import gzip
import hashlib
import http.client
import os
import shutil
import time
import urllib.error
import urllib.request
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Iterator

from .._version import __version__
from ..errors import DataError
from .datasets import Dataset

__all__ = ["FetchedTile", "TerrainFetch", "fetch_tiles", "MAX_PARALLEL", "TIMEOUT_ENV", "BACKOFF_ENV",
           "missing_tiles", "tile_file"]

#: Downloads at once (issue 13: at most 4, to be fair to public buckets).
MAX_PARALLEL = 4
#: Tries of one tile before giving up (the first and 4 retries).
TRIES = 5
#: Environment variables for the time-out of one request and the first back-off, s.
TIMEOUT_ENV = "TERRAHOP_FETCH_TIMEOUT_S"
BACKOFF_ENV = "TERRAHOP_FETCH_BACKOFF_S"
DEFAULT_TIMEOUT_S = 60.0
DEFAULT_BACKOFF_S = 1.0
_CHUNK = 1 << 20


@dataclass(frozen=True)
class FetchedTile:
    """One tile of an area: where it came from, where it is, its checksum; path None for open sea."""

    key: str
    url: str
    path: str | None
    sha256: str | None
    status: str  # "cached", "downloaded" or "sea"
    bytes_downloaded: int = 0


@dataclass(frozen=True)
class TerrainFetch:
    """The tiles of an area from one dataset, and the VRT joining them."""

    dataset: Dataset
    base_url: str
    tiles: tuple[FetchedTile, ...]
    vrt: str = ""
    warnings: tuple[str, ...] = field(default=())

    @property
    def sea_keys(self) -> list[str]:
        """Tiles the source does not have (open sea, read as 0 m)."""
        return [t.key for t in self.tiles if t.path is None]

    def provenance(self) -> dict:
        """The JSON provenance of the terrain source: dataset, datum, each tile and its SHA-256."""
        d = self.dataset
        return {
            "source": d.name,
            "title": d.title,
            "base_url": self.base_url,
            "vertical_datum": f"{d.vertical_datum} (EPSG:{d.vertical_epsg})",
            "surface_model": d.surface_model,
            "vrt": self.vrt,
            "tiles": [
                {"tile": t.key, "url": t.url, "file": t.path, "sha256": t.sha256}
                if t.path is not None else
                {"tile": t.key, "url": t.url, "file": None, "sha256": None,
                 "note": f"no tile at the source (open sea): read as 0 m above {d.vertical_datum}"}
                for t in self.tiles
            ],
        }


class _Transient(Exception):
    """A failure worth another try (5xx, time-out, reset, cut body)."""


def _env_float(name: str, default: float) -> float:
    try:
        return float(os.environ.get(name, default))
    except ValueError:
        raise DataError(f"{name} must be a number of seconds, got {os.environ[name]!r}") from None


def tile_file(folder: Path, d: Dataset, lat0: int, lon0: int) -> Path:
    """Final cache path of a tile (SRTM kept uncompressed, as GDAL reads HGT by its name)."""
    rel = d.tile_path(lat0, lon0)
    return folder / (rel[:-3] if rel.endswith(".gz") else rel)


def _sea_marker(folder: Path, d: Dataset, lat0: int, lon0: int, base: str) -> Path:
    """Where "no tile" is remembered: per base URL, so a partial mirror never marks a tile of the
    dataset's own source as sea."""
    source = hashlib.sha256(base.rstrip("/").encode()).hexdigest()[:16]
    return folder / "no-tile" / source / f"{d.tile_key(lat0, lon0)}.none"


def missing_tiles(folder: Path, d: Dataset, origins: list[tuple[int, int]], base: str) -> list[str]:
    """Tiles neither cached nor remembered as open sea at ``base``."""
    return [d.tile_key(la, lo) for la, lo in origins
            if not tile_file(folder, d, la, lo).exists() and not _sea_marker(folder, d, la, lo, base).exists()]


def sha256_of(path: Path) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(_CHUNK), b""):
            h.update(chunk)
    return h.hexdigest()


@contextlib.contextmanager
def _tile_lock(path: Path) -> Iterator[None]:
    """Hold an exclusive lock on ``path`` (waits for another process fetching the same tile)."""
    fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        os.close(fd)  # releases the lock


def _hasher_of(path: Path) -> "hashlib._Hash":
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(_CHUNK), b""):
            h.update(chunk)
    return h


def _get(url: str, part: Path, timeout_s: float, progress: Callable[[int], None] | None,
         digest: list) -> bool:
    """Download ``url`` into ``part`` (resuming what is there); False when the source has no such file.

    ``digest`` receives the SHA-256 hasher of the whole file, fed as the bytes arrive (no second read).
    """
    have = part.stat().st_size if part.exists() else 0
    try:
        request = urllib.request.Request(url, headers={"User-Agent": f"terrahop/{__version__}"})
        if have:
            request.add_header("Range", f"bytes={have}-")
        response = urllib.request.urlopen(request, timeout=timeout_s)
    except urllib.error.HTTPError as exc:
        exc.close()
        if exc.code == 404:
            return False
        if exc.code == 416 and have:  # our part is not a prefix the server knows: start again
            part.unlink()
            raise _Transient("HTTP 416 on resume") from None
        if exc.code >= 500 or exc.code == 429:
            raise _Transient(f"HTTP {exc.code} {exc.reason}") from None
        raise DataError(f"{url}: HTTP {exc.code} {exc.reason}") from None
    except urllib.error.URLError as exc:
        if url.startswith("file:") and isinstance(exc.reason, FileNotFoundError | str):
            return False
        raise _Transient(str(exc.reason)) from None
    except (TimeoutError, ConnectionError, http.client.HTTPException) as exc:
        raise _Transient(exc.__class__.__name__) from None
    except ValueError as exc:  # a garbled address (urllib and http.client say so with ValueError)
        raise DataError(f"{url} is not an address terrahop can fetch ({exc})") from None
    with response:
        status = response.getcode()
        if have and status != 206:
            have = 0  # the server sent the whole file
        length = response.headers.get("Content-Length")
        total = have + int(length) if length and length.isdigit() else None
        h = _hasher_of(part) if have else hashlib.sha256()
        digest[:] = [h]
        try:
            buffer = bytearray(_CHUNK)
            view = memoryview(buffer)
            with open(part, "ab" if have else "wb") as fh:
                while n := response.readinto(buffer):
                    fh.write(view[:n])
                    h.update(view[:n])  # hashlib releases the GIL on large buffers: 4 downloads hash at once
                    if progress is not None:
                        progress(n)
        except (TimeoutError, ConnectionError, http.client.HTTPException) as exc:
            raise _Transient(f"{exc.__class__.__name__} after {part.stat().st_size} bytes") from None
    if total is not None and part.stat().st_size != total:
        raise _Transient(f"body cut at {part.stat().st_size} of {total} bytes")
    return True


def _check_raster(path: Path, d: Dataset, lat0: int, lon0: int, url: str) -> None:
    """DataError unless ``path`` opens as a one-band geographic raster of the tile's size and bounds."""
    import rasterio  # lazy: heavy
    from rasterio.errors import RasterioIOError

    key = d.tile_key(lat0, lon0)
    try:
        with rasterio.open(path) as src:
            size, bounds, geographic = (src.width, src.height), src.bounds, bool(src.crs and src.crs.is_geographic)
            cell = max(abs(src.transform.a), abs(src.transform.e))
    except RasterioIOError:
        raise DataError(f"terrain tile {key} from {url} is not a raster GDAL can read; the source or a "
                        "proxy sent something else (an error page?)") from None
    want = d.expected_size(lat0)
    if size != want:
        raise DataError(f"terrain tile {key} from {url} is {size[0]} x {size[1]} cells, not the "
                        f"{want[0]} x {want[1]} of {d.name}; is --terrain-url the right dataset?")
    expected = (lon0, lat0, lon0 + 1, lat0 + 1)
    if not geographic or any(abs(b - e) > 1.5 * cell for b, e in zip(bounds, expected)):
        raise DataError(f"terrain tile {key} from {url} does not cover {expected} in WGS84 degrees "
                        f"(it covers {tuple(round(b, 5) for b in bounds)})")


def _finish(part: Path, final: Path, d: Dataset, lat0: int, lon0: int, url: str, digest: str) -> str:
    """Check the downloaded ``part`` and rename it to ``final`` (SRTM decompressed first); its SHA-256."""
    if d.kind == "hgt":
        # GDAL reads an HGT file by its name (N45E007.hgt): decompress into a private folder of that name.
        folder = final.parent / f".tmp-{os.getpid()}-{final.stem}"
        folder.mkdir(exist_ok=True)
        plain = folder / final.name
        h = hashlib.sha256()
        try:
            with gzip.open(part, "rb") as src, open(plain, "wb") as dst:
                while chunk := src.read(_CHUNK):
                    dst.write(chunk)
                    h.update(chunk)
        except (OSError, EOFError):
            shutil.rmtree(folder, ignore_errors=True)
            part.unlink(missing_ok=True)
            raise DataError(f"terrain tile {d.tile_key(lat0, lon0)} from {url} is not a gzip-compressed "
                            "HGT file") from None
        try:
            _check_raster(plain, d, lat0, lon0, url)
        except DataError:
            shutil.rmtree(folder, ignore_errors=True)
            part.unlink(missing_ok=True)
            raise
        os.replace(plain, final)
        shutil.rmtree(folder, ignore_errors=True)
        part.unlink(missing_ok=True)
        return h.hexdigest()
    try:
        _check_raster(part, d, lat0, lon0, url)
    except DataError:
        part.unlink(missing_ok=True)
        raise
    os.replace(part, final)
    return digest


def _fetch_one(folder: Path, d: Dataset, base: str, lat0: int, lon0: int, offline: bool,
               progress: Callable[[int], None] | None) -> FetchedTile:
    """Cached tile, downloaded tile or open sea; DataError when it cannot be had."""
    key, url = d.tile_key(lat0, lon0), d.url(base, lat0, lon0)
    final, sea = tile_file(folder, d, lat0, lon0), _sea_marker(folder, d, lat0, lon0, base)
    if final.exists():
        return FetchedTile(key, url, str(final), sha256_of(final), "cached")
    if sea.exists():
        return FetchedTile(key, url, None, None, "sea")
    if offline:
        raise DataError(f"terrain tile {key} is not in the cache")  # gathered by fetch_tiles
    final.parent.mkdir(parents=True, exist_ok=True)
    sea.parent.mkdir(parents=True, exist_ok=True)
    with _tile_lock(final.parent / f"{final.name}.lock"):
        # Another process may have fetched it while we waited for the lock.
        if final.exists():
            return FetchedTile(key, url, str(final), sha256_of(final), "cached")
        if sea.exists():
            return FetchedTile(key, url, None, None, "sea")
        part = final.parent / (Path(d.tile_path(lat0, lon0)).name + ".part")
        timeout_s, backoff_s = _env_float(TIMEOUT_ENV, DEFAULT_TIMEOUT_S), _env_float(BACKOFF_ENV, DEFAULT_BACKOFF_S)
        last: str = ""
        digest: list = []
        for attempt in range(TRIES):
            if attempt:
                time.sleep(backoff_s * 2 ** (attempt - 1))
            try:
                found = _get(url, part, timeout_s, progress, digest)
            except _Transient as exc:
                last = str(exc)
                continue
            if not found:
                part.unlink(missing_ok=True)
                sea.write_text(url + "\n")
                return FetchedTile(key, url, None, None, "sea")
            size = part.stat().st_size
            sha = _finish(part, final, d, lat0, lon0, url, digest[0].hexdigest())
            return FetchedTile(key, url, str(final), sha, "downloaded", size)
        raise DataError(f"could not download terrain tile {key} from {url} after {TRIES} tries "
                        f"(last: {last}); run again to resume, or use --terrain-url for a mirror")


def fetch_tiles(folder: Path, d: Dataset, base: str, origins: list[tuple[int, int]], *, offline: bool = False,
                progress: Callable[[int], None] | None = None) -> list[FetchedTile]:
    """Every tile of ``origins`` from the cache or the source, at most :data:`MAX_PARALLEL` at once."""
    if offline:
        missing = missing_tiles(folder, d, origins, base)
        if missing:
            raise DataError(_offline_message(d, missing, origins))
    if not origins:
        return []
    with ThreadPoolExecutor(max_workers=min(MAX_PARALLEL, len(origins))) as pool:
        futures = [pool.submit(_fetch_one, folder, d, base, la, lo, offline, progress) for la, lo in origins]
        return [f.result() for f in futures]


def _offline_message(d: Dataset, missing: list[str], origins: list[tuple[int, int]]) -> str:
    """One line: which tiles are missing and the command that fetches them."""
    w = min(lo for _, lo in origins)
    s = min(la for la, _ in origins)
    e = max(lo for _, lo in origins) + 1
    n = max(la for la, _ in origins) + 1
    shown = ", ".join(missing[:8]) + (f" and {len(missing) - 8} more" if len(missing) > 8 else "")
    return (f"--offline: {d.name} tile{'s' if len(missing) > 1 else ''} {shown} not in the cache; "
            f"fetch them first with: terrahop terrain fetch {d.name} --bbox {w},{s},{e},{n}")
