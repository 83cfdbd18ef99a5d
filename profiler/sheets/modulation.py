"""The radio profile on a sheet: rows for the parameter table and a page with the modulation steps.

Every figure comes from the link's JSON record (``modulation`` and
``eirp_limit`` blocks), so the sheet and ``terrahop link --json`` agree.
The page is drawn only for links analysed with a radio profile.
"""

from __future__ import annotations

import textwrap
from typing import Any

from .style import COLOURS, PageSize
from .table import Row

__all__ = ["modulation_rows", "step_cells", "share_text", "modulation_pages", "STEP_HEADINGS"]

_A4 = (297.0, 210.0)

#: Column headings of the step table and their left edges, mm on an A4 page.
STEP_HEADINGS = (("step", 8.0), ("label", 20.0), ("capacity", 62.0), ("threshold", 90.0), ("error ratio", 118.0),
                 ("SNR needed", 142.0), ("tx power", 168.0), ("margin, design k", 192.0),
                 ("margin, worst k", 222.0), ("share of year", 252.0))


def share_text(step: dict) -> str:
    """A step's share of the year at or above it: a figure, a bound, or a dash (why: the record's share_reason)."""
    if step.get("share_of_year_pct") is not None:
        return f"{step['share_of_year_pct']:.4f} %"
    if step.get("share_of_year_above_pct") is not None:
        return f"> {step['share_of_year_above_pct']:g} %"
    if step.get("share_of_year_below_pct") is not None:
        return f"< {step['share_of_year_below_pct']:g} %"
    return "-"


def step_cells(step: dict) -> tuple[str, ...]:
    """The cells of one step's row, in the order of :data:`STEP_HEADINGS`."""
    ratio = step.get("threshold_error_ratio")
    return (
        str(step["step"]), step["label"], f"{step['capacity_mbps']:g} Mbit/s", f"{step['rx_threshold_dbm']:.1f} dBm",
        f"{ratio:.0e}" if ratio is not None and step.get("threshold_given") == "rx_threshold_dbm" else "-",
        f"{step['required_snr_db']:.1f} dB", f"{step['tx_power_dbm']:.1f} dBm",
        f"{step['fade_margin_db']:+.1f} dB", f"{step['fade_margin_worst_db']:+.1f} dB", share_text(step),
    )


def _capacity_texts(m: dict) -> dict[str, str]:
    chosen = (f"{m['chosen_label']}, {m['capacity_mbps']:g} Mbit/s" if m.get("chosen_step") is not None
              else "none has the margin")
    if not m.get("shares_estimated"):
        at = mean = "not estimated"
    else:
        at = (f"{m['capacity_at_target_mbps']:g} Mbit/s" if m.get("capacity_at_target_mbps") is not None
              else "no step meets it")
        mean = (f"{m['mean_capacity_mbps']:.1f} Mbit/s" if m.get("mean_capacity_mbps") is not None
                else f"{m['mean_capacity_min_mbps']:.1f}-{m['mean_capacity_max_mbps']:.1f} Mbit/s")
    return {"chosen": chosen, "at": at, "mean": mean, "shannon": f"{m['shannon_capacity_mbps']:.1f} Mbit/s"}


def modulation_rows(record: dict) -> list[Row]:
    """Rows added to the parameter table for a radio profile and an EIRP limit (none without them)."""
    rows: list[Row] = []
    m = record.get("modulation")
    if m:
        t = _capacity_texts(m)
        rows += [
            Row("Radio profile", f"{m['channel_mhz']:g} MHz channel", None, kind="section"),
            Row("Chosen step", t["chosen"], flag="good" if m.get("chosen_step") is not None else "bad"),
            Row(f"Capacity at {m['target_availability_pct']:g} %", t["at"]),
            Row("Mean capacity (year)", t["mean"]),
            Row("Shannon ceiling", t["shannon"]),
        ]
    e = record.get("eirp_limit")
    if e:
        text = (f"EXCEEDED by {e['excess_db']:.1f} dB" if e["exceeds"] else "within") + f" ({e['max_eirp_dbm']:g} dBm)"
        rows.append(Row("EIRP limit", text, flag="bad" if e["exceeds"] else ""))
    return rows


def _xy(x_mm: float, y_mm: float) -> tuple[float, float]:
    return x_mm / _A4[0], y_mm / _A4[1]


def modulation_pages(content: Any, page: PageSize, units: str = "m") -> list:
    """A page with every modulation step of a link analysed with a radio profile ([] otherwise).

    Call within ``matplotlib.rc_context(RC_PARAMS)`` as the sheet itself.
    """
    m = content.record.get("modulation")
    if not m:
        return []
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Rectangle

    fig = Figure(figsize=page.size_in, dpi=100)
    canvas = FigureCanvasAgg(fig)
    fig.patch.set_facecolor("white")
    s = page.scale
    renderer = canvas.get_renderer()

    def text(x: float, y: float, value: str, size: float, width_mm: float | None = None, **kw: Any) -> Any:
        t = fig.text(*_xy(x, y), value, fontsize=size * s, va=kw.pop("va", "baseline"), **kw)
        if width_mm is not None:
            _shrink(t, fig.bbox.width * width_mm / _A4[0], renderer, 4.5 * s)
        return t

    def rule(y: float, lw: float = 0.5) -> None:
        fig.add_artist(Line2D([_xy(8, y)[0], _xy(289, y)[0]], [_xy(8, y)[1]] * 2, transform=fig.transFigure,
                              lw=lw * s, color=COLOURS["ink"]))

    text(8, 199.5, content.name, 13, 280, fontweight="bold", color=COLOURS["ink"])
    text(8, 193.5, f"Radio and modulation steps (page with sheet {content.sheet_number} of {content.sheet_count})"
                   f"   ·   {m['radio']}   ·   {m['band']}", 7.5, 280, color=COLOURS["muted"])
    rule(189.0, 0.9)
    text(8, 183.0, f"{m['channel_mhz']:g} MHz channel, noise bandwidth {m['noise_bandwidth_mhz']:g} MHz, noise "
                   f"figure {m['noise_figure_db']:g} dB, noise floor {m['noise_floor_dbm']:.1f} dBm "
                   f"(10 log10(k T0 B) + NF). Profile file: {m['file']}", 7.0, 280, color=COLOURS["ink"])
    steps = m["steps"]
    top, bottom = 176.0, 70.0
    row_h = min(6.0, (top - bottom) / (len(steps) + 1))
    size = min(7.0, row_h / 25.4 * 72.0 * 0.75)
    edges = [x for _, x in STEP_HEADINGS] + [289.0]
    for j, (head, x) in enumerate(STEP_HEADINGS):
        text(x + 1.0, top - row_h * 0.7, head, size, edges[j + 1] - x - 2.0, fontweight="bold", color=COLOURS["ink"])
    for i, step in enumerate(steps):
        y_top = top - row_h * (i + 1)
        chosen = step["step"] == m.get("chosen_step")
        if chosen or i % 2 == 0:
            fig.add_artist(Rectangle(_xy(8, y_top - row_h), 281 / _A4[0], row_h / _A4[1], transform=fig.transFigure,
                                     fc="#DCEFE6" if chosen else COLOURS["band"], ec="none"))
        for j, cell in enumerate(step_cells(step)):
            short = (j == 7 and step["fade_margin_db"] < 0) or (j == 8 and step["fade_margin_worst_db"] < 0)
            colour = COLOURS["bad"] if short else COLOURS["ink"]
            text(STEP_HEADINGS[j][1] + 1.0, y_top - row_h * 0.7, cell, size, edges[j + 1] - STEP_HEADINGS[j][1] - 2.0,
                 color=colour, fontweight="bold" if chosen else "normal")
    y_end = top - row_h * (len(steps) + 1)
    rule(top, 0.6)
    rule(y_end, 0.6)
    t = _capacity_texts(m)
    lines = [
        (f"Chosen step (shaded): {t['chosen']}" if m.get("chosen_step") is not None else "Chosen step: none")
        + f" (the highest step whose fade margin at the design k is at least {m['min_margin_db']:g} dB).",
        f"Capacity for {m['target_availability_pct']:g} % of the year: {t['at']}.   Time-weighted mean capacity over "
        f"the year: {t['mean']}.   Shannon ceiling B log2(1 + SNR) at SNR {m['shannon_snr_db']:.1f} dB: "
        f"{t['shannon']} (C. E. Shannon, 1948), which no radio passes.",
        "Share of year: the part of an average year the link runs at this step or a higher one, from the "
        "availability estimate (ITU-R P.530-17 section 2.4.1 rain, ITU-R P.838-3) run with the step's own fade "
        "margin; rain counts against availability, multipath against error performance. '>' and '<' are the "
        "bounds of the method's 0.001-1 % range; '-' is not estimated"
        + (f" ({m['shares_reason']})." if not m.get("shares_estimated") else " (a step that does not close)."),
        f"The link budget and fade margin on the sheet describe step 1 ({m['budget_step']}), whether the link "
        "is up at all; a step's own transmit power shifts its margin dB for dB.",
    ]
    e = content.record.get("eirp_limit")
    if e:
        lines.append(f"EIRP limit {e['max_eirp_dbm']:g} dBm ({e['source']}): site a {e['eirp_a_dbm']:.1f} dBm, "
                     f"site b {e['eirp_b_dbm']:.1f} dBm: " + (f"EXCEEDED by {e['excess_db']:.1f} dB."
                                                               if e["exceeds"] else "within the limit.")
                     + " No national limits are built in; check the limit with the local regulator.")
    chars = max(40, int(281 / 25.4 * 72.0 * s / (0.56 * 6.8 * s)))
    body = "\n".join(textwrap.fill(line, chars) for line in lines)
    fig.text(*_xy(8, y_end - 5.0), body, fontsize=6.8 * s, va="top", linespacing=1.35, color=COLOURS["ink"])
    fig.text(*_xy(289, 8), f"{content.title.software}  ·  path profile sheet, radio page", ha="right",
             fontsize=6 * s, color=COLOURS["muted"], va="baseline")
    return [fig]


def _shrink(artist: Any, max_px: float, renderer: Any, min_size: float) -> None:
    """Shrink a text's font until it fits ``max_px``, then cut it with an ellipsis."""
    size = artist.get_fontsize()
    while artist.get_window_extent(renderer).width > max_px and size > min_size:
        size = max(min_size, size - 0.25)
        artist.set_fontsize(size)
    value = artist.get_text()
    while artist.get_window_extent(renderer).width > max_px and len(value) > 4:
        value = value[:-2]
        artist.set_text(value.rstrip() + "…")
