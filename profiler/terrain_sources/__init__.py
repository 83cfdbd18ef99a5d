"""Open global elevation datasets fetched into a local cache: datasets, cache, downloads, VRT.

This package is an edge (it downloads and writes files); the numerical core
never imports it.  ``ensure_area`` is the one entry point the commands use.
"""

from __future__ import annotations

from .area import TerrainRequest, ensure_area, ensure_bbox
from .datasets import DATASETS, Dataset, dataset
from .fetch import FetchedTile, TerrainFetch

__all__ = ["DATASETS", "Dataset", "dataset", "TerrainRequest", "ensure_area", "ensure_bbox",
           "FetchedTile", "TerrainFetch"]
