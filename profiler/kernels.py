"""All compiled kernels of the engine, in one registry.

The kernels live beside the code they speed up (:mod:`profiler._sampling_kernels`,
:mod:`profiler._clearance_kernels`, :mod:`profiler._confidence_kernels`, :mod:`profiler.losses._bullington_kernels`,
:mod:`profiler.losses._deygout_kernels`, :mod:`profiler.coverage._kernels`); the dispatch rule is in
:mod:`profiler._compiled`.  Importing this module registers every pair in
:data:`TWINS` (the bit-for-bit test iterates over it) and keeps the old
import path ``profiler.kernels`` working.
"""

from __future__ import annotations

import os

import numpy as np

from ._clearance_kernels import clearance_reductions, clearance_reductions_numpy
from ._confidence_kernels import confidence_draws, confidence_draws_numpy
from ._compiled import NUMBA_MIN_SAMPLES, TWINS, Twin, use_numba
from ._sampling_kernels import (
    TILE, StoredCells, affine_gather, affine_gather_numpy, cell_numpy, gather_bilinear, gather_bilinear_stored,
    hermite_numpy, hermite_paths, pixel_numpy,
)
from .losses._bullington_kernels import (
    bullington_reductions, bullington_reductions_numpy, diffraction_reductions, diffraction_reductions_numpy,
    smooth_heights_numpy,
)
from .coverage._kernels import sweep_radials, sweep_radials_numpy
from .losses._deygout_kernels import summit_dips, summit_dips_numpy

__all__ = [
    "NUMBA_MIN_SAMPLES", "TILE", "TWINS", "StoredCells", "Twin", "affine_gather", "affine_gather_numpy",
    "bullington_reductions", "bullington_reductions_numpy", "cell_numpy", "clearance_reductions",
    "clearance_reductions_numpy", "confidence_draws", "confidence_draws_numpy", "diffraction_reductions", "diffraction_reductions_numpy", "gather_bilinear",
    "gather_bilinear_stored", "hermite_numpy", "hermite_paths", "pixel_numpy", "smooth_heights_numpy",
    "summit_dips", "summit_dips_numpy", "sweep_radials", "sweep_radials_numpy", "use_numba", "warm_up",
]


def warm_up(block_dtypes: tuple = (np.float64,)) -> None:
    """Load (or compile) every kernel now, not on the first big batch.

    ``block_dtypes``: the cell types of the rasters the run will gather from.
    Does nothing when ``TERRAHOP_NO_NUMBA`` is set.
    """
    if os.environ.get("TERRAHOP_NO_NUMBA"):
        return
    for t in TWINS.values():
        fn = t.compiled()
        for args in t.warm_args(tuple(block_dtypes)):
            fn(*args)
