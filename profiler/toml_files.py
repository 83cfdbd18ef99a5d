"""Reading the TOML files terrahop takes (link files, radio profiles, antenna files), with one wording of errors."""

from __future__ import annotations

import os
import tomllib
from pathlib import Path
from typing import Any

from .errors import DataFileError, InputError

__all__ = ["read_toml"]


def read_toml(path: str | os.PathLike, what: str) -> tuple[Path, dict[str, Any]]:
    """The path and the parsed table of a TOML file that holds ``what`` (e.g. "link file").

    DataFileError when the file is missing; InputError naming the file when it
    is not valid TOML or not text.
    """
    p = Path(path)
    if not p.is_file():
        raise DataFileError(f"{what} not found: {p}")
    try:
        return p, tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{p}: not a valid TOML {what}: {exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{p}: not a text file (expected a TOML {what})") from None
