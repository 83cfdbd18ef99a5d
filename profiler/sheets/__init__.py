"""Profile sheets: one page per link for permits and landlords (matplotlib, lazy).

``content`` and ``table`` are pure; ``build`` reads the map window and hashes
rasters; ``drawing``, ``minimap`` and ``page`` draw with matplotlib, imported
inside the functions that use it.
"""

from __future__ import annotations

from .build import sheet_contents
from .content import SheetContent, TitleBlock
from .page import CAUTION, FORMATS, sheet_paths, write_sheets
from .style import PAGE_SIZES_MM

__all__ = ["SheetContent", "TitleBlock", "CAUTION", "FORMATS", "PAGE_SIZES_MM", "sheet_paths", "write_sheets",
           "sheet_contents"]

