"""What a screening run reports: verdict codes of the staged rows and the run's summary."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..io.columns import PairStatus, Verdict
from ..io.sites import BadRow

__all__ = ["ScreenSummary", "verdicts", "verdict_counts"]


@dataclass(frozen=True)
class ScreenSummary:
    """What a screening run did; ``counts`` pairs by verdict (see :class:`Verdict`)."""

    outputs: tuple[str, ...]
    sites: int
    pairs: int
    counts: dict
    bad_rows: tuple[BadRow, ...]
    samples: int
    seconds: float
    resumed_pairs: int
    min_margin_db: float
    problems: tuple[str, ...] = field(default=())
    #: Run-wide warnings (e.g. a given spacing coarser than the rasters), for stderr.
    warnings: tuple[str, ...] = field(default=())

    def count(self, verdict: "Verdict | str") -> int:
        """Pairs with this verdict."""
        return int(self.counts.get(Verdict(verdict), 0))

    @property
    def viable(self) -> int:
        return self.count(Verdict.VIABLE)

    @property
    def marginal(self) -> int:
        return self.count(Verdict.MARGINAL)

    @property
    def errors(self) -> int:
        return self.count(Verdict.ERROR)


def verdicts(cols: dict[str, np.ndarray], min_margin_db: float) -> np.ndarray:
    """Int8 verdict codes (:attr:`Verdict.code`) of each row, from its staged columns.

    Needs ``status``, ``line_of_sight``, ``meets_criterion`` and
    ``fade_margin_db`` (design k).  Order of the checks: see :class:`Verdict`.
    """
    fade = cols["fade_margin_db"]
    code = np.full(fade.shape, Verdict.VIABLE.code, dtype=np.int8)
    with np.errstate(invalid="ignore"):
        code[fade < min_margin_db] = Verdict.MARGINAL.code
        code[fade < 0.0] = Verdict.BUDGET_SHORT.code
    code[cols["meets_criterion"] != 1] = Verdict.CLEARANCE_SHORT.code
    code[cols["line_of_sight"] != 1] = Verdict.OBSTRUCTED.code
    code[(cols["status"] != PairStatus.PROFILED) | ~np.isfinite(fade)] = Verdict.ERROR.code
    return code


def verdict_counts(codes: np.ndarray) -> dict:
    """Pairs per verdict, every verdict present (0 when none)."""
    counts = np.bincount(codes.astype(np.int64), minlength=len(Verdict))
    return {v: int(counts[v.code]) for v in Verdict}


