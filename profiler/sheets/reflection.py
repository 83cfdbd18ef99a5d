"""The ground reflection on the profile sheet: reflected rays, reflection points and a small level-versus-k plot.

Reads the record's ``reflection`` block (profiler.reflection) and the profile
drawing; draws nothing when the record has no reflection.  The rays are drawn
in the sheet's flat-ray picture at the design k (surface raised by the bulge
d1 d2 / (2 k a), as :mod:`profiler.sheets.drawing`).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..units import EARTH_RADIUS_M
from .content import ProfileDrawing
from .table import DISTANCE_UNITS, HEIGHT_UNITS

__all__ = ["draw_reflection", "REFLECTION_COLOUR", "reflection_note"]

#: Bluish green dash for the reflected rays, apart from the ray (blue) and the worst point (vermillion).
REFLECTION_COLOUR = "#009E73"

#: 1/k ticks of the level plot and their labels.
_K_TICKS = ((0.0, "inf"), (1 / 3, "3"), (0.75, "4/3"), (1.0, "1"), (1.5, "2/3"), (2.0, "0.5"))


def reflection_note(record: dict) -> str:
    """A sentence for the sheet's note under the profile (empty without a reflection)."""
    block = record.get("reflection") or {}
    if not block.get("found"):
        return ""
    return (" Green: the reflected ray at the design k; inset: level against the direct ray alone, "
            "k {:g} to infinity.".format(block["inputs"]["k_min"]))


def draw_reflection(ax: Any, d: ProfileDrawing, record: dict, *, units: str = "m", type_scale: float = 1.0,
                    legend: list | None = None) -> dict:
    """Reflected rays and points on the profile ``ax`` and the level-versus-k inset; returns the artists."""
    block = record.get("reflection") or {}
    out: dict = {}
    if not block.get("found"):
        return out
    u = 1.0 / HEIGHT_UNITS[units]
    per = DISTANCE_UNITS[units][1]
    length = float(d.length_m)
    at = block.get("at_design_k")
    ts = type_scale
    if at:
        ae = d.k * EARTH_RADIUS_M
        xp = at["point_km"] * 1000.0
        yp = at["surface_m"] + xp * (length - xp) / (2.0 * ae)
        xs = np.array([0.0, xp, length]) / per
        ys = np.array([d.antenna_a_amsl_m, yp, d.antenna_b_amsl_m]) * u
        out["rays"], = ax.plot(xs, ys, color=REFLECTION_COLOUR, lw=1.0 * ts, ls=(0, (4, 2)), zorder=6)
        for p in block.get("points_at_design_k", [])[1:]:  # weaker points: markers only
            x = p["point_km"] * 1000.0
            j = int(np.argmin(np.abs(d.distance_m - x)))
            ax.plot([x / per], [(d.surface_m[j] + d.bulge_m[j]) * u], marker="o", ms=3.0 * ts, mfc="white",
                    mec=REFLECTION_COLOUR, mew=0.8 * ts, zorder=7)
        zone = np.linspace(at["first_fresnel_zone_km"][0], at["first_fresnel_zone_km"][1], 50) * 1000.0
        zone_y = (at["surface_m"] + at["surface_slope"] * (zone - xp)
                  + zone * (length - zone) / (2.0 * ae)) * u
        out["zone"], = ax.plot(zone / per, zone_y, color=REFLECTION_COLOUR, lw=2.6 * ts, alpha=0.55,
                               solid_capstyle="butt", zorder=5)
        out["point"], = ax.plot([xp / per], [yp * u], marker="o", ms=4.0 * ts, color=REFLECTION_COLOUR, zorder=8)
        if legend is not None:
            from matplotlib.lines import Line2D

            legend.append(Line2D([], [], color=REFLECTION_COLOUR, lw=1.0 * ts, ls=(0, (4, 2)), marker="o",
                                 ms=3.5 * ts, label=f"reflected ray, zone and point (k = {_k_label(d.k)})"))
    curve = block.get("curve")
    if curve:
        out["inset"] = _level_inset(ax, curve, block, d.k, ts)
    return out


def _k_label(k: float) -> str:
    from .table import format_k

    return format_k(k)


def _level_inset(ax: Any, curve: dict, block: dict, k_design: float, ts: float) -> Any:
    """The level-versus-k plot in a band added above the profile (the profile's own space is left alone)."""
    bottom, top = ax.get_ylim()
    ax.set_ylim(bottom, top + 0.55 * (top - bottom))  # the band: above every drawn line
    left, width = _free_place(ax, (0.62, 0.97))
    inset = ax.inset_axes([left, 0.66, width, 0.22])
    inv_k = np.asarray(curve["inverse_k"], dtype=float)
    level = np.asarray(curve["level_change_db"], dtype=float)
    order = np.argsort(inv_k)
    inset.plot(inv_k[order], level[order], color=REFLECTION_COLOUR, lw=0.9 * ts)
    margin = block.get("fade_margin_db")
    fs = 5.2 * ts
    if margin is not None and math.isfinite(margin) and margin > 0:
        inset.axhline(-margin, color="#D55E00", lw=0.7 * ts, ls=(0, (3, 2)))
        inset.text(2.0, -margin, " -fade margin", color="#D55E00", fontsize=fs, va="top", ha="left",
                   clip_on=False)
    inset.axhline(0.0, color="#8C8C8C", lw=0.5 * ts)
    inset.axvline(1.0 / k_design, color="#595959", lw=0.6 * ts, ls=":")
    inset.set_xlim(0.0, 2.0)
    low = min(float(level.min()), -(margin or 0.0)) if margin and margin > 0 else float(level.min())
    inset.set_ylim(low - 3.0, max(float(level.max()), 0.0) + 3.0)
    inset.set_xticks([t for t, _ in _K_TICKS])
    inset.set_xticklabels([lab for _, lab in _K_TICKS])
    inset.tick_params(labelsize=fs, length=2.0 * ts, pad=1.0, width=0.5)
    inset.xaxis.tick_top()
    inset.text(-0.04, 1.03, "k", transform=inset.transAxes, fontsize=fs, ha="right", va="bottom")
    inset.set_ylabel("dB", fontsize=fs, labelpad=1.0)
    for side in inset.spines.values():
        side.set_linewidth(0.5)
    inset.set_facecolor("white")
    inset.text(1.02, 1.0, f"level against\nthe direct ray\nswing {block['swing_db']:.1f} dB",
               transform=inset.transAxes, fontsize=fs, color="#1A1A1A", ha="left", va="top", linespacing=1.1)
    return inset


#: Room kept right of the inset for its caption and the fade-margin word, and left of it for its tick
#: labels (clear of the profile's own), as fractions of the profile's width.
_CAPTION_W, _TICKS_W = 0.12, 0.07


def _free_place(ax: Any, band: tuple[float, float]) -> tuple[float, float]:
    """(left, width) of the inset, axes fractions, in the height ``band`` where no text of ``ax`` lies.

    The widest of a few widths that fits clear of the labels with their arrows, then of the label boxes
    alone; failing both, the narrowest at the least covered place.
    """
    from matplotlib.text import Text

    renderer = ax.figure.canvas.get_renderer()
    to_axes = ax.transAxes.inverted()

    def spans(with_arrows: bool) -> list[tuple[float, float]]:
        out = []
        for text in ax.texts:
            if not text.get_visible() or not text.get_text():
                continue
            box = text.get_window_extent(renderer) if with_arrows else Text.get_window_extent(text, renderer)
            (x0, y0), (x1, y1) = to_axes.transform(box.get_points())
            if y1 >= band[0] and y0 <= band[1]:
                out.append((x0 - 0.01, x1 + 0.01))
        return out

    def lefts(width: float) -> list[float]:
        return sorted(np.arange(_TICKS_W, 0.99 - width - _CAPTION_W, 0.01), key=lambda v: abs(v - 0.32))

    for with_arrows in (True, False):
        boxes = spans(with_arrows)
        for width in (0.36, 0.30, 0.25, 0.20):
            for left in lefts(width):
                lo, hi = left - _TICKS_W, left + width + _CAPTION_W
                if all(hi <= b0 or lo >= b1 for b0, b1 in boxes):
                    return float(left), width
    boxes = spans(False)
    width = 0.20
    return float(min(lefts(width), key=lambda v: sum(max(0.0, min(v + width + _CAPTION_W, b1) - max(v - _TICKS_W, b0))
                                                    for b0, b1 in boxes))), width
