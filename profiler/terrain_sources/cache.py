"""Where fetched tiles live: ``TERRAHOP_CACHE`` or the user cache folder, one folder per dataset."""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import DataFileError

__all__ = ["CACHE_ENV", "cache_root", "dataset_folder", "check_writable"]

#: Environment variable naming the cache folder.
CACHE_ENV = "TERRAHOP_CACHE"


def cache_root() -> Path:
    """The cache folder: ``TERRAHOP_CACHE`` when set, else platformdirs' user cache folder for terrahop."""
    given = os.environ.get(CACHE_ENV)
    if given:
        return Path(given).expanduser()
    import platformdirs  # lazy: only when terrain is fetched

    return Path(platformdirs.user_cache_dir("terrahop", appauthor=False))


def dataset_folder(root: Path, name: str) -> Path:
    """Folder of one dataset's tiles under the cache root."""
    return root / "terrain" / name


def check_writable(folder: Path) -> None:
    """Make ``folder``; DataFileError naming it and ``TERRAHOP_CACHE`` when it cannot be written."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        probe = folder / f".write-test-{os.getpid()}"
        probe.write_bytes(b"")
        probe.unlink()
    except OSError as exc:
        reason = exc.strerror or exc.__class__.__name__
        raise DataFileError(f"cannot write the terrain cache folder {folder} ({reason}); set {CACHE_ENV} "
                            "to a folder you can write, or run with --offline on tiles already cached") from None
