"""The profile drawing of one link on a matplotlib Axes.

The drawing is flat-ray: the radio ray is a straight line and the terrain is
raised by the earth bulge h = d1 d2 / (2 k a), a = 6371 km (handbook form,
ITU-R P.453-14 / P.526-15 effective earth radius).  The terrain at the
worst-case k is drawn as a dashed line on the same axes.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..geometry import fresnel_radius_m
from .content import CLUTTER_KINDS, ProfileDrawing
from .style import COLOURS
from .table import DISTANCE_UNITS, HEIGHT_UNITS, distance_text, format_k, height_text

__all__ = ["ProfileArtists", "draw_profile", "wall_samples", "curvature_note", "vertical_exaggeration", "profile_limits_m"]

_CLUTTER_STYLE: dict[str, dict[str, Any]] = {  # matplotlib keyword arguments (colours, hatch, widths)
    "buildings": dict(facecolor="#C9C9C9", edgecolor="#3D3D3D", hatch="////", linewidth=0.5),
    "trees": dict(facecolor=COLOURS["trees"], edgecolor="#00664A", hatch="oo", linewidth=0.5, alpha=0.55),
    "surface model": dict(facecolor=COLOURS["surface model"], edgecolor="#8A8200", linewidth=0.5, alpha=0.7),
    "clutter": dict(facecolor="#BDBDBD", edgecolor="#4D4D4D", hatch="xx", linewidth=0.5),
}


@dataclass
class ProfileArtists:
    """Handles of the drawn elements (for the legend and for tests)."""

    legend: list
    worst_marker: Any
    worst_label: Any
    clutter: dict
    y_limits: tuple[float, float]
    lines: dict
    mast_labels: list | None = None


def wall_samples(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Indices that repeat the first and last sample of every run of ``mask``, and which copies sit on the ground.

    Drawing ``a[idx]`` with the flagged copies at ground height gives an
    obstruction vertical walls at its first and last sample (the footprint
    edges, where the profile has them), instead of slopes to the neighbours.
    """
    mask = np.asarray(mask, dtype=bool)
    start = mask & ~np.r_[False, mask[:-1]]
    end = mask & ~np.r_[mask[1:], False]
    reps = 1 + start.astype(int) + end.astype(int)
    idx = np.repeat(np.arange(mask.size), reps)
    first = np.cumsum(reps) - reps
    zero = np.zeros(idx.size, dtype=bool)
    zero[first[start]] = True
    zero[(first + reps - 1)[end]] = True
    return idx, zero


def curvature_note(d: ProfileDrawing) -> str:
    """One sentence saying how the earth's curvature is drawn."""
    return (
        f"Earth curvature: the ray is drawn straight and the terrain raised by the earth bulge "
        f"d1·d2/(2·k·6371 km) at the design k = {format_k(d.k)} (shaded ground, curved base line); "
        f"the dashed line is the terrain at the worst-case k = {format_k(d.k_worst)}."
    )


def profile_limits_m(d: ProfileDrawing) -> tuple[float, float, float]:
    """Bottom, top and base-curve offset (m) of the drawing's vertical axis."""
    surf_d = d.surface_m + d.bulge_m
    surf_w = d.surface_m + d.bulge_worst_m
    low = float(np.nanmin(d.ground_m))
    high = float(np.nanmax(np.concatenate([
        d.line_m + d.f1_m, surf_d, surf_w, [d.antenna_a_amsl_m, d.antenna_b_amsl_m],
    ])))
    span = max(high - low, 10.0)
    bottom = low - 0.10 * span
    top = high + 0.34 * span
    return bottom, top, span


@dataclass
class _Frame:
    """The drawing's arrays in display units (distance unit along, height unit up) and its type scale."""

    u: float  # display height units per metre
    ts: float  # line and type scale
    fs: float  # base font size, points
    x: np.ndarray  # sample distances
    base: np.ndarray  # curved datum line at the design k
    ground: np.ndarray
    surface: np.ndarray  # ground plus clutter, design k
    surface_w: np.ndarray  # ground plus clutter, worst-case k
    line: np.ndarray
    xs: np.ndarray  # dense grid for the ray and the Fresnel zone
    line_s: np.ndarray
    f1_s: np.ndarray
    kd: str
    kw: str


def _frame(d: ProfileDrawing, units: str, type_scale: float) -> _Frame:
    """Heights with the earth bulge in display units; the ray and F1 on a dense grid."""
    u = 1.0 / HEIGHT_UNITS[units]
    dist_per_m = DISTANCE_UNITS[units][1]
    x = d.distance_m / dist_per_m
    bottom_m, _, _ = profile_limits_m(d)
    line = d.line_m * u
    # The ray and the Fresnel zone are smooth: draw them on a dense grid, not only at terrain samples.
    xs = np.linspace(0.0, x[-1], max(600, len(x)))
    line_s = np.interp(xs, x, line)
    if np.isfinite(d.freq_ghz):
        f1_s = fresnel_radius_m(xs * dist_per_m, np.maximum(d.length_m - xs * dist_per_m, 0.0), d.freq_ghz) * u
    else:
        f1_s = np.interp(xs, x, d.f1_m * u)
    return _Frame(
        u=u, ts=type_scale, fs=7.0 * type_scale, x=x, base=(bottom_m + d.bulge_m) * u,
        ground=(d.ground_m + d.bulge_m) * u, surface=(d.surface_m + d.bulge_m) * u,
        surface_w=(d.surface_m + d.bulge_worst_m) * u, line=line, xs=xs, line_s=line_s, f1_s=f1_s,
        kd=format_k(d.k), kw=format_k(d.k_worst),
    )


def draw_profile(ax: Any, d: ProfileDrawing, record: dict, *, units: str = "m",
                 type_scale: float = 1.0, datum_label: str = "") -> ProfileArtists:
    """Draw terrain, clutter, ray, Fresnel zone, masts and the worst point on ``ax``.

    Heights are shown in ``units`` ("m" or "ft"); distances from site a in km (or miles with "ft").
    """
    f = _frame(d, units, type_scale)
    legend: list = []
    lines: dict = {}
    _draw_terrain(ax, f, legend, lines)
    from .confidence import draw_uncertainty_band

    draw_uncertainty_band(ax, d, f, legend, record)
    clutter_artists = _draw_clutter(ax, d, f, legend)
    _draw_worst_surface(ax, d, f, legend, lines)
    _draw_fresnel(ax, d, f, legend, lines)
    mast_labels, mast_tops = _draw_masts(ax, d, f, record, units, legend)
    marker, worst_label = _draw_worst_point(ax, d, f, record, units, legend)
    bottom_m, top_m, _ = profile_limits_m(d)
    j = d.worst_index
    ax.set_xlim(0.0, f.x[-1])
    ax.set_ylim(bottom_m * f.u, top_m * f.u)
    keep_out = _KeepOut(f.xs, f.line_s, f.f1_s, f.x, np.maximum(f.surface, f.surface_w), worst_label,
                        (f.x[j], min(f.surface[j], f.line[j]), max(f.surface[j], f.line[j])))
    _place_mast_labels(ax, mast_labels, mast_tops, keep_out)
    _style_axes(ax, f, units, datum_label)
    return ProfileArtists(legend, marker, worst_label, clutter_artists, (bottom_m * f.u, top_m * f.u), lines,
                          mast_labels)


def _draw_terrain(ax: Any, f: _Frame, legend: list, lines: dict) -> None:
    """Terrain at the design k, filled down to the curved base line."""
    from matplotlib.patches import Patch

    ax.fill_between(f.x, f.base, f.ground, facecolor=COLOURS["ground_fill"], edgecolor="none", zorder=1)
    lines["ground"], = ax.plot(f.x, f.ground, color=COLOURS["ground_edge"], lw=0.9 * f.ts, zorder=3)
    lines["base"], = ax.plot(f.x, f.base, color=COLOURS["datum"], lw=0.7 * f.ts, zorder=3)
    legend.append(Patch(facecolor=COLOURS["ground_fill"], edgecolor=COLOURS["ground_edge"], lw=0.8 * f.ts,
                        label=f"terrain at design k = {f.kd}"))


def _draw_clutter(ax: Any, d: ProfileDrawing, f: _Frame, legend: list) -> dict:
    """Obstructions (buildings, trees, surface model) on top of the ground, one fill per kind."""
    from matplotlib.patches import Patch

    clutter_artists: dict = {}
    has_clutter = d.clutter_m > 0
    if not has_clutter.any():
        return clutter_artists
    if d.clutter_kind is None:
        kinds = {"clutter": has_clutter}
    else:
        kinds = {}
        for code in np.unique(d.clutter_kind[has_clutter]):
            name = CLUTTER_KINDS.get(int(code), "clutter")
            kinds[name] = kinds.get(name, np.zeros_like(has_clutter)) | (has_clutter & (d.clutter_kind == code))
    for name, mask in kinds.items():
        style = _CLUTTER_STYLE.get(name, _CLUTTER_STYLE["clutter"])
        idx, zero = wall_samples(mask)
        top = np.where(zero, f.ground[idx], f.surface[idx])
        clutter_artists[name] = ax.fill_between(f.x[idx], f.ground[idx], top, where=mask[idx], zorder=2, **style)
        label = "obstructions" if name == "clutter" else name
        legend.append(Patch(label=label, **{k: v for k, v in style.items() if k != "linewidth"}))
    return clutter_artists


def _draw_worst_surface(ax: Any, d: ProfileDrawing, f: _Frame, legend: list, lines: dict) -> None:
    """The worst-case surface, with the same vertical walls at obstruction edges."""
    from matplotlib.lines import Line2D

    idx, zero = wall_samples(d.clutter_m > 0)
    surface_w_drawn = np.where(zero, ((d.ground_m + d.bulge_worst_m) * f.u)[idx], f.surface_w[idx])
    lines["worst_k"], = ax.plot(f.x[idx], surface_w_drawn, color=COLOURS["worst_k"], lw=1.0 * f.ts,
                                ls=(0, (4, 2)), zorder=4)
    legend.append(Line2D([], [], color=COLOURS["worst_k"], lw=1.0 * f.ts, ls=(0, (4, 2)),
                         label=f"terrain at worst-case k = {f.kw}"))
    legend.append(Line2D([], [], color=COLOURS["datum"], lw=0.7 * f.ts, label=f"earth curvature, k = {f.kd}"))


def _draw_fresnel(ax: Any, d: ProfileDrawing, f: _Frame, legend: list, lines: dict) -> None:
    """First Fresnel zone around the straight line, the criterion boundary and the line itself."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    ts, xs, line_s, f1_s = f.ts, f.xs, f.line_s, f.f1_s
    ax.fill_between(xs, line_s - f1_s, line_s + f1_s, facecolor=COLOURS["fresnel"], alpha=0.22, lw=0 * ts, zorder=2.5)
    lines["f1_upper"], = ax.plot(xs, line_s + f1_s, color=COLOURS["fresnel"], lw=0.6 * ts, zorder=4)
    lines["f1_lower"], = ax.plot(xs, line_s - f1_s, color=COLOURS["fresnel"], lw=0.6 * ts, zorder=4)
    legend.append(Patch(facecolor=COLOURS["fresnel"], alpha=0.35, edgecolor=COLOURS["fresnel"],
                        label="first Fresnel zone (F1)"))
    frac = d.criterion_f1_fraction
    if frac > 0:
        lines["criterion"], = ax.plot(xs, line_s - frac * f1_s, color=COLOURS["criterion"], lw=1.1 * ts,
                                      ls=(0, (1.5, 1.5)), zorder=5)
        legend.append(Line2D([], [], color=COLOURS["criterion"], lw=1.1 * ts, ls=(0, (1.5, 1.5)),
                             label=f"{frac:g} F1 below the line (criterion)"))
    lines["line"], = ax.plot(xs, line_s, color=COLOURS["line"], lw=1.4 * ts, zorder=6)
    legend.append(Line2D([], [], color=COLOURS["line"], lw=1.4 * ts, label="line between antenna centres"))


def _draw_masts(ax: Any, d: ProfileDrawing, f: _Frame, record: dict, units: str,
                legend: list) -> tuple[list, list]:
    """Masts, each labelled with its antenna height above ground (or roof) at mid-height."""
    from matplotlib.lines import Line2D

    ts, u, x = f.ts, f.u, f.x
    a_rec, b_rec = record["sites"]["a"], record["sites"]["b"]
    mast_labels: list = []
    mast_tops: list = []
    for xi, g, top, rec, ha, dx in (
        (x[0], d.ground_a_m * u, d.antenna_a_amsl_m * u, a_rec, "left", 5),
        (x[-1], d.ground_b_m * u, d.antenna_b_amsl_m * u, b_rec, "right", -5),
    ):
        # A mast on a roof stands on the roof; its label gives the height above the roof.
        if rec.get("roof_m") is not None and rec.get("antenna_above_roof_m") is not None:
            g = float(rec["roof_m"]) * u
            label = f"{height_text(rec['antenna_above_roof_m'], units)} above roof"
        else:
            label = f"{height_text(rec['antenna_agl_m'], units)} above ground"
        ax.plot([xi, xi], [g, top], color=COLOURS["mast"], lw=2.4 * ts, solid_capstyle="butt", zorder=7)
        ax.plot([xi], [top], marker="D", ms=4.5 * ts, color=COLOURS["mast"], zorder=8, clip_on=False)
        mast_labels.append(ax.annotate(
            label, xy=(xi, (g + top) / 2), xytext=(dx, 0),
            textcoords="offset points", ha=ha, va="center", fontsize=f.fs * 0.95, color=COLOURS["ink"], zorder=9,
            bbox=dict(boxstyle="square,pad=0.15", fc="white", ec="none", alpha=0.85),
        ))
        mast_tops.append((xi, g, top, dx))
    legend.append(Line2D([], [], color=COLOURS["mast"], lw=2.4 * ts, marker="D", ms=4 * ts,
                         label="mast and antenna"))
    return mast_labels, mast_tops


def _draw_worst_point(ax: Any, d: ProfileDrawing, f: _Frame, record: dict, units: str,
                      legend: list) -> tuple[Any, Any]:
    """The worst point at the design k, its clearance line and its label: (marker, label)."""
    from matplotlib.lines import Line2D

    ts, x, surface, line = f.ts, f.x, f.surface, f.line
    j = d.worst_index
    c = record["clearance"]
    blocked = not c["line_of_sight"]
    ax.plot([x[j], x[j]], [surface[j], line[j]], color=COLOURS["worst_point"], lw=1.6 * ts, zorder=8)
    marker, = ax.plot([x[j]], [surface[j]], marker="o", ms=6 * ts, mfc=COLOURS["worst_point"],
                      mec="white", mew=0.8 * ts, ls="none", zorder=9)
    legend.append(Line2D([], [], color=COLOURS["worst_point"], lw=1.6 * ts, marker="o", ms=5 * ts,
                         mfc=COLOURS["worst_point"], mec="white", label="worst point and its clearance"))
    head = "OBSTRUCTED" if blocked else "worst point"
    text = (
        f"{head} at k = {f.kd}: {distance_text(c['worst_distance_km'], units)} from a\n"
        f"clearance {height_text(c['worst_clearance_m'], units, signed=True)} = {c['worst_f1_fraction']:+.2f} F1"
    )
    if blocked:
        text += " (surface above the line)"
    length = x[-1]
    xa = min(max(x[j] / length, 0.28), 0.72) if length > 0 else 0.5
    worst_label = ax.annotate(
        text, xy=(x[j], max(surface[j], line[j])), xytext=(xa, 0.955), textcoords="axes fraction",
        ha="center", va="top", fontsize=f.fs, color=COLOURS["ink"], zorder=10,
        bbox=dict(boxstyle="round,pad=0.3", fc="white", ec=COLOURS["worst_point"], lw=0.8 * ts),
        arrowprops=dict(arrowstyle="-|>", color=COLOURS["worst_point"], lw=0.8 * ts, shrinkA=0, shrinkB=4),
    )
    return marker, worst_label


def _style_axes(ax: Any, f: _Frame, units: str, datum_label: str) -> None:
    """Axis labels, ticks, grid and spines."""
    fs, ts = f.fs, f.ts
    ax.set_xlabel(f"Distance from site a, {DISTANCE_UNITS[units][0]}", fontsize=fs * 1.05, labelpad=2)
    ylabel = f"Elevation, {units}"
    if datum_label:
        ylabel += f" ({datum_label})"
    ax.set_ylabel(ylabel, fontsize=fs * 1.05, labelpad=3)
    ax.tick_params(labelsize=fs * 0.95, length=2.5, width=0.6, pad=2)
    ax.minorticks_on()
    ax.grid(True, which="major", color=COLOURS["rule"], lw=0.45 * ts, alpha=0.8)
    ax.grid(True, which="minor", color=COLOURS["rule"], lw=0.25 * ts, alpha=0.45)
    ax.set_axisbelow(True)
    for spine in ax.spines.values():
        spine.set_linewidth(0.7)


@dataclass
class _KeepOut:
    """What a mast label must not cover: the Fresnel zone (with the ray and the criterion line inside
    it), the surface lines, the worst point and its label.  Drawing units (km or mi, height unit)."""

    xs: np.ndarray
    line: np.ndarray
    f1: np.ndarray
    x: np.ndarray
    surface: np.ndarray
    worst_label: Any
    worst: tuple[float, float, float]

    def hits(self, ax: Any, box: Any, others: list) -> bool:
        """True if the pixel box ``box`` covers any of it, leaves the axes, or covers ``others``."""
        renderer = ax.figure.canvas.get_renderer()
        frame = ax.get_window_extent(renderer)
        if box.x0 < frame.x0 or box.x1 > frame.x1 or box.y0 < frame.y0 or box.y1 > frame.y1:
            return True
        (x0, y0), (x1, y1) = ax.transData.inverted().transform([(box.x0, box.y0), (box.x1, box.y1)])
        pad_px = 2.0
        (_, dy0), (_, dy1) = ax.transData.inverted().transform([(0, 0), (0, pad_px)])
        pad = abs(dy1 - dy0)
        y0, y1 = y0 - pad, y1 + pad
        inside = (self.xs >= x0) & (self.xs <= x1)
        lo, hi = self.line - self.f1, self.line + self.f1
        band = np.r_[np.interp([x0, x1], self.xs, lo), lo[inside]], np.r_[np.interp([x0, x1], self.xs, hi), hi[inside]]
        if np.any((band[0] < y1) & (band[1] > y0)):
            return True
        inside = (self.x >= x0) & (self.x <= x1)
        surf = np.r_[np.interp([x0, x1], self.x, self.surface), self.surface[inside]]
        if np.any((surf > y0) & (surf < y1)):  # a surface line crosses the box
            return True
        xw, w_lo, w_hi = self.worst
        if x0 <= xw <= x1 and w_lo < y1 and w_hi > y0:
            return True
        for other in [self.worst_label, *others]:
            if other is not None and other.get_visible() and box.overlaps(other.get_window_extent(renderer)):
                return True
        return False


def _place_mast_labels(ax: Any, labels: list, masts: list, keep_out: _KeepOut) -> None:
    """Put each mast label where it covers neither the Fresnel zone, the ray, the criterion line,
    the surface nor the worst point: beside the mast, then above the zone, then near the foot.
    A label with no free place is hidden; the heading above the drawing states the same heights."""
    renderer = ax.figure.canvas.get_renderer()
    placed: list = []
    for label, (xi, foot, top, dx) in zip(labels, masts):
        mid = (xi, (foot + top) / 2)
        candidates = [(mid, (dx, 0), "center")]
        candidates += [((xi, top), (dx, 4 + 5 * n), "bottom") for n in range(12)]
        candidates += [((xi, foot), (dx, 3), "bottom"), ((xi, foot), (dx, -3), "top")]
        candidates += [((xi, top), (dx, -4 - 5 * n), "top") for n in range(12)]
        for xy, offset, va in candidates:
            label.xy = xy
            label.set_position(offset)
            label.set_verticalalignment(va)
            label.set_rotation(0)
            if not keep_out.hits(ax, label.get_window_extent(renderer), placed):
                placed.append(label)
                break
        else:
            label.set_visible(False)


def vertical_exaggeration(ax: Any, units: str = "m") -> float:
    """Ratio of the drawing's vertical to horizontal scale (metres per inch along each axis)."""
    bbox = ax.get_window_extent().transformed(ax.figure.dpi_scale_trans.inverted())
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    horiz = (x1 - x0) * DISTANCE_UNITS[units][1] / bbox.width
    vert = (y1 - y0) * HEIGHT_UNITS[units] / bbox.height
    return horiz / vert if vert > 0 else float("nan")
