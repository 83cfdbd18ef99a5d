"""Colours, page sizes and type sizes of terrahop sheets.

Colours come from the Okabe-Ito set (Okabe & Ito, "Color Universal Design",
2008), which stays distinct for the common colour-vision deficiencies, plus
neutral greys and a light earth tone that print well in black and white.
Every symbol also differs by line style or hatching, not only by colour.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["PAGE_SIZES_MM", "COLOURS", "PageSize", "page_size", "RC_PARAMS"]

MM_PER_INCH = 25.4

#: Landscape page sizes, width x height in millimetres.
PAGE_SIZES_MM: dict[str, tuple[float, float]] = {
    "a4": (297.0, 210.0),
    "letter": (279.4, 215.9),
    "a3": (420.0, 297.0),
}

#: Named colours of the sheet (Okabe-Ito hues where a hue is needed).
COLOURS: dict[str, str] = {
    "ink": "#1A1A1A",
    "muted": "#595959",
    "rule": "#B3B3B3",
    "band": "#F2F2F2",
    "ground_fill": "#E3D5B8",
    "ground_edge": "#6E5A3A",
    "datum": "#8C8C8C",
    "worst_k": "#CC79A7",  # reddish purple
    "line": "#0072B2",  # blue
    "fresnel": "#56B4E9",  # sky blue
    "criterion": "#E69F00",  # orange
    "worst_point": "#D55E00",  # vermillion
    "good": "#009E73",  # bluish green
    "bad": "#D55E00",  # vermillion
    "buildings": "#6B6B6B",
    "trees": "#009E73",  # bluish green
    "surface model": "#F0E442",  # yellow
    "clutter": "#9E9E9E",
    "mast": "#1A1A1A",
    "site_a": "#0072B2",
    "site_b": "#D55E00",
}

#: matplotlib settings every sheet is drawn with: text stays text in PDF and SVG.
RC_PARAMS: dict[str, object] = {
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "axes.unicode_minus": False,
    "hatch.linewidth": 0.6,
    "pdf.compression": 6,
}


@dataclass(frozen=True)
class PageSize:
    """A landscape page: name, width and height in mm, and the type scale against A4."""

    name: str
    width_mm: float
    height_mm: float

    @property
    def size_in(self) -> tuple[float, float]:
        return self.width_mm / MM_PER_INCH, self.height_mm / MM_PER_INCH

    @property
    def scale(self) -> float:
        """Factor applied to A4 type sizes so text keeps its place on other pages."""
        return min(self.width_mm / 297.0, self.height_mm / 210.0)


def page_size(name: str) -> PageSize:
    """The landscape page called ``name`` (a4, letter, a3); ValueError lists the choices."""
    key = name.strip().lower()
    if key not in PAGE_SIZES_MM:
        raise ValueError(f"unknown page size {name!r}; use one of {', '.join(PAGE_SIZES_MM)}")
    w, h = PAGE_SIZES_MM[key]
    return PageSize(key, w, h)
