"""One screening run: checks, the output's lock, staging and resumption, the chunks, the final write.

Chunks are evaluated by an executor (:mod:`.executors`) and come back in
order.  Their columns are appended to a staging folder beside the output and
committed chunk by chunk (:mod:`profiler.io.stage`), so an interrupted run
resumes where it stopped.  At the end the rows are ranked by fade margin and
written out (:mod:`profiler.io.screen_output`).
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
import time
from collections import deque
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from ..budget import Radio
from ..errors import InputError
from ..io.columns import run_staged_columns
from ..io.screen_output import (check_csv_geometry, check_output_path, check_outputs_spare_inputs, output_paths,
                                rank_order, write_outputs)
from ..io.sites import BadRow, SiteTable
from ..io.stage import (RunLock, Stage, crash_point, finish_renames, lock_path, pending_renames,
                        staging_folder)
from ..link import Settings
from ..profile import spacing_warning
from ..terrain import ElevationModel
from .evaluate import make_task
from .executors import make_executor
from .frames import frames_of_run, read_site_input
from .pairs import PairPlan, count_pairs, drop_sites, pair_chunks, pairs_bound
from .placing import AntennaHeights, antenna_heights, place_roofs, site_mounts
from .summary import ScreenSummary, verdict_counts, verdicts

__all__ = ["screen"]


def _stage(out: str | os.PathLike, surroundings: Any = None, reflection: Any = None) -> Stage:
    return Stage(staging_folder(out), run_staged_columns(surroundings is not None, reflection is not None))


def _file_stamp(path: str) -> str:
    st = os.stat(path) if os.path.exists(path) else None
    return f"{path}|{st.st_size if st else ''}|{st.st_mtime_ns if st else ''}"


def _fingerprint(sites: SiteTable, model: ElevationModel, radio: Radio, settings: Settings,
                 plan: PairPlan, chunk_pairs: int, surroundings: Any = None,
                 heights: AntennaHeights | None = None) -> str:
    h = hashlib.sha256()
    if surroundings is not None:  # layers (files, fields, kinds), surface rasters, tree allowance
        h.update(repr(surroundings.describe()).encode())
        for layer in surroundings.layers:
            h.update(_file_stamp(str(layer.spec.path)).encode())
        for s in surroundings.surface.sources if surroundings.surface is not None else ():
            h.update(_file_stamp(s.path).encode())
    if heights is not None:  # roof mounts and per-pair heights
        h.update(heights.digest())
    for arr in (sites.lat_deg, sites.lon_deg, sites.antenna_agl_m, sites.gain_dbi):
        if arr is not None:
            h.update(np.ascontiguousarray(arr, dtype=float).tobytes())
    h.update("\x1f".join(map(str, sites.names)).encode())
    for s in model.sources:
        h.update(_file_stamp(s.path).encode())
    h.update(repr((radio, settings, model.nodata_fill_m, plan.max_km, plan.hubs, chunk_pairs)).encode())
    # A staging folder of another column layout is not resumed.
    h.update(repr(tuple(run_staged_columns(surroundings is not None).items())).encode())
    if plan.explicit is not None:
        h.update(plan.explicit[0].tobytes())
        h.update(plan.explicit[1].tobytes())
    return h.hexdigest()


def screen(
    sites: SiteTable | str | os.PathLike | Any,
    model: ElevationModel | str | os.PathLike | Sequence[str | os.PathLike],
    radio: Radio,
    settings: Settings = Settings(),
    out: str | os.PathLike | None = None,
    *,
    plan: PairPlan = PairPlan(),
    bad_rows: Sequence[BadRow] = (),
    workers: int | None = None,
    scheduler: Any = None,
    resume: bool = False,
    restart: bool = False,
    overwrite: bool = False,
    chunk_pairs: int = 2000,
    min_margin_db: float = 10.0,
    progress: Callable[[int, int], None] | None = None,
    inputs: Sequence[str | os.PathLike] = (),
    site_options: Mapping[str, Any] | None = None,
    surroundings: Any = None,
    above_roof: bool = False,
    radios: Any = None,
    reflection: Any = None,
    run_description: dict | None = None,
    csv_geometry: str = "none",
    confidence: Any = None,
    rank_by: str = "fade_margin_db",
) -> ScreenSummary | tuple[Any, Any]:
    """Screen the planned pairs of ``sites``: rank them by fade margin and give each a verdict.

    Parameters
    ----------
    sites : SiteTable, path, GeoDataFrame or DataFrame
        Candidate sites.  A path is read with :func:`profiler.io.sites.read_sites`
        (CSV or any point layer); a GeoDataFrame of points (any CRS) or a
        DataFrame with name, latitude and longitude columns (WGS84 degrees)
        is read the same way.  ``site_options`` passes that reader's keywords
        (``name_col``, ``agl_col``, ``default_agl_m``...); rows it skips are in
        the summary's ``bad_rows``, numbered by position in the frame from 0.
    model : ElevationModel, path or list of paths
        Elevation rasters; paths are opened for this run and closed after it.
    radio : Radio
        Frequency, power, gains and losses of every pair (a ``gain_dbi``
        column of the sites overrides the gains).
    settings : Settings
        The analysis settings of ``terrahop link`` (k-factors, criterion...).
    out : path, optional
        Result file (.gpkg, .geojson or .csv; see :mod:`profiler.io.screen_output`).
        Without it the result is returned as two GeoDataFrames instead.
    plan : PairPlan
        All pairs (within ``max_km``), hubs to all, or an explicit list.
    workers, scheduler
        Local processes (None: all cores; 1: in this process), or a Dask
        scheduler (address, cluster or Client).
    resume, restart, overwrite
        With ``resume`` an interrupted run of the same inputs continues;
        without it a leftover staging folder is an error unless ``restart``
        discards it.  An existing result is replaced only with ``overwrite``.
    chunk_pairs : int
        Pairs per chunk (unit of work, progress and resumption).
    min_margin_db : float
        Fade margin, dB, a pair needs at the design k to be ``viable``.
    progress : callable, optional
        ``progress(done, total)``, called after each committed chunk.
    radios : SiteRadios, optional
        Radio profiles per site and EIRP limits (:class:`profiler.equipment.modulation.SiteRadios`,
        made by :func:`profiler.jobs.site_radios`); ``radio`` is then the flags' one-step radio.
    confidence : profiler.confidence.ConfidenceSettings, optional
        Adds the columns ``p_meets`` and ``p_los`` (Monte Carlo, seeded per pair by its ends).
    rank_by : str
        ``fade_margin_db`` (default) or ``p_meets`` (needs ``confidence``; ties by fade margin).
    inputs : paths
        Input files an output must not overwrite (the sites and pairs files);
        the rasters are always protected.  A second run on the same output
        while one is alive is refused (see :mod:`profiler.io.stage`).
    surroundings : profiler.obstructions.Surroundings, optional
        Obstruction layers and/or a surface model, as ``terrahop link`` takes
        them (:func:`profiler.jobs.surroundings_from_options`); the caller closes it.
    above_roof : bool
        The sites' antenna heights are above the roof of the building each
        stands in (a ``mount`` column of ground/roof overrides it per site).
        Per-pair heights come in ``plan.heights``.
    run_description : dict, optional
        How the result was made (:func:`profiler.io.run_description.describe_run`),
        written into the GeoPackage or beside the file; by default one naming
        this call, the settings and the raster files.
    csv_geometry : str
        ``none`` (default) or ``wkt``: a ``wkt`` geometry column in CSV output.

    Returns
    -------
    ScreenSummary
        With ``out``: what the run did (pairs per :class:`Verdict`, files written).
    (links, sites) : tuple of GeoDataFrame
        Without ``out``: the links layer (one line per pair, ranked) and the
        sites layer (counts per verdict), in WGS84, as the .gpkg holds them;
        the :class:`ScreenSummary` is in ``links.attrs["summary"]``.

    Examples
    --------
    >>> from profiler.budget import Radio
    >>> from profiler.screening import PairPlan, screen
    >>> links, sites = screen("data/demo/sites.csv", "data/demo/terrain.tif",
    ...                       Radio(5.8, gain_a_dbi=23, gain_b_dbi=23), plan=PairPlan(max_km=6), workers=1)
    >>> links[["site_a", "site_b", "verdict"]].shape[1], links.crs.to_epsg()
    (3, 4326)
    >>> int(sites["pairs"].sum()) == 2 * len(links) == 2 * links.attrs["summary"].pairs
    True
    """
    # Long only by its numpydoc docstring; the body is the few lines below.
    own_model = not isinstance(model, ElevationModel)
    if isinstance(model, ElevationModel):
        elevation = model
    else:
        elevation = ElevationModel([model] if isinstance(model, (str, os.PathLike)) else list(model))
    try:
        if run_description is None:
            run_description = _default_description(elevation, radio, settings, min_margin_db,
                                                   sites if isinstance(sites, (str, os.PathLike)) else None)
        if isinstance(sites, (str, os.PathLike)):
            inputs = [*inputs, sites]  # a result must not land on the sites file
        if not isinstance(sites, SiteTable):
            sites, bad_read = read_site_input(sites, site_options)
            bad_rows = [*bad_rows, *bad_read]
        run = dict(plan=plan, bad_rows=bad_rows, workers=workers, scheduler=scheduler, resume=resume,
                   restart=restart, overwrite=overwrite, chunk_pairs=chunk_pairs, min_margin_db=min_margin_db,
                   progress=progress, inputs=inputs, surroundings=surroundings, above_roof=above_roof,
                   radios=radios, reflection=reflection, run_description=run_description,
                   csv_geometry=csv_geometry, confidence=confidence, rank_by=rank_by)
        if out is not None:
            return _screen_to(sites, elevation, radio, settings, out, **run)
        return frames_of_run(lambda path: _screen_to(sites, elevation, radio, settings, path, **run))
    finally:
        if own_model:
            elevation.close()


def _screen_to(
    sites: SiteTable, model: ElevationModel, radio: Radio, settings: Settings, out: str | os.PathLike, *,
    plan: PairPlan, bad_rows: Sequence[BadRow], workers: int | None, scheduler: Any, resume: bool,
    restart: bool, overwrite: bool, chunk_pairs: int, min_margin_db: float,
    progress: Callable[[int, int], None] | None, inputs: Sequence[str | os.PathLike],
    surroundings: Any = None, above_roof: bool = False, radios: Any = None, reflection: Any = None,
    run_description: dict | None = None, csv_geometry: str = "none", confidence: Any = None,
    rank_by: str = "fade_margin_db",
) -> ScreenSummary:
    """:func:`screen` of a read site table into the file ``out``."""
    t0 = time.perf_counter()
    radio.validate()
    settings.validate()
    if chunk_pairs < 1:
        raise InputError(f"chunk size must be at least 1 pair, got {chunk_pairs}")
    check_output_path(out)
    check_csv_geometry(csv_geometry, out)  # before the work, not at the final write
    # sites.source is only a file name, so the sites file's path comes in ``inputs``.
    check_outputs_spare_inputs(out, [*inputs, *_raster_files(model), *_surroundings_files(surroundings)])
    sites, plan, bad = _covered_sites(sites, model, plan, bad_rows)
    sites, plan, bad, heights, notes = _placed_sites(sites, model, plan, bad, surroundings, above_roof)
    if radios is not None:
        radios = radios.aligned(sites)  # sites outside the rasters or not placed were dropped
    with RunLock(lock_path(out), str(out)):
        run = _Run(sites, model, radio, settings, out, plan, bad, chunk_pairs, min_margin_db, t0,
                   surroundings, heights, radios, reflection)
        run.run_description = run_description
        run.csv_geometry = csv_geometry
        run.with_confidence(confidence, rank_by)
        done = run.prepare(resume, restart, overwrite)
        if done is not None:
            return done
        try:
            executor, inflight_max = make_executor(model, workers, scheduler, pairs_bound(sites, plan), chunk_pairs,
                                                   surroundings)
        except BaseException:
            if run.done_rows == 0:  # e.g. the scheduler cannot be reached: leave no empty staging behind
                run.stage.discard()
            raise
        try:
            summary = run.compute(executor, inflight_max, progress)
            return dataclasses.replace(summary, warnings=summary.warnings + notes
                                       + _spacing_warnings(model, sites, settings))
        finally:
            executor.close(cancel=True)


def _default_description(model: ElevationModel, radio: Radio, settings: Settings, min_margin_db: float,
                         sites_file: str | os.PathLike | None) -> dict:
    """The run description of a call from Python: the call, the settings, the rasters and the sites file."""
    from ..io.run_description import describe_run

    return describe_run(command=["python", "-c", "profiler.screening.screen(...)"], radio=radio, settings=settings,
                        min_margin_db=min_margin_db, dem=[s.path for s in model.sources], sites_file=sites_file)


def _covered_sites(sites: SiteTable, model: ElevationModel, plan: PairPlan,
                   bad_rows: Sequence[BadRow]) -> tuple[SiteTable, PairPlan, list[BadRow]]:
    """The sites inside the rasters (the others become bad rows), the plan renumbered to them."""
    bad = list(bad_rows)
    covered = model.covers(sites.lon_deg, sites.lat_deg)
    for k in np.flatnonzero(~covered):
        bad.append(BadRow(sites.source, int(sites.rows[k]), str(sites.names[k]),
                          f"position ({sites.lat_deg[k]:.6f}, {sites.lon_deg[k]:.6f}) lies outside the elevation rasters"))
    if covered.sum() < 2:
        raise InputError(
            f"{sites.source}: {int(covered.sum())} of {len(sites)} usable sites lie inside the elevation rasters; "
            "nothing to screen (check the --dem files and the site coordinates)"
        )
    if not covered.all():
        sites, plan = drop_sites(sites, plan, covered)
    bad.sort(key=lambda r: (r.source != sites.source, r.row))
    return sites, plan, bad


def _placed_sites(sites: SiteTable, model: ElevationModel, plan: PairPlan, bad: list[BadRow], surroundings: Any,
                  above_roof: bool) -> tuple[SiteTable, PairPlan, list[BadRow], AntennaHeights | None, tuple]:
    """Roof mounts placed once per site (the unplaceable become bad rows), per-pair heights; before any pair.

    Returns the sites and plan without the skipped sites, the bad rows, the
    heights (None for a plain run: every end at its site's height above
    ground) and warnings (the first 20 of them, then a count).
    """
    if surroundings is not None:
        surroundings.check_datum(model)  # one line before any work, as terrahop link refuses it
    roof, bad_mount = site_mounts(sites, above_roof)
    if surroundings is None and not roof.any() and plan.heights is None and not bad_mount:
        return sites, plan, bad, None, ()
    keep = np.ones(len(sites), dtype=bool)
    named = {int(r): k for k, r in enumerate(sites.rows)}
    for row in bad_mount:
        keep[named[row.row]] = False
    roof_m, bad_place, warnings = place_roofs(sites, roof & keep, model, surroundings)
    for row in bad_place:
        keep[named[row.row]] = False
    new_bad = [*bad, *bad_mount, *bad_place]
    if keep.sum() < 2:
        raise InputError(f"{sites.source}: {int(keep.sum())} of {len(sites)} sites can be placed; nothing to "
                         f"screen (first: {(bad_mount + bad_place)[0].describe()})")
    if not keep.all():
        sites, plan = drop_sites(sites, plan, keep)
        roof_m = roof_m[keep]
    new_bad.sort(key=lambda r: (r.source != sites.source, r.row))
    notes = tuple(warnings[:20]) + ((f"... and {len(warnings) - 20} more sites inside buildings taller "
                                     "than their antennas",) if len(warnings) > 20 else ())
    return sites, plan, new_bad, antenna_heights(sites, roof_m, plan, surroundings is not None), notes


def _surroundings_files(surroundings: Any) -> list[str]:
    """The obstruction layer files and surface rasters of a run (an output must not land on them)."""
    if surroundings is None:
        return []
    files = [str(layer.spec.path) for layer in surroundings.layers]
    return files + (_raster_files(surroundings.surface) if surroundings.surface is not None else [])


def _raster_files(model: ElevationModel) -> list[str]:
    """Every file the rasters read, the sources of a VRT included."""
    files = []
    for s in model.sources:
        files.append(s.path)
        if str(s.path).lower().endswith(".vrt"):
            import rasterio

            try:
                with rasterio.open(s.path) as ds:
                    files += [f for f in ds.files if f != s.path]
            except Exception:  # noqa: BLE001 - opened before; the model reports read errors itself
                pass
    return files


def _spacing_warnings(model: ElevationModel, sites: SiteTable, settings: Settings) -> tuple[str, ...]:
    """A warning when a given spacing is coarser than the finest raster cell at the sites."""
    if settings.spacing_m is None or len(sites) == 0:
        return ()
    cells = model.cell_sizes_m(sites.lon_deg, sites.lat_deg)
    if not np.isfinite(cells).any():
        return ()
    note = spacing_warning("screening", float(settings.spacing_m), float(np.nanmin(cells)), where="at the sites")
    return (note,) if note else ()



#: Staged columns the verdicts and the ranking read.
_VERDICT_KEYS = ("pair", "a", "b", "status", "fade_margin_db", "meets_criterion", "line_of_sight")


class _Run:
    """One screening run under the output's lock: staging checks, the chunks, the final write."""

    def __init__(self, sites, model, radio, settings, out, plan, bad, chunk_pairs, min_margin_db, t0,
                 surroundings=None, heights=None, radios: Any = None, reflection: Any = None) -> None:
        self.sites, self.model, self.radio, self.settings = sites, model, radio, settings
        self.out, self.plan, self.bad = out, plan, bad
        self.chunk_pairs, self.min_margin_db, self.t0 = chunk_pairs, min_margin_db, t0
        self.heights = heights
        self.stage = _stage(out, surroundings, reflection)
        self.reflection = reflection
        self.fingerprint = _fingerprint(sites, model, radio, settings, plan, chunk_pairs, surroundings, heights)
        self.radios = radios
        if reflection is not None:  # a reflection search is another run (its settings, the water file)
            water = reflection.water_file
            key = repr(reflection) + (_file_stamp(str(water)) if water else "")
            self.fingerprint = hashlib.sha256((self.fingerprint + key).encode()).hexdigest()
        if radios is not None:  # another radio profile or limit is another run
            self.fingerprint = hashlib.sha256((self.fingerprint + radios.key()).encode()).hexdigest()
        self.total = count_pairs(sites, plan)
        self.done_rows = self.done_chunks = self.resumed = 0
        self.run_description: dict | None = None
        self.csv_geometry = "none"
        self.confidence: Any = None
        self.rank_by = "fade_margin_db"

    def with_confidence(self, confidence: Any, rank_by: str) -> None:
        """The Monte Carlo confidence asked for (p_meets, p_los columns) and the ranking column."""
        from ..io.screen_output import check_rank_by

        self.rank_by = check_rank_by(rank_by, confidence is not None)
        self.confidence = confidence
        if confidence is not None:  # other draws are another run
            self.fingerprint = hashlib.sha256((self.fingerprint + repr(confidence)).encode()).hexdigest()

    def prepare(self, resume: bool, restart: bool, overwrite: bool) -> "ScreenSummary | None":
        """Finish a crashed final write, apply the overwrite rule, open or create the stage.

        Returns the summary when a resumed run only had its renames left to do.
        """
        stage = self.stage
        renames = None
        if stage.exists():
            try:
                renames = pending_renames(stage)
            except InputError:
                if not restart:  # --restart is the advice: it must get past a damaged marker
                    raise
        if renames is not None:
            # The last run crashed between its renames: put its complete pair of files in place.
            finish_renames(stage, renames)
            if resume and self._same_run():
                rows, _ = stage.validate(self.total)
                summary = self._summary(rows, rows, list(map(str, output_paths(self.out))))
                stage.discard()
                return summary
            stage.discard()
        if not overwrite:
            for path in output_paths(self.out):
                if path.exists():
                    raise InputError(
                        f"{path} exists; add --overwrite to replace it (it is kept until the new result "
                        "is complete) or choose another --out"
                    )
        if stage.exists():
            if resume:
                if not self._same_run():
                    raise InputError(
                        f"{stage.folder} holds an interrupted run with different inputs or settings; "
                        "run the same command as before with --resume, or add --restart to start again"
                    )
                self.done_rows, self.done_chunks = stage.validate(self.total)
                stage.reopen(self.done_rows)
                self.resumed = self.done_rows
                return None
            if not restart:
                raise InputError(
                    f"an interrupted run left {stage.folder}; add --resume to finish it "
                    "or --restart to discard it and start again"
                )
        stage.create({"fingerprint": self.fingerprint, "chunk_pairs": self.chunk_pairs,
                      "total_pairs": self.total})
        return None

    def _same_run(self) -> bool:
        return self.stage.manifest()["fingerprint"] == self.fingerprint

    def compute(self, executor, inflight_max: int, progress) -> "ScreenSummary":
        """Evaluate the remaining chunks, then rank and write the result."""
        stage, total = self.stage, self.total
        sites, radio, settings = self.sites, self.radio, self.settings
        done_rows, done_chunks = self.done_rows, self.done_chunks
        stage.open()
        try:
            if progress:
                progress(done_rows, total)
            if total - done_rows > 0:
                pending: deque = deque()
                chunks = pair_chunks(sites, self.plan, self.chunk_pairs, skip_pairs=done_rows)
                exhausted = False
                while True:
                    while not exhausted and len(pending) < inflight_max:
                        nxt = next(chunks, None)
                        if nxt is None:
                            exhausted = True
                            break
                        first, a, b = nxt
                        pending.append(executor.submit(make_task(sites, first, a, b, radio, settings,
                                                                 self.heights, self.radios,
                                                                 self.confidence, self.reflection)))
                    if not pending:
                        break
                    cols, problems = pending.popleft().result()
                    done_chunks += 1
                    done_rows += cols["pair"].size
                    stage.append(cols, problems, done_chunks, done_rows)
                    if progress:
                        progress(done_rows, total)
        finally:
            stage.close()
        executor.close()  # free the workers' memory before writing
        keys = stage.columns(done_rows, _VERDICT_KEYS + (("p_meets",) if self.confidence is not None else ()))
        codes = verdicts(keys, self.min_margin_db)
        problems = {int(p): str(m) for p, m in stage.problems()}
        ranked = stage.rank(rank_order(keys, self.rank_by))
        outputs = write_outputs(self.out, stage, sites, keys, codes, ranked, problems, settings,
                                radio_columns=self.radios is not None,
                                confidence_columns=self.confidence is not None, rank_by=self.rank_by,
                                run_description=self.run_description, csv_geometry=self.csv_geometry)
        summary = self._summary(done_rows, self.resumed, outputs)
        stage.discard()
        crash_point("staging removed")
        return summary

    def _summary(self, rows: int, resumed: int, outputs: list[str]) -> "ScreenSummary":
        stage = self.stage
        keys = stage.columns(rows, _VERDICT_KEYS)
        samples = int(stage.columns(rows, ("samples",))["samples"].astype(np.int64).sum())
        problems = {int(p): str(m) for p, m in stage.problems()}
        codes = verdicts(keys, self.min_margin_db)
        return ScreenSummary(
            outputs=tuple(outputs), sites=len(self.sites), pairs=int(rows), counts=verdict_counts(codes),
            bad_rows=tuple(self.bad), samples=samples,
            seconds=time.perf_counter() - self.t0, resumed_pairs=resumed, min_margin_db=self.min_margin_db,
            problems=tuple(problems[p] for p in sorted(problems)),
        )


