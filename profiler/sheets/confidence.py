"""The sheet's confidence figures: the band of the terrain's uncertainty and the table rows.

The band is the drawn surface +- 1.645 sigma (the 5 % and 95 % points of a
Gaussian error, scipy.stats.norm.ppf(0.95)) with sigma the combined elevation
and clutter sigma of :mod:`profiler.confidence`; the rows give the
probabilities of the record's ``confidence`` block.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["BAND_Z", "draw_uncertainty_band", "confidence_rows"]

#: Half-width of the band in sigmas: the 5-95 % range of a Gaussian error.
BAND_Z = 1.6449
BAND_COLOUR = "#8C6D46"


def draw_uncertainty_band(ax: Any, d: Any, f: Any, legend: list, record: dict) -> None:
    """Shade the ground +- 1.645 sigma of the elevation data, and the top of clutter +- 1.645 of its
    combined sigma (design-k heights), when the drawing carries the sigma.

    On buildings and trees only the upper half is drawn (the clutter hides the lower).
    """
    sigma = getattr(d, "uncertainty_m", None)
    block = record.get("confidence")
    if sigma is None or not block:
        return
    from matplotlib.patches import Patch

    style: dict[str, Any] = dict(facecolor=BAND_COLOUR, alpha=0.30, edgecolor="none")
    dem_half = BAND_Z * float(block["model"]["dem_error"]["sigma_m"]) * f.u
    ax.fill_between(f.x, f.ground - dem_half, f.ground + dem_half, zorder=1.5, **style)
    on_clutter = np.asarray(d.clutter_m) > 0
    if on_clutter.any():
        half = BAND_Z * np.asarray(sigma, dtype=float) * f.u
        ax.fill_between(f.x, f.surface, f.surface + half, where=on_clutter, zorder=1.6, **style)
    legend.append(Patch(label="terrain and clutter 5-95 %", **style))


def confidence_rows(record: dict) -> list[tuple]:
    """Rows of the parameter table (label, left, right, kind, flag; see sheets.table.Row) from the
    record's ``confidence`` block (none without it)."""
    c = record.get("confidence")
    if not c:
        return []
    Row = _row  # noqa: N806 (the table's field order)
    m = c["model"]
    dem = m["dem_error"]
    corr = dem["correlation_length_m"]
    corr_text = f"{corr:g} m" if isinstance(corr, (int, float)) else str(corr)
    q = c["worst_f1_fraction"]
    return [
        Row("Confidence", f"{m['draws']} draws", f"seed {m['seed']}", kind="section"),
        Row("P(meets criterion)", f"{100 * c['p_meets_criterion']:.1f} %", None,
            flag="good" if c["p_meets_criterion"] >= 0.9 else "bad"),
        Row("P(line of sight)", f"{100 * c['p_line_of_sight']:.1f} %", None),
        Row("Worst clearance 5/95 %", f"{q['p5']:+.2f} / {q['p95']:+.2f} F1", None),
        # A sigma the raster did not state is a default standing in for a real input: say so on the sheet.
        Row("Elevation error (1 sigma)",
            f"{dem['sigma_m']:.2g} m" + (" (assumed)" if str(dem.get("source", "")).startswith("assumed") else ""),
            f"corr. {corr_text}"),
    ]


def _row(label: str, left: str = "", right: str | None = "", kind: str = "row", flag: str = "") -> tuple:
    return (label, left, right, kind, flag)
