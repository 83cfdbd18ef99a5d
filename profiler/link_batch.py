"""The result of analysing many links: :class:`LinkBatch`, its JSON records and a table."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from .availability import LinkAvailability
from .budget import Radio
from .link_record import link_record, link_warnings
from .link_types import AtK, Settings, Site
from .profile import Profiles

__all__ = ["LinkBatch", "DATAFRAME_COLUMNS"]

#: Columns of :meth:`LinkBatch.to_dataframe`, units in the names; design-k figures unless "worst".
DATAFRAME_COLUMNS = (
    "name", "error", "distance_km", "azimuth_a_to_b_deg", "ground_a_m", "ground_b_m",
    "antenna_a_amsl_m", "antenna_b_amsl_m", "worst_f1_fraction", "worst_clearance_m",
    "worst_f1_fraction_worst_k", "free_space_loss_db", "diffraction_loss_db", "gases_loss_db",
    "total_loss_db", "rx_level_dbm", "fade_margin_db", "meets_criterion",
)


@dataclass(frozen=True)
class LinkBatch:
    """Results of many links; ``record(i)`` gives the JSON object of link i, ``to_dataframe()`` a table."""

    names: tuple[str, ...]
    sites_a: Sequence[Site]  # a tuple, or SiteColumns from batch callers
    sites_b: Sequence[Site]
    radio: Radio
    settings: Settings
    profiles: Profiles
    ground_a_m: np.ndarray
    ground_b_m: np.ndarray
    antenna_a_amsl_m: np.ndarray
    antenna_b_amsl_m: np.ndarray
    free_space_db: np.ndarray
    design: AtK
    worst: AtK
    meets_criterion: np.ndarray
    provenance: dict
    # Rooftop and urban links (obstruction layers, surface models, mounts); None when unused.
    surroundings: Any = None
    crossings: Any = None
    placements_a: tuple | None = None
    placements_b: tuple | None = None
    clutter_warnings: tuple[tuple[str, ...], ...] = ()
    availability: LinkAvailability | None = None
    # Antennas and installer figures (profiler.equipment), set by profiler.jobs; None when not made.
    antennas: dict | None = None  # {"a": Antenna, "b": Antenna}, either may be missing
    installation: Any = None  # profiler.equipment.installation.Installation
    # Radio profile figures (profiler.equipment.modulation.ModulationResult) and the EIRP check; None when unused.
    modulation: Any = None
    eirp: Any = None
    # Monte Carlo confidence (profiler.confidence.ConfidenceResult); None when not asked for.
    confidence: Any = None
    # Ground reflections over the k sweep (profiler.reflection.LinkReflections); None when not searched.
    reflection: Any = None

    def __len__(self) -> int:
        return len(self.names)

    def __repr__(self) -> str:
        n = len(self)
        failed = sum(p is not None for p in self.problems)
        met = int(np.count_nonzero(self.meets_criterion))
        first = f", first {self.names[0]!r}" if n else ""
        return (f"<LinkBatch: {n} link{'s' if n != 1 else ''}{first}; {met} meet the criterion, "
                f"{failed} not profiled; k={self.settings.k:.4g}/{self.settings.k_worst:.4g}, "
                f"{self.settings.diffraction_method}>")

    @property
    def problems(self) -> tuple[str | None, ...]:
        return self.profiles.problems

    def record(self, i: int) -> dict:
        """JSON-ready result of link i (keys as in the design notes)."""
        return link_record(self, i)

    def warnings(self, i: int) -> list[str]:
        """Validity warnings of link i: design k first, then any new at the worst-case k."""
        return link_warnings(self, i)

    def records(self) -> list[dict]:
        return [self.record(i) for i in range(len(self))]

    def to_dataframe(self) -> Any:
        """One row per link (pandas DataFrame): the main figures, units in the column names.

        Figures are at the design k except ``worst_f1_fraction_worst_k``; rows
        whose path could not be profiled carry the reason in ``error`` and NaN
        figures.  Columns: :data:`DATAFRAME_COLUMNS`.
        """
        import pandas as pd

        bad = np.array([p is not None for p in self.problems], dtype=bool)
        lines = self.profiles.lines
        c, cw, b = self.design.clearance, self.worst.clearance, self.design.budget

        def col(values: Any) -> np.ndarray:
            out = np.array(np.broadcast_to(np.asarray(values, dtype=float), (len(self),)))
            out[bad] = np.nan
            return out

        data = {
            "name": list(self.names),
            "error": list(self.problems),
            "distance_km": col(lines.length_m) / 1000.0,
            "azimuth_a_to_b_deg": col(lines.azimuth_a_to_b_deg),
            "ground_a_m": col(self.ground_a_m),
            "ground_b_m": col(self.ground_b_m),
            "antenna_a_amsl_m": col(self.antenna_a_amsl_m),
            "antenna_b_amsl_m": col(self.antenna_b_amsl_m),
            "worst_f1_fraction": col(c.worst_f1_fraction),
            "worst_clearance_m": col(c.worst_clearance_m),
            "worst_f1_fraction_worst_k": col(cw.worst_f1_fraction),
            "free_space_loss_db": col(self.free_space_db),
            "diffraction_loss_db": col(self.design.diffraction_db),
            "gases_loss_db": col(self.design.gases_db),
            "total_loss_db": col(self.design.total_db),
            "rx_level_dbm": col(b.rx_level_dbm),
            "fade_margin_db": col(b.fade_margin_db),
            "meets_criterion": np.asarray(self.meets_criterion, dtype=bool) & ~bad,
        }
        return pd.DataFrame(data, columns=list(DATAFRAME_COLUMNS))
