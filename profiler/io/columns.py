"""The verdicts of a screened pair and the one table of screening columns.

Both the run (:mod:`profiler.screening`) and the writer
(:mod:`profiler.io.screen_output`) read this module; neither imports the
other's names for them.  :data:`LINK_TABLE` lists every column once, in the
order of the links layer; the staged columns (:data:`STAGED_COLUMNS`), the
written ones (:data:`LINK_COLUMNS`) and the figures the engine gives
(:data:`ENGINE_COLUMNS`) are views of it.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass

__all__ = [
    "Verdict", "VERDICTS", "PairStatus", "Column", "LINK_TABLE", "STAGED_COLUMNS", "LINK_COLUMNS", "SITE_COLUMNS",
    "ENGINE_COLUMNS", "AVAILABILITY_COLUMNS", "FLAG_COLUMNS", "KEPT_IN_ERROR_ROWS", "RADIO_COLUMNS",
    "SURROUNDINGS_GROUP", "REFLECTION_GROUP", "REFLECTION_COLUMNS", "CODED_COLUMNS", "MOUNT_LABELS", "CLUTTER_LABELS", "run_staged_columns",
]


class Verdict(str, enum.Enum):
    """What stands between a screened pair and a working link (definitions in the README).

    Checked in this order, the first that applies wins: ``error`` (could not
    be profiled), ``obstructed`` (no line of sight at the design k: terrain,
    buildings or trees cut the ray), ``clearance-short`` (line of sight, but
    the clearance criterion fails at the design or worst-case k),
    ``budget-short`` (the path meets the criterion but the fade margin is
    below 0 dB at the design k: the link does not close), ``marginal``
    (closes, margin below the minimum asked) and ``viable`` (criterion met,
    margin at least the minimum).  Path verdicts come before budget ones
    because a mast fixes the first and gains or power the second.
    """

    VIABLE = "viable"
    MARGINAL = "marginal"
    BUDGET_SHORT = "budget-short"
    CLEARANCE_SHORT = "clearance-short"
    OBSTRUCTED = "obstructed"
    ERROR = "error"

    def __str__(self) -> str:
        return self.value

    @property
    def code(self) -> int:
        """The int8 code a verdict is stored as (its position in the enum)."""
        return _VERDICT_ORDER.index(self)

    @property
    def column(self) -> str:
        """Name of the per-site count column of this verdict (``budget_short_links``...)."""
        return self.value.replace("-", "_") + "_links"


_VERDICT_ORDER = tuple(Verdict)
#: Verdict of each int8 code.
VERDICTS = {k: v for k, v in enumerate(_VERDICT_ORDER)}


class PairStatus(enum.IntEnum):
    """The staged ``status`` of a pair: profiled, or not (its problem says why)."""

    PROFILED = 0
    NOT_PROFILED = 1


@dataclass(frozen=True)
class Column:
    """One screening column.

    ``source``: ``engine`` (a figure of :func:`profiler.link.analyse_links`
    for the pair), ``availability`` (computed once per chunk), ``radio``
    (the radio profile's figures for the pair, or the EIRP check), ``pair``
    (indices and status), ``write`` (made when writing, from the sites, the
    settings or the verdict).  ``staged`` is the dtype kept in the staging
    folder (None: not staged); ``written`` says whether it is a column of the
    links layer; ``flag`` marks yes/no columns (NULL in error rows);
    ``kept_on_error`` marks figures that come from the two positions alone
    and so stay in rows that could not be profiled.  ``group``
    :data:`SURROUNDINGS_GROUP` marks the columns staged and written only by
    runs with obstruction layers or a surface model (so a plain run's
    result keeps its columns); ``labels`` turns an integer code into its
    word when writing.  Source ``mount``: the heights of the two ends as
    used (the sites' heights, roof mounts, per-pair heights of a pairs file);
    ``clutter``: what stands at the worst point (profiler.screening.evaluate.clutter_columns).
    """

    name: str
    source: str
    staged: str | None = None
    written: bool = True
    flag: bool = False
    kept_on_error: bool = False
    group: str | None = None
    labels: tuple[str, ...] | None = None


def _engine(name: str, dtype: str = "f8", **kw) -> Column:
    return Column(name, "engine", dtype, **kw)


def _avail(name: str, dtype: str = "f8", written: bool = True) -> Column:
    return Column(name, "availability", dtype, written=written)


def _radio(name: str, dtype: str = "f8") -> Column:
    """A column of the radio profile (modulation) or the EIRP limit: written only by runs that use one."""
    return Column(name, "radio", dtype)


def _write(name: str) -> Column:
    return Column(name, "write")


#: Group of the columns of runs with obstruction layers or a surface model.
SURROUNDINGS_GROUP = "surroundings"
#: Group of the columns of runs that search for ground reflections.
REFLECTION_GROUP = "reflection"
#: Words of the mount codes: what an antenna height is measured from (profiler.mounts.REFERENCES).
MOUNT_LABELS = ("ground", "roof")
#: Words of the clutter codes, as profiler.clutter.ClutterKind labels them (a test keeps them equal).
CLUTTER_LABELS = ("none", "building", "trees", "surface model")


def _mount(name: str, dtype: str = "f8", labels: tuple[str, ...] | None = None, group: str | None = None) -> Column:
    return Column(name, "mount", dtype, kept_on_error=True, group=group, labels=labels)


#: Every column, in the order of the links layer (site extras follow there as a_<col>, b_<col>);
#: the columns only staged come last.
LINK_TABLE: tuple[Column, ...] = (
    _write("rank"), _write("site_a"), _write("site_b"), _write("verdict"),
    _engine("fade_margin_db"), _engine("distance_km", kept_on_error=True),
    _engine("azimuth_a_to_b_deg", kept_on_error=True), _engine("azimuth_b_to_a_deg", kept_on_error=True),
    _write("lat_a"), _write("lon_a"), _write("lat_b"), _write("lon_b"),
    _engine("ground_a_m"), _engine("ground_b_m"), _mount("agl_a_m"), _mount("agl_b_m"),
    _engine("antenna_a_amsl_m"), _engine("antenna_b_amsl_m"),
    # Roof mounts: what each end's height is measured from, the roof under it and the height above it.
    _mount("mount_a", "i1", MOUNT_LABELS, SURROUNDINGS_GROUP), _mount("mount_b", "i1", MOUNT_LABELS, SURROUNDINGS_GROUP),
    _mount("roof_a_m", group=SURROUNDINGS_GROUP), _mount("roof_b_m", group=SURROUNDINGS_GROUP),
    _mount("above_roof_a_m", group=SURROUNDINGS_GROUP), _mount("above_roof_b_m", group=SURROUNDINGS_GROUP),
    _engine("worst_f1_fraction"), _engine("worst_clearance_m"), _engine("worst_point_km"),
    # What stands on the ground at the design-k worst point (the link record's clutter.at_worst_point_*).
    Column("worst_point_clutter_m", "clutter", "f8", group=SURROUNDINGS_GROUP),
    Column("worst_point_clutter", "clutter", "i1", group=SURROUNDINGS_GROUP, labels=CLUTTER_LABELS),
    _engine("line_of_sight", "u1", flag=True),
    _engine("wc_worst_f1_fraction"), _engine("wc_worst_clearance_m"), _engine("wc_worst_point_km"),
    _engine("wc_line_of_sight", "u1", flag=True),
    _engine("meets_criterion", "u1", flag=True),
    _engine("free_space_db"), _engine("diffraction_db"), _engine("gases_db"), _engine("total_loss_db"),
    _engine("eirp_dbm"), _engine("rx_level_dbm"), _engine("noise_floor_dbm"), _engine("snr_db"),
    _engine("wc_diffraction_db"), _engine("wc_total_loss_db"), _engine("wc_rx_level_dbm"), _engine("wc_snr_db"),
    _engine("wc_fade_margin_db"),
    # meets_availability is 2 where there is no verdict (written as empty).
    _avail("availability_pct"), _avail("meets_availability", "u1"), _avail("rain_outage_min_per_year"),
    _avail("multipath_min_per_year"), _avail("multipath_worst_month_min"), _write("availability_note"),
    # Radio profiles and EIRP limits (profiler.equipment.modulation): best_step is the chosen step's number
    # in the profile's list (0: none has the margin), eirp_over_limit_db the EIRP above the limit (< 0: below).
    _radio("best_step", "i2"), _radio("capacity_mbps"), _radio("capacity_at_target_mbps"),
    _radio("eirp_over_limit_db"),
    # Monte Carlo confidence (profiler.confidence): written only by runs that ask for it.
    Column("p_meets", "confidence", "f8"), Column("p_los", "confidence", "f8"),
    # Ground reflections (profiler.reflection), only in runs that search for them (--reflections, --water...):
    # the point at the design k, km from a; the level swing over the k sweep, dB; any reflection over water.
    Column("reflection_point_km", "reflection", "f8", group=REFLECTION_GROUP),
    Column("reflection_swing_db", "reflection", "f8", group=REFLECTION_GROUP),
    Column("over_water", "reflection", "u1", flag=True, group=REFLECTION_GROUP),
    _write("method"), _write("k"), _write("k_worst"),
    _engine("samples", "i4", kept_on_error=True), _engine("spacing_m", kept_on_error=True),
    _engine("mast_raise_m"), _write("problem"),
    Column("pair", "pair", "i8", written=False, kept_on_error=True),
    Column("a", "pair", "i8", written=False, kept_on_error=True),
    Column("b", "pair", "i8", written=False, kept_on_error=True),
    Column("status", "pair", "i1", written=False, kept_on_error=True),
    # Codes of profiler.availability.availability_note, turned into the note when writing.
    _avail("availability_status", "i1", written=False), _avail("rain_range", "i1", written=False),
    _avail("multipath_status", "i1", written=False),
)

#: Staged result columns and their dtypes.
STAGED_COLUMNS: dict[str, str] = {c.name: c.staged for c in LINK_TABLE if c.staged is not None}
#: Columns of the line layer, in order (site extras follow as a_<col>, b_<col>).
LINK_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.written)
#: Figures the link engine gives each pair.
ENGINE_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.source == "engine")
#: Figures of the availability estimate (once per chunk).
AVAILABILITY_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.source == "availability")
#: Yes/no columns, NULL in the rows that could not be profiled.
FLAG_COLUMNS = frozenset(c.name for c in LINK_TABLE if c.flag)
#: Columns of radio profiles and EIRP limits: written only by runs that use one (their values: evaluate.py).
RADIO_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.source == "radio")
#: Columns of the Monte Carlo confidence: written only by runs that ask for it (--draws, --dem-error-m...).
CONFIDENCE_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.source == "confidence")
#: Columns of ``screen --rank-by``: fade margin (default) or the probability of meeting the criterion.
RANK_COLUMNS: tuple[str, ...] = ("fade_margin_db", "p_meets")
#: Columns of the reflection search: staged and written only by runs that search (profiler.reflection).
REFLECTION_COLUMNS: tuple[str, ...] = tuple(c.name for c in LINK_TABLE if c.source == "reflection")
#: Columns an error row keeps: they come from the two positions alone, not from the terrain.
KEPT_IN_ERROR_ROWS = frozenset(c.name for c in LINK_TABLE if c.kept_on_error)

#: Columns written as words: name -> the word of each code.
CODED_COLUMNS: dict[str, tuple[str, ...]] = {c.name: c.labels for c in LINK_TABLE if c.labels is not None}


def run_staged_columns(surroundings: bool, reflection: bool = False) -> dict[str, str]:
    """The staged columns of one run: without obstruction layers or surface model, not their group
    (nor the reflection group without a reflection search)."""
    groups: set[str | None] = {None, SURROUNDINGS_GROUP} if surroundings else {None}
    if reflection:
        groups.add(REFLECTION_GROUP)
    return {c.name: c.staged for c in LINK_TABLE if c.staged is not None and c.group in groups}


#: Columns of the point layer, in order (extra site columns follow): pairs per verdict.
SITE_COLUMNS: tuple[str, ...] = (
    "name", "lat", "lon", "antenna_agl_m", "pairs", *(v.column for v in Verdict),
    "best_fade_margin_db", "best_partner",
)
