"""Screening many candidate pairs: pair generation, chunked batch evaluation,
parallel or distributed execution, streamed and resumable results.

The numbers of every pair come from :func:`profiler.link.analyse_links`, the
engine of ``terrahop link``: a screened pair gives exactly the numbers a
single check gives.  The package's modules, in the order a run uses them:

- :mod:`.pairs`: which pairs (:class:`PairPlan`), their fixed order, the chunks;
- :mod:`.evaluate`: one chunk through the engine (what a worker runs);
- :mod:`.executors`: in this process, a local process pool or a Dask cluster;
- :mod:`.run`: :func:`screen`, with the output's lock, staging, resumption and the final write;
- :mod:`.summary`: verdict codes and :class:`ScreenSummary`.

The verdicts and the table of output columns live in
:mod:`profiler.io.columns`, which the writer reads too.
"""

from __future__ import annotations

from ..heights import mast_raise_m
from ..io.columns import STAGED_COLUMNS as COLUMNS
from ..io.columns import KEPT_IN_ERROR_ROWS, VERDICTS, Verdict
from ..io.stage import staging_folder
from .evaluate import SUBBATCH_SAMPLES, ChunkTask, evaluate_chunk
from .executors import PRELOAD_MAX_CELLS, SCHEDULER_CONNECT_TIMEOUT_S, check_scheduler_address, run_chunk, \
    with_absolute_paths
from .pairs import PairPlan, count_pairs, iter_pair_blocks, resolve_hubs
from .run import screen
from .summary import ScreenSummary, verdict_counts, verdicts

__all__ = [
    "PairPlan",
    "ScreenSummary",
    "iter_pair_blocks",
    "count_pairs",
    "evaluate_chunk",
    "screen",
    "VERDICTS",
    "Verdict",
    "COLUMNS",
    "mast_raise_m",
    "verdicts",
    "verdict_counts",
    "resolve_hubs",
    "check_scheduler_address",
    "with_absolute_paths",
    "run_chunk",
    "ChunkTask",
]
