"""Antenna heights of a screening run: roof mounts of the sites and per-pair heights of a pairs file.

A site's height is measured above the ground, or above the roof of the
building it stands in (found in the obstruction layers) when the run says
``above_roof`` or the site's ``mount`` cell says ``roof``.  Each site is
placed once, before any pair is evaluated, by :func:`profiler.mounts.place_sites`
(the code ``terrahop link`` uses for ``--above-roof-a/-b``); a roof site with
no building under it, or outside the rasters, becomes a skipped row.  The
pairs then carry heights above ground: roof height plus the height given
(the pair's own from a pairs file, else the site's), the sum ``place_sites``
makes, so a screened pair has exactly the numbers of ``terrahop link``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import PARAMETER, DataError, InputError
from ..io.sites import BadRow, SiteTable

__all__ = ["MOUNT_COLUMN", "MOUNT_WORDS", "AntennaHeights", "site_mounts", "place_roofs", "antenna_heights"]

#: Column of a sites file saying what each site's antenna height is measured from.
MOUNT_COLUMN = "mount"
#: Words of that column: roof (above the roof of the building the site stands in) or ground.
MOUNT_WORDS = ("ground", "roof")


@dataclass(frozen=True)
class AntennaHeights:
    """Heights of every site and listed pair, arrays of shape (sites,) and (listed pairs,).

    ``given_m``: each site's height as given (above the ground, or above the
    roof where ``roof_m`` is finite); ``roof_m``: height above ground of the
    roof an antenna stands on, NaN for an antenna measured from the ground;
    ``pair_key``: sorted ``a * sites + b`` of the pairs with heights of their own,
    ``pair_a_m``/``pair_b_m`` those heights (measured as the site's own);
    ``columns``: whether chunks carry the roof columns (runs with surroundings).
    """

    given_m: np.ndarray
    roof_m: np.ndarray
    pair_key: np.ndarray
    pair_a_m: np.ndarray
    pair_b_m: np.ndarray
    columns: bool = True

    def of_pairs(self, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
        """Heights above ground of both ends of pairs ``a``, ``b`` and the roof columns of a chunk task."""
        given_a, given_b = self.given_m[a], self.given_m[b]
        if self.pair_key.size:
            key = a.astype(np.int64) * self.given_m.size + b
            pos = np.minimum(np.searchsorted(self.pair_key, key), self.pair_key.size - 1)
            hit = self.pair_key[pos] == key
            given_a = np.where(hit, self.pair_a_m[pos], given_a)
            given_b = np.where(hit, self.pair_b_m[pos], given_b)
        roof_a, roof_b = self.roof_m[a], self.roof_m[b]
        on_a, on_b = np.isfinite(roof_a), np.isfinite(roof_b)
        # roof + height above it: the sum profiler.mounts.place_sites makes for a roof mount.
        agl_a = np.where(on_a, roof_a + given_a, given_a)
        agl_b = np.where(on_b, roof_b + given_b, given_b)
        mounts = {}
        if self.columns:
            mounts = {"roof_a": roof_a, "roof_b": roof_b,
                      "above_roof_a": np.where(on_a, given_a, np.nan), "above_roof_b": np.where(on_b, given_b, np.nan)}
        return agl_a, agl_b, mounts

    def digest(self) -> bytes:
        """Bytes that change with any height (for the run's settings fingerprint)."""
        return b"".join(np.ascontiguousarray(x, dtype=float).tobytes()
                        for x in (self.given_m, self.roof_m, self.pair_key, self.pair_a_m, self.pair_b_m)) \
            + bytes([self.columns])


def site_mounts(sites: SiteTable, above_roof: bool) -> tuple[np.ndarray, list[BadRow]]:
    """Which sites are on roofs (True), from the ``mount`` column over the run's default; bad cells as rows.

    A blank cell takes the default (``above_roof``); a word other than ground
    or roof is a skipped row.
    """
    roof = np.full(len(sites), bool(above_roof))
    column = {str(c).lower(): c for c in sites.extra.columns}.get(MOUNT_COLUMN)
    bad: list[BadRow] = []
    if column is None:
        return roof, bad
    words = sites.extra[column].fillna("").astype(str).str.strip().str.lower().to_numpy()
    roof = np.where(words == "roof", True, np.where(words == "ground", False, roof))
    for k in np.flatnonzero((words != "") & ~np.isin(words, MOUNT_WORDS)):
        bad.append(BadRow(sites.source, int(sites.rows[k]), str(sites.names[k]),
                          f"{column} {sites.extra[column].iloc[k]!r} is neither ground nor roof"))
    return roof, bad


def place_roofs(sites: SiteTable, roof: np.ndarray, model: Any,
                surroundings: Any) -> tuple[np.ndarray, list[BadRow], list[str]]:
    """Place every site once: (roof height of each site, sites that cannot be placed, warnings).

    The roof height is above the ground, NaN for an antenna measured from the
    ground.  Roof sites without a building under them (or without ground)
    are skipped rows, their height NaN; a site measured from the ground inside
    a building taller than its antenna gets the warning ``terrahop link`` gives.
    """
    from ..link_types import Site
    from ..mounts import Mount, place_sites

    n = len(sites)
    roof_m = np.full(n, np.nan)
    bad: list[BadRow] = []
    warnings: list[str] = []
    if roof.any() and (surroundings is None or not any(l.kind == "building" for l in surroundings.layers)):
        first = sites.names[int(np.flatnonzero(roof)[0])]
        raise InputError(f"{sites.source}: {int(roof.sum())} site(s) have their antenna height above the roof "
                         f"(first: {first!r}), which needs a building layer ({PARAMETER}); or give the heights "
                         "above ground", parameter="surroundings")
    has_layers = surroundings is not None and bool(surroundings.layers)
    todo = np.arange(n) if has_layers else np.flatnonzero(roof)
    if todo.size == 0:
        return roof_m, bad, warnings
    placed_sites = [Site(str(sites.names[k]), float(sites.lat_deg[k]), float(sites.lon_deg[k]),
                         float(sites.antenna_agl_m[k])) for k in todo]
    mounts = [Mount("roof" if roof[k] else "ground", float(sites.antenna_agl_m[k])) for k in todo]
    try:  # all at once (one raster sample); one by one only to find the sites that fail
        placements: list[Any] = list(place_sites(model, placed_sites, mounts, surroundings, "site")[1])
    except (InputError, DataError):
        placements = []
        for k, site, mount in zip(todo, placed_sites, mounts):
            try:
                placements.extend(place_sites(model, [site], [mount], surroundings, "site")[1])
            except (InputError, DataError) as exc:  # one site, not the run
                placements.append(None)
                bad.append(BadRow(sites.source, int(sites.rows[k]), site.name, _reason(exc, site.name)))
    for k, placement in zip(todo, placements):
        if placement is None:
            continue
        if roof[k]:
            assert placement.roof is not None  # place_sites refuses a roof mount outside every building
            roof_m[k] = placement.roof.height_m
        if placement.warning:
            warnings.append(placement.warning)
    return roof_m, bad, warnings


def antenna_heights(sites: SiteTable, roof_m: np.ndarray, plan: Any, columns: bool) -> AntennaHeights:
    """The heights of a run's sites (``roof_m`` from :func:`place_roofs`) and of its listed pairs."""
    pair_key, pair_a, pair_b = _pair_heights(plan, len(sites))
    return AntennaHeights(sites.antenna_agl_m.astype(float), np.asarray(roof_m, float), pair_key, pair_a, pair_b,
                          columns=columns)


def _reason(exc: Exception, name: str) -> str:
    """The error's sentence without the site's name in front (a skipped row names it already)."""
    text = str(exc)
    lead = f"site {name!r}"
    if text.startswith(lead + " ("):
        return "position " + text[len(lead) + 1:]
    if text.startswith(lead):
        return text[len(lead):].lstrip(": ")
    return text


def _pair_heights(plan: Any, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sorted keys and heights of the listed pairs that give heights of their own."""
    heights = getattr(plan, "heights", None)
    if heights is None or plan.explicit is None:
        return np.zeros(0, np.int64), np.zeros(0), np.zeros(0)
    a, b = plan.explicit
    ha, hb = heights
    own = np.isfinite(ha) & np.isfinite(hb)
    key = a[own].astype(np.int64) * n + b[own]
    order = np.argsort(key, kind="stable")
    return key[order], np.asarray(ha, float)[own][order], np.asarray(hb, float)[own][order]
