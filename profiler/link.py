"""Analyse one or many links: the public face of the link engine.

The code lives in three modules, re-exported here so ``from profiler.link
import ...`` keeps working:

- :mod:`profiler.link_types`: :class:`Site`, :class:`SiteColumns`,
  :class:`Criterion`, :class:`Settings`, :class:`AtK` (inputs and per-k results);
- :mod:`profiler.link_engine`: :func:`analyse_links`, :func:`analyse_link`,
  :func:`evaluate_profiles` and the loss helpers (pure core, no I/O);
- :mod:`profiler.link_batch` and :mod:`profiler.link_record`:
  :class:`LinkBatch` and its JSON record writer.
"""

from __future__ import annotations

from .link_batch import DATAFRAME_COLUMNS, LinkBatch
from .link_engine import analyse_link, analyse_links, evaluate_profiles, gaseous_loss_db, terrain_diffraction_db
from .link_types import AtK, Criterion, Settings, Site, SiteColumns

__all__ = [
    "Site",
    "SiteColumns",
    "Criterion",
    "Settings",
    "AtK",
    "LinkBatch",
    "DATAFRAME_COLUMNS",
    "analyse_links",
    "analyse_link",
    "evaluate_profiles",
    "terrain_diffraction_db",
    "gaseous_loss_db",
]
