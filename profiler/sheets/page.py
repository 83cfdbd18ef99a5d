"""Page layout of a profile sheet and writing sheets to PDF, PNG or SVG.

One landscape page per link: a header with the verdict, the profile
drawing, the parameter table, the small map, drawing notes with the
provenance of the elevation data, a caution and the title block.  The
layout is defined in millimetres on A4 and scaled to the other page sizes.
"""

from __future__ import annotations

import re
import textwrap
from pathlib import Path
from typing import Any, Sequence

from .content import SheetContent
from .drawing import curvature_note, draw_profile, vertical_exaggeration
from .minimap import draw_minimap
from .modulation import modulation_pages, modulation_rows
from .notes import (
    CONT_COLUMNS as _CONT_COLUMNS,
    CONT_ROWS as _CONT_ROWS,
    continuation_pages,
    drawing_notes,
    feature_height as _feature_height,
    obstruction_note as _obstruction_note,  # noqa: F401  (older name, used by tests)
    source_lines,
    span_text as _span_text,
)
from .style import COLOURS, RC_PARAMS, PageSize, page_size
from ..vertical import datum_of_record
from .table import Row, above_datum_label, distance_text, format_k, height_text, parameter_rows
from .installation import HEADING_SHIFT_MM, installation_note, site_line
from .reflection import draw_reflection, reflection_note

__all__ = ["FORMATS", "CAUTION", "render_page", "render_continuation", "continuation_pages", "write_sheets",
           "sheet_paths"]

#: Output formats: PDF holds every link as one page; PNG and SVG write one file per link.
FORMATS = ("pdf", "png", "svg")

#: The caution printed on every sheet.
CAUTION = (
    "This drawing is an engineering aid computed from elevation data; it is not a survey. "
    "Positions, ground elevations, antenna heights and obstructions must be verified on site "
    "before design or construction. RF exposure, work on towers and roofs, and structural "
    "matters are governed by local codes and must be assessed by licensed professionals."
)

_A4 = (297.0, 210.0)


class _Layout:
    """Millimetre boxes on an A4 reference page, mapped to figure fractions of any page."""

    def __init__(self, page: PageSize) -> None:
        self.page = page
        self.s = page.scale

    def rect(self, x_mm: float, y_mm: float, w_mm: float, h_mm: float) -> list[float]:
        return [x_mm / _A4[0], y_mm / _A4[1], w_mm / _A4[0], h_mm / _A4[1]]

    def xy(self, x_mm: float, y_mm: float) -> tuple[float, float]:
        return x_mm / _A4[0], y_mm / _A4[1]

    def fs(self, size_pt: float) -> float:
        return size_pt * self.s

    def width_pt(self, w_mm: float) -> float:
        """Width in points on the real page of a box ``w_mm`` wide on the reference page."""
        return w_mm / _A4[0] * self.page.width_mm / 25.4 * 72.0


def _wrap(text: str, width_mm: float, size_pt: float, lay: _Layout) -> str:
    """Wrap ``text`` to fit a box (about 0.56 em per character in DejaVu Sans)."""
    chars = max(10, int(lay.width_pt(width_mm) / (0.56 * lay.fs(size_pt))))
    return "\n".join(textwrap.wrap(text, chars))


def _fit(artist: Any, max_width_px: float, renderer: Any, min_size: float) -> None:
    """Shrink a text artist's font until it fits ``max_width_px``; then cut with an ellipsis.

    A few measurements whatever the length of the text: the font size is
    scaled in one step, the text is first cut to what could ever fit (no
    glyph is narrower than about a quarter em in DejaVu Sans), and the cut
    is found by bisection on the length.
    """
    size = artist.get_fontsize()
    text = artist.get_text()
    min_px = min_size * renderer.points_to_pixels(1.0)
    cap = max(8, int(max_width_px / (0.2 * min_px)) + 2)
    lines = text.split("\n")
    if any(len(line) > cap for line in lines):  # each line of a block is cut on its own
        text = "\n".join(line[:cap] + ("…" if len(line) > cap else "") for line in lines)
        artist.set_text(text)
    width = artist.get_window_extent(renderer).width
    for _ in range(4):  # width is about proportional to the size; a few steps settle rounding
        if width <= max_width_px or size <= min_size:
            break
        size = max(min_size, min(size - 0.25, size * max_width_px / width))
        artist.set_fontsize(size)
        width = artist.get_window_extent(renderer).width
    if width <= max_width_px:
        return

    def fits(n: int) -> bool:
        artist.set_text(text[:n].rstrip() + "…")
        return artist.get_window_extent(renderer).width <= max_width_px

    lo, hi = min(4, len(text)), len(text) - 1  # the longest prefix that fits lies in lo..hi
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if fits(mid):
            lo = mid
        else:
            hi = mid - 1
    artist.set_text(text[:lo].rstrip() + "…")


def _clip(text: str, n: int) -> str:
    """``text`` cut to ``n`` characters with an ellipsis (long names in running text)."""
    text = str(text)
    return text if len(text) <= n else text[: n - 1].rstrip() + "…"


def _header(fig: Any, c: SheetContent, lay: _Layout, units: str = "m") -> None:
    r = c.record
    a, b = (_clip(r["sites"][t]["name"], 48) for t in ("a", "b"))
    radio = r["inputs"]["radio"]
    title = fig.text(*lay.xy(8, 199.5), c.name or f"{a} - {b}", fontsize=lay.fs(13), fontweight="bold",
                     color=COLOURS["ink"], va="baseline")
    subtitle = fig.text(*lay.xy(8, 193.5),
             f"Path profile sheet   ·   a: {a}  →  b: {b}   ·   {distance_text(r['distance_km'], units, True)}   ·   "
             f"{radio['freq_ghz']:g} GHz   ·   design k = {format_k(r['k'])}",
             fontsize=lay.fs(7.5), color=COLOURS["muted"], va="baseline")
    ok = bool(r["meets_criterion"])
    verdict = "MEETS CLEARANCE CRITERION" if ok else "FAILS CLEARANCE CRITERION"
    fig.text(*lay.xy(289, 197.5), verdict, ha="right", va="center", fontsize=lay.fs(9.5), fontweight="bold",
             color="white", bbox=dict(boxstyle="square,pad=0.45", fc=COLOURS["good" if ok else "bad"], ec="none"))
    fig.text(*lay.xy(289, 191.2), f"sheet {c.sheet_number} of {c.sheet_count}", ha="right", va="center",
             fontsize=lay.fs(7), color=COLOURS["muted"])
    fig.add_artist(_hline(fig, lay, 8, 289, 189.0, lw=0.9))
    renderer = fig.canvas.get_renderer()
    _fit(title, fig.bbox.width * (196 - 8) / _A4[0], renderer, lay.fs(9))
    _fit(subtitle, fig.bbox.width * (240 - 8) / _A4[0], renderer, lay.fs(7.5))


def _hline(fig: Any, lay: _Layout, x0: float, x1: float, y: float, lw: float = 0.5, color: str | None = None):
    from matplotlib.lines import Line2D

    (fx0, fy), (fx1, _) = lay.xy(x0, y), lay.xy(x1, y)
    return Line2D([fx0, fx1], [fy, fy], transform=fig.transFigure, lw=lw * lay.s, color=color or COLOURS["ink"])


def _profile(fig: Any, c: SheetContent, lay: _Layout, units: str) -> Any:
    r = c.record
    ax = fig.add_axes(lay.rect(22, 111, 172, 64))
    datum = datum_of_record(r)
    short = datum.name if datum.known and datum.name is not None else "datum of the raster, not stated in the file"
    art = draw_profile(ax, c.drawing, r, units=units, type_scale=lay.s, datum_label=short)
    draw_reflection(ax, c.drawing, r, units=units, type_scale=lay.s, legend=art.legend)  # profiler.sheets.reflection
    renderer = fig.canvas.get_renderer()
    for tag, x_mm, ha in (("a", 22, "left"), ("b", 194, "right")):
        s = r["sites"][tag]
        install = site_line(r, tag)  # installer figures (profiler.sheets.installation): headings move up
        up = HEADING_SHIFT_MM if install else 0.0
        name = fig.text(*lay.xy(x_mm, 182.0 + up), f"{tag}  {s['name']}", ha=ha, va="baseline", fontsize=lay.fs(8.5),
                        fontweight="bold", color=COLOURS["site_a" if tag == "a" else "site_b"])
        _fit(name, fig.bbox.width * 84 / _A4[0], renderer, lay.fs(6))
        if install:
            line = fig.text(*lay.xy(x_mm, 176.0), install, ha=ha, va="baseline", fontsize=lay.fs(6.0),
                            color=COLOURS["ink"])
            _fit(line, fig.bbox.width * 82 / _A4[0], renderer, lay.fs(4.5))
        roof = (f"{height_text(s['antenna_above_roof_m'], units)} above the roof, "
                if s.get("roof_m") is not None and s.get("antenna_above_roof_m") is not None else "")
        heights = fig.text(*lay.xy(x_mm, 178.3 + up / 2),
                           f"antenna {roof}{height_text(s['antenna_agl_m'], units)} above ground, "
                           f"{height_text(s['antenna_amsl_m'], units)} {above_datum_label(r)}",
                           ha=ha, va="baseline", fontsize=lay.fs(6.5), color=COLOURS["ink"])
        _fit(heights, fig.bbox.width * 84 / _A4[0], renderer, lay.fs(4.8))
    fig.legend(handles=art.legend, loc="upper center", bbox_to_anchor=lay.xy(108, 101.5), ncol=4,
               fontsize=lay.fs(6.4), frameon=False, handlelength=2.6, columnspacing=1.4, handletextpad=0.6,
               borderaxespad=0.0, labelspacing=0.35)
    ve = vertical_exaggeration(ax, units)
    note = curvature_note(c.drawing) + f" Vertical scale exaggerated about {ve:.0f} times."
    note += installation_note(r)
    note += reflection_note(r)
    fig.text(*lay.xy(8, 90.5), _wrap(note, 188, 6.2, lay), fontsize=lay.fs(6.2), color=COLOURS["muted"],
             va="top", linespacing=1.25)
    return art


def _table(fig: Any, c: SheetContent, lay: _Layout, units: str) -> None:
    rows: list[Row] = parameter_rows(c.record, units) + modulation_rows(c.record)
    x0, y0, w, h = 202.0, 67.0, 87.0, 114.0
    ax = fig.add_axes(lay.rect(x0, y0, w, h))
    ax.set_axis_off()
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    fig.text(*lay.xy(x0, y0 + h + 1.2), "Link parameters", fontsize=lay.fs(8.5), fontweight="bold",
             color=COLOURS["ink"], va="bottom")
    n = len(rows)
    step = 1.0 / n
    renderer = fig.canvas.get_renderer()
    ax_w = ax.get_window_extent(renderer).width
    col_a, col_b = 0.40, 0.70
    row_pt = h / n / 25.4 * 72.0 * lay.s  # row height in points on the real page
    fs = min(lay.fs(6.5), 0.8 * row_pt)
    from matplotlib.patches import Rectangle

    shade = False
    for i, row in enumerate(rows):
        top = 1.0 - i * step
        yc = top - step / 2
        if row.kind == "section":
            ax.add_patch(Rectangle((0, top - step), 1, step, fc=COLOURS["ink"], ec="none"))
            ax.text(0.012, yc, row.label.upper(), fontsize=fs * 0.95, fontweight="bold", color="white", va="center")
            for x, t in ((col_a, row.left), (col_b, row.right)):
                if t:
                    ax.text(x, yc, t, fontsize=fs * 0.9, color="white", va="center")
            shade = False
            continue
        if shade:
            ax.add_patch(Rectangle((0, top - step), 1, step, fc=COLOURS["band"], ec="none"))
        shade = not shade
        ax.text(0.012, yc, row.label, fontsize=fs, color=COLOURS["muted"], va="center")
        colour = {"good": COLOURS["good"], "bad": COLOURS["bad"]}.get(row.flag, COLOURS["ink"])
        weight = "bold" if row.flag else "normal"
        if row.right is None:
            t = ax.text(col_a, yc, row.left, fontsize=fs, color=colour, va="center", fontweight=weight)
            _fit(t, ax_w * (1 - col_a - 0.01), renderer, lay.fs(4.8))
        else:
            ta = ax.text(col_a, yc, row.left, fontsize=fs, color=colour, va="center", fontweight=weight)
            tb = ax.text(col_b, yc, row.right, fontsize=fs, color=colour, va="center", fontweight=weight)
            _fit(ta, ax_w * (col_b - col_a - 0.015), renderer, lay.fs(4.8))
            _fit(tb, ax_w * (1 - col_b - 0.01), renderer, lay.fs(4.8))
    ax.add_patch(Rectangle((0, 0), 1, 1, fill=False, ec=COLOURS["ink"], lw=0.7 * lay.s))


def _minimap(fig: Any, c: SheetContent, lay: _Layout, units: str = "m") -> None:
    x0, y0, w, h = 8.0, 15.0, 68.0, 60.0
    fig.text(*lay.xy(x0, y0 + h + 1.2), "Location", fontsize=lay.fs(8.5), fontweight="bold",
             color=COLOURS["ink"], va="bottom")
    ax = fig.add_axes(lay.rect(x0, y0, w, h))
    g = c.map_grid
    if g is None:
        ax.set_xticks([])
        ax.set_yticks([])
        ax.text(0.5, 0.5, "map not drawn", ha="center", va="center", transform=ax.transAxes,
                fontsize=lay.fs(7), color=COLOURS["muted"])
        return
    draw_minimap(ax, g, type_scale=lay.s, worst_index=c.drawing.worst_index, miles=units == "ft")
    import numpy as np

    blank = " White: no elevation data." if np.isnan(g.elevation_m).any() else ""
    caption = (
        f"Hillshade of the elevation data; X marks the worst point.{blank} Local azimuthal equidistant "
        f"frame centred at {g.centre_lat_deg:.4f}°, {g.centre_lon_deg:.4f}° (WGS 84), true north up."
    )
    fig.text(*lay.xy(x0, y0 - 1.5), _wrap(caption, w, 5.6, lay), fontsize=lay.fs(5.6), color=COLOURS["muted"],
             va="top", linespacing=1.2)


def _notes(fig: Any, c: SheetContent, lay: _Layout, units: str) -> None:
    """Drawing notes, data sources and the caution, in the middle column (text: profiler.sheets.notes)."""
    x0, w = 82.0, 114.0
    y = 76.2
    fig.text(*lay.xy(x0, y), "Drawing notes", fontsize=lay.fs(8.5), fontweight="bold", color=COLOURS["ink"],
             va="bottom")
    body = "\n".join(_wrap(t, w, 6.0, lay) for t in drawing_notes(c, units))
    t = fig.text(*lay.xy(x0, y - 1.3), body, fontsize=lay.fs(6.0), color=COLOURS["ink"], va="top", linespacing=1.25)
    renderer = fig.canvas.get_renderer()
    inv = fig.transFigure.inverted()
    y_next = inv.transform((0, t.get_window_extent(renderer).y0))[1] * _A4[1] - 3.0

    fig.text(*lay.xy(x0, y_next), "Data sources", fontsize=lay.fs(7.5), fontweight="bold",
             color=COLOURS["ink"], va="top")
    lines = source_lines(c)
    # Monospaced lines: wrap at the column width (DejaVu Sans Mono advances 0.602 em).
    per_line = max(20, int(lay.width_pt(w) / (0.602 * lay.fs(5.7))) - 1)
    lines = [part for line in lines for part in
             (textwrap.wrap(line, per_line, subsequent_indent="      ", drop_whitespace=False) or [line])]
    t2 = fig.text(*lay.xy(x0, y_next - 4.0), "\n".join(lines), fontsize=lay.fs(5.7), color=COLOURS["ink"],
                  va="top", linespacing=1.3, family="DejaVu Sans Mono")
    _fit(t2, fig.bbox.width * w / _A4[0], renderer, lay.fs(4.2))
    # Keep the block above the caution box (top at 27 mm): shrink it when the notes run long.
    floor_px = fig.bbox.height * 28.5 / _A4[1]
    size = t2.get_fontsize()
    while t2.get_window_extent(renderer).y0 < floor_px and size > lay.fs(3.6):
        size -= 0.25
        t2.set_fontsize(size)
    _caution(fig, lay)


def _caution(fig: Any, lay: _Layout) -> None:
    """The caution box at the foot of the notes column."""
    from matplotlib.patches import Rectangle

    cx, cy, cw, ch = 82.0, 8.0, 114.0, 19.0
    fig.add_artist(Rectangle(lay.xy(cx, cy), cw / _A4[0], ch / _A4[1], transform=fig.transFigure,
                             fc="#FFF6E0", ec=COLOURS["criterion"], lw=0.9 * lay.s))
    fig.text(*lay.xy(cx + 2.5, cy + ch - 2.2), "CAUTION", fontsize=lay.fs(7.5), fontweight="bold",
             color=COLOURS["ink"], va="top")
    fig.text(*lay.xy(cx + 2.5, cy + ch - 6.2), _wrap(CAUTION, cw - 5, 6.0, lay), fontsize=lay.fs(6.0),
             color=COLOURS["ink"], va="top", linespacing=1.25)


def _title_block(fig: Any, c: SheetContent, lay: _Layout) -> None:
    from matplotlib.patches import Rectangle

    t = c.title
    x0, y0, w = 202.0, 8.0, 87.0
    rows = [
        (("Project", t.project),),
        (("Link", c.name),),
        (("Prepared by", t.prepared_by), ("Checked by", t.checked_by)),
        (("Date", t.date), ("Revision", t.revision)),
        (("Sheet", f"{c.sheet_number} of {c.sheet_count}"), ("Software", t.software)),
    ]
    row_h = 10.0
    h = row_h * len(rows) + 6.0
    renderer = fig.canvas.get_renderer()
    fig.add_artist(Rectangle(lay.xy(x0, y0), w / _A4[0], h / _A4[1], transform=fig.transFigure,
                             fill=False, ec=COLOURS["ink"], lw=1.0 * lay.s))
    # Brand strip at the bottom of the block.
    fig.add_artist(Rectangle(lay.xy(x0, y0), w / _A4[0], 6.0 / _A4[1], transform=fig.transFigure,
                             fc=COLOURS["ink"], ec="none"))
    fig.text(*lay.xy(x0 + 2.5, y0 + 3.0), "terrahop  ·  path profile sheet", fontsize=lay.fs(6.5),
             fontweight="bold", color="white", va="center")
    for i, cells in enumerate(rows):
        top = y0 + h - i * row_h
        fig.add_artist(_hline(fig, lay, x0, x0 + w, top - row_h, lw=0.5))
        cell_w = w / len(cells)
        for j, (label, value) in enumerate(cells):
            cx = x0 + j * cell_w
            if j:
                from matplotlib.lines import Line2D

                (fx, fy0), (_, fy1) = lay.xy(cx, top - row_h), lay.xy(cx, top)
                fig.add_artist(Line2D([fx, fx], [fy0, fy1], transform=fig.transFigure, lw=0.5 * lay.s,
                                      color=COLOURS["ink"]))
            fig.text(*lay.xy(cx + 1.8, top - 1.6), label.upper(), fontsize=lay.fs(5.0), color=COLOURS["muted"],
                     va="top")
            tv = fig.text(*lay.xy(cx + 1.8, top - row_h + 2.0), value or "", fontsize=lay.fs(8.0),
                          color=COLOURS["ink"], va="baseline", fontweight="bold" if label == "Link" else "normal")
            _fit(tv, fig.bbox.width * (cell_w - 3.6) / _A4[0], renderer, lay.fs(5.0))


def render_continuation(content: SheetContent, page: str | PageSize = "a4", units: str = "m") -> list:
    """Figures listing every obstruction the path crosses, for a sheet whose notes name only the first few."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure


    size = page if isinstance(page, PageSize) else page_size(page)
    crossed = (content.record.get("clutter") or {}).get("crossed") or []
    n_pages = continuation_pages(content)
    per_page = _CONT_ROWS * _CONT_COLUMNS
    figs = []
    for k in range(n_pages):
        fig = Figure(figsize=size.size_in, dpi=100)
        canvas = FigureCanvasAgg(fig)
        fig.patch.set_facecolor("white")
        lay = _Layout(size)
        renderer = canvas.get_renderer()
        title = fig.text(*lay.xy(8, 199.5), content.name, fontsize=lay.fs(13), fontweight="bold",
                         color=COLOURS["ink"], va="baseline")
        _fit(title, fig.bbox.width * (230 - 8) / _A4[0], renderer, lay.fs(9))
        fig.text(*lay.xy(8, 193.5),
                 f"Obstructions crossed by the path, from site a (continuation {k + 1} of {n_pages} of sheet "
                 f"{content.sheet_number} of {content.sheet_count}); they count in the clearance.",
                 fontsize=lay.fs(7.5), color=COLOURS["muted"], va="baseline")
        fig.add_artist(_hline(fig, lay, 8, 289, 189.0, lw=0.9))
        chunk = crossed[k * per_page:(k + 1) * per_page]
        col_w = (289.0 - 8.0) / _CONT_COLUMNS
        for c in range(_CONT_COLUMNS):
            rows = chunk[c * _CONT_ROWS:(c + 1) * _CONT_ROWS]
            if not rows:
                break
            x0 = 8.0 + c * col_w
            for j, head in enumerate(("#", "kind", "feature", "along the path", "height")):
                fig.text(*lay.xy(x0 + (0, 7, 24, 76, 104)[j], 184.0), head, fontsize=lay.fs(6.5),
                         fontweight="bold", color=COLOURS["ink"], va="baseline")
            for i, f in enumerate(rows):
                y = 179.5 - i * 4.2
                number = k * per_page + c * _CONT_ROWS + i + 1
                cells = (str(number), str(f.get("kind", "")), str(f.get("feature", "")), _span_text(f, units),
                         _feature_height(f, units))
                widths = (6, 16, 50, 27, 36)
                for j, text in enumerate(cells):
                    t = fig.text(*lay.xy(x0 + (0, 7, 24, 76, 104)[j], y), text, fontsize=lay.fs(6.5),
                                 color=COLOURS["ink"], va="baseline")
                    if j in (2, 4):
                        _fit(t, fig.bbox.width * widths[j] / _A4[0], renderer, lay.fs(5.0))
        fig.text(*lay.xy(289, 8), f"{content.title.software}  ·  path profile sheet, continued", ha="right", fontsize=lay.fs(6),
                 color=COLOURS["muted"], va="baseline")
        figs.append(fig)
    return figs


def render_page(content: SheetContent, page: str | PageSize = "a4", units: str = "m") -> Any:
    """A matplotlib Figure holding the sheet of one link (call within ``matplotlib.rc_context(RC_PARAMS)``)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    size = page if isinstance(page, PageSize) else page_size(page)
    fig = Figure(figsize=size.size_in, dpi=100)
    FigureCanvasAgg(fig)
    fig.patch.set_facecolor("white")
    lay = _Layout(size)
    _header(fig, content, lay, units)
    _profile(fig, content, lay, units)
    _table(fig, content, lay, units)
    _minimap(fig, content, lay, units)
    _notes(fig, content, lay, units)
    _title_block(fig, content, lay)
    return fig


def _slug(text: str) -> str:
    slug = re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower()
    return slug[:60] or "link"


def sheet_paths(out: str | Path, fmt: str, names: Sequence[str]) -> list[Path]:
    """Files that :func:`write_sheets` writes: ``out`` itself for a PDF or a single page,
    else ``<stem>-<nn>-<link>.<fmt>`` beside it."""
    out = Path(out)
    if fmt == "pdf" or len(names) == 1:
        return [out]
    return [out.with_name(f"{out.stem}-{i + 1:02d}-{_slug(n)}.{fmt}") for i, n in enumerate(names)]


def write_sheets(
    contents: Sequence[SheetContent],
    out: str | Path,
    *,
    fmt: str = "pdf",
    page: str = "a4",
    units: str = "m",
    dpi: float = 200.0,
) -> list[Path]:
    """Write one page per link: a multi-page PDF, or one PNG/SVG file per link.

    Returns the paths written.  PDF text is embedded as TrueType (Type 42) and
    SVG text stays text, so names and numbers remain searchable.
    """
    import matplotlib

    if fmt not in FORMATS:
        raise ValueError(f"unknown sheet format {fmt!r}; use one of {', '.join(FORMATS)}")
    size = page_size(page)
    paths = sheet_paths(out, fmt, [c.name for c in contents])
    paths[0].parent.mkdir(parents=True, exist_ok=True)
    # matplotlib stubs type rcParams keys as a Literal of known names; ours are plain str
    with matplotlib.rc_context(RC_PARAMS):  # type: ignore[arg-type]
        if fmt == "pdf":
            from matplotlib.backends.backend_pdf import PdfPages

            first = contents[0]
            meta = {
                "Title": first.name if len(contents) == 1 else f"{first.title.project or 'terrahop'} profile sheets",
                "Author": first.title.prepared_by or None,
                "Subject": "Radio path profile sheet",
                "Creator": first.title.software,
            }
            with PdfPages(paths[0], metadata={k: v for k, v in meta.items() if v}) as pdf:
                for c in contents:
                    fig = render_page(c, size, units)
                    pdf.savefig(fig)
                    for cont in render_continuation(c, size, units):
                        pdf.savefig(cont)
                    for extra_page in modulation_pages(c, size, units):  # with a radio profile only
                        pdf.savefig(extra_page)
        else:
            written = []
            for c, path in zip(contents, paths):
                fig = render_page(c, size, units)
                fig.savefig(path, format=fmt, dpi=dpi, facecolor="white")
                written.append(path)
                for k, cont in enumerate(render_continuation(c, size, units)):
                    extra = path.with_name(f"{path.stem}-obstructions-{k + 1}{path.suffix}")
                    cont.savefig(extra, format=fmt, dpi=dpi, facecolor="white")
                    written.append(extra)
                for radio_page in modulation_pages(c, size, units):  # with a radio profile only
                    extra = path.with_name(f"{path.stem}-radio{path.suffix}")
                    radio_page.savefig(extra, format=fmt, dpi=dpi, facecolor="white")
                    written.append(extra)
            paths = written
    return paths
