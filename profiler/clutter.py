"""Clutter kinds: what stands on the ground at a profile sample (no dependencies)."""

from __future__ import annotations

import enum

__all__ = ["ClutterKind"]


class ClutterKind(enum.IntEnum):
    """What stands on the ground at a sample: the codes of ``Profiles.clutter_kind``.

    ``label`` is the word of the JSON records and crossing lists, ``legend``
    the word of the sheets' legend.  The one definition of clutter kinds.
    """

    NONE = 0
    BUILDING = 1
    TREES = 2
    SURFACE_MODEL = 3

    @property
    def label(self) -> str:
        return _CLUTTER_LABELS[self]

    @property
    def legend(self) -> str:
        return _CLUTTER_LEGENDS[self]


_CLUTTER_LABELS = {ClutterKind.NONE: "none", ClutterKind.BUILDING: "building", ClutterKind.TREES: "trees",
                   ClutterKind.SURFACE_MODEL: "surface model"}
_CLUTTER_LEGENDS = {ClutterKind.NONE: "none", ClutterKind.BUILDING: "buildings", ClutterKind.TREES: "trees",
                    ClutterKind.SURFACE_MODEL: "surface model"}
