"""The review page as one HTML file: the data packed into typed arrays (base64) and our own JS and CSS inlined.

Nothing on the page is fetched at run time: a Content-Security-Policy meta
tag allows images only from ``data:`` URIs (and from the basemap's origin
when ``--tiles`` is given), and no other source at all.
"""

from __future__ import annotations

import base64
import json
import re
from importlib import resources
from typing import Any
from urllib.parse import urlsplit

import numpy as np

from ..sheets.style import COLOURS
from .result import VERDICT_ORDER

__all__ = ["VERDICT_COLOURS", "COLUMN_INFO", "TABLE_COLUMNS", "render_page", "b64", "asset_text"]

#: Colour of each verdict on the map: the sheets' Okabe-Ito colours (profiler/sheets/style.py),
#: the best verdict green and the worst grey, every hue told apart in the common colour-vision deficiencies.
VERDICT_COLOURS: dict[str, str] = {
    "viable": COLOURS["good"],            # bluish green
    "marginal": COLOURS["criterion"],     # orange
    "budget-short": COLOURS["worst_k"],   # reddish purple
    "clearance-short": COLOURS["line"],   # blue
    "obstructed": COLOURS["bad"],         # vermillion
    "error": COLOURS["muted"],            # grey
}

#: Page label, short table label, unit and digits shown of each number column.
COLUMN_INFO: dict[str, tuple[str, str, str, int]] = {
    "fade_margin_db": ("Fade margin", "Margin", "dB", 1),
    "distance_km": ("Distance", "km", "km", 3),
    "worst_f1_fraction": ("Worst clearance, fraction of F1", "F1", "", 2),
    "worst_clearance_m": ("Worst clearance", "Clear.", "m", 1),
    "worst_point_km": ("Worst point, from site a", "Worst km", "km", 3),
    "wc_worst_f1_fraction": ("Worst clearance at k worst, fraction of F1", "F1 frac. k worst", "", 2),
    "wc_worst_clearance_m": ("Worst clearance at k worst", "Clear. k worst m", "m", 1),
    "wc_worst_point_km": ("Worst point at k worst, from site a", "Worst km k worst", "km", 3),
    "wc_fade_margin_db": ("Fade margin at k worst", "Margin k worst dB", "dB", 1),
    "rx_level_dbm": ("Received level", "Rx", "dBm", 1),
    "snr_db": ("SNR", "SNR dB", "dB", 1),
    "free_space_db": ("Free-space loss", "FSL dB", "dB", 1),
    "diffraction_db": ("Diffraction loss", "Diffr. dB", "dB", 1),
    "total_loss_db": ("Total path loss", "Loss dB", "dB", 1),
    "availability_pct": ("Availability", "Avail.", "%", 4),
    "mast_raise_m": ("Mast raise that meets the criterion", "Raise", "m", 1),
    "antenna_a_amsl_m": ("Antenna a, above the datum", "Ant. a m", "m", 1),
    "antenna_b_amsl_m": ("Antenna b, above the datum", "Ant. b m", "m", 1),
    "agl_a_m": ("Antenna a above ground", "AGL a m", "m", 1),
    "agl_b_m": ("Antenna b above ground", "AGL b m", "m", 1),
    "ground_a_m": ("Ground at site a", "Ground a m", "m", 1),
    "ground_b_m": ("Ground at site b", "Ground b m", "m", 1),
    "azimuth_a_to_b_deg": ("Azimuth a to b (true)", "Az. deg", "deg", 1),
    "k": ("k-factor (design)", "k", "", 3),
    "k_worst": ("k-factor (worst case)", "k worst", "", 3),
    "spacing_m": ("Profile sample spacing", "Spacing m", "m", 2),
}

#: Number columns shown in the table (the others are in the link's details and the CSV).
TABLE_COLUMNS = ("distance_km", "fade_margin_db", "worst_f1_fraction", "worst_clearance_m", "rx_level_dbm",
                 "availability_pct", "mast_raise_m")


def b64(values: np.ndarray, dtype: str) -> str:
    """Little-endian bytes of ``values`` as ``dtype``, base64 (what a JS typed array reads)."""
    return base64.b64encode(np.ascontiguousarray(values, dtype=np.dtype(dtype).newbyteorder("<")).tobytes()) \
        .decode("ascii")


def asset_text(name: str) -> str:
    """Text of a file in profiler/review/assets."""
    return resources.files("profiler.review").joinpath("assets", name).read_text(encoding="utf-8")


def _script_safe(text: str) -> str:
    """JSON text that cannot end the <script> element holding it."""
    return text.replace("<", "\\u003c")  # a JSON escape, so the text parses the same


def _html_text(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def render_page(data: dict[str, Any], *, title: str, version: str, tiles: str | None) -> str:
    """The HTML text of the page holding ``data`` (the JSON object page.js reads)."""
    img = "data:"
    if tiles:
        parts = urlsplit(tiles)
        img += f" {parts.scheme}://{parts.netloc}"
    csp = f"default-src 'none'; img-src {img}; style-src 'unsafe-inline'; script-src 'unsafe-inline'"
    text = json.dumps(data, separators=(",", ":"), allow_nan=False)
    fill = {"CSP": _html_text(csp), "TITLE": _html_text(title), "VERSION": _html_text(version),
            "CSS": asset_text("page.css"), "JS": asset_text("page.js"), "DATA": _script_safe(text)}
    # One pass, so no filled text is searched again for a place-holder.
    return re.sub(r"@(CSP|TITLE|VERSION|CSS|JS|DATA)@", lambda m: fill[m.group(1)], asset_text("page.html"))


def verdict_colours() -> list[str]:
    """Colours in the order of the verdict codes."""
    return [VERDICT_COLOURS[v] for v in VERDICT_ORDER]
