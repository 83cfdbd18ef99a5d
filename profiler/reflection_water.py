"""Old import path of the water layer: see :mod:`profiler.reflection.water`."""

from __future__ import annotations

from .reflection.water import WaterLayer, cached_water_layer, read_water_layer

__all__ = ["WaterLayer", "read_water_layer", "cached_water_layer"]
