"""A byte counter on stderr while terrain tiles download (shown on a terminal only)."""

from __future__ import annotations

import sys
from typing import Any

__all__ = ["progress_bar"]


class _Progress:
    """Bytes received, with a spinner, on stderr when it is a terminal (rich); nothing otherwise."""

    def __init__(self) -> None:
        self.bar: Any = None
        if sys.stderr.isatty():
            from rich.console import Console
            from rich.progress import DownloadColumn, Progress, SpinnerColumn, TextColumn

            self.bar = Progress(SpinnerColumn(), TextColumn("fetching terrain tiles"), DownloadColumn(),
                                console=Console(stderr=True), transient=True)
            self.task = self.bar.add_task("bytes", total=None)

    def __enter__(self) -> "_Progress":
        if self.bar is not None:
            self.bar.start()
        return self

    def __exit__(self, *exc: object) -> None:
        if self.bar is not None:
            self.bar.stop()

    def __call__(self, n_bytes: int) -> None:
        if self.bar is not None:
            self.bar.advance(self.task, n_bytes)


def progress_bar() -> _Progress:
    """A byte counter on stderr shown only on a terminal; call it with each count of bytes."""
    return _Progress()
