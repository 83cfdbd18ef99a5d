"""Where the invented demo data lives: in the installed package, or in a clone of the repository.

A wheel carries the repository's ``data/`` and ``examples/`` folders as
``profiler/_demo/data`` and ``profiler/_demo/examples`` (copied by the build
step in ``setup.py``); a clone or an editable install has them at the top of
the repository.  The installed copy is looked for first.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["INSTALLED_DEMO_ROOT", "REPOSITORY_ROOT", "demo_root", "demo_path"]

#: Where a wheel puts the demo folders (inside the package).
INSTALLED_DEMO_ROOT = Path(__file__).resolve().parent / "_demo"
#: The top of the repository when the package runs from a clone.
REPOSITORY_ROOT = Path(__file__).resolve().parents[1]


def demo_root() -> Path:
    """Folder holding ``data/`` and ``examples/``: the installed copy if there is one, else the repository's."""
    if (INSTALLED_DEMO_ROOT / "examples").is_dir():
        return INSTALLED_DEMO_ROOT
    return REPOSITORY_ROOT


def demo_path(*parts: str) -> Path:
    """Path of a demo file, e.g. ``demo_path("data", "demo", "terrain.tif")``.

    The file need not exist (the caller's open names it if it is missing).
    """
    return demo_root().joinpath(*parts)
