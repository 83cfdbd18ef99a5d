"""One coverage run: blocks of radials on this process, a local pool or a Dask cluster, staged and resumable.

Like ``terrahop screen`` (:mod:`profiler.io.stage`): ``OUT.lock`` holds an
exclusive lock while a run writes ``OUT``; finished blocks are staged in
``OUT.partial/`` (one ``.npz`` per block, written under a temporary name and
renamed, so a block file is whole or absent) with ``manifest.json`` naming the
run; ``resume`` reads the staged blocks of the same run and computes the rest,
``restart`` discards them.  The staging folder is removed once the outputs are
written (by the caller, :func:`finish`).  No printing, no click.
"""

from __future__ import annotations

import hashlib
import json
import multiprocessing as mp
import os
import shutil
import sys
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..errors import DataError, InputError
from ..io.stage import RunLock, lock_path, staging_folder, write_json
from .engine import CoveragePlan, evaluate_block

__all__ = ["CoverageResult", "run_coverage", "finish", "fingerprint", "CRASH_AFTER_BLOCKS"]

#: Test hook: stop (KeyboardInterrupt) after this many blocks were staged in a run (None: never).
CRASH_AFTER_BLOCKS: int | None = None


@dataclass
class CoverageResult:
    """Bands on the output grid ((height, width) float32 each), the candidate sites' values, and run facts."""

    plan: CoveragePlan
    bands: dict[str, np.ndarray]
    candidates: dict[str, np.ndarray] = field(default_factory=dict)
    seconds: float = 0.0
    blocks: int = 0
    blocks_resumed: int = 0


def fingerprint(plan: CoveragePlan, model: Any, surface: Any = None) -> str:
    """A digest of everything that decides a run's numbers (settings, grid, rasters' names, sizes and times)."""
    h = hashlib.sha256()
    s = plan.settings
    parts = [repr(plan.hub), repr(plan.grid), plan.n_radials, plan.n_samples, plan.spacing_m, plan.hub_ground_m,
             s.radius_m, s.rx_agl_m, repr(s.radio), s.k, s.method, s.cell_m, repr(s.sector), s.rx_above_surface,
             s.block_radials, None if s.plan is None else repr(s.plan.describe()), plan.cell_d.size,
             None if s.plan is None else s.plan.min_margin_db]
    for m in (model, surface):
        for src in getattr(m, "sources", ()):
            try:
                st = os.stat(src.path)
                parts.append((os.path.abspath(src.path), st.st_size, st.st_mtime_ns))
            except OSError:
                parts.append(src.path)
    h.update(json.dumps(parts, default=str).encode())
    h.update(np.ascontiguousarray(plan.cell_d).tobytes())
    return h.hexdigest()


# --------------------------------------------------------------------------- executors

_WORKER: dict[str, Any] = {}


def _init_worker(model: Any, surface: Any) -> None:
    _WORKER["model"], _WORKER["surface"] = model, surface


def _pool_block(task: CoveragePlan) -> dict[str, np.ndarray]:
    return evaluate_block(_WORKER["model"], task, _WORKER["surface"])


def _dask_block(model: Any, task: CoveragePlan, surface: Any) -> dict[str, np.ndarray]:
    return evaluate_block(model, task, surface)


class _Done:
    def __init__(self, value: Any) -> None:
        self.value = value

    def result(self) -> Any:
        return self.value


#: Longest wait for a Dask scheduler to answer, s (as screening's).
SCHEDULER_CONNECT_TIMEOUT_S = 10.0


def _absolute(model: Any) -> Any:
    """A copy of an ElevationModel whose local raster paths are absolute (workers may run elsewhere)."""
    import dataclasses

    cls: Any = type(model)
    copy = cls.__new__(cls)
    copy.__dict__.update(model.__getstate__())
    copy.sources = tuple(s if "://" in s.path or s.path.startswith("/vsi") else
                         dataclasses.replace(s, path=os.path.abspath(s.path)) for s in model.sources)
    return copy


def _dask_client(scheduler: Any) -> tuple[Any, bool]:
    """A dask.distributed Client (given, or connected to an address or cluster) and whether we own it."""
    try:
        from distributed import Client
    except ImportError:
        raise InputError("running on a Dask cluster needs the distributed package: "
                         "pip install 'terrahop[distributed]'") from None
    if isinstance(scheduler, Client):
        return scheduler, False
    try:
        return Client(scheduler, timeout=SCHEDULER_CONNECT_TIMEOUT_S), True
    except Exception as exc:  # noqa: BLE001 - distributed raises many kinds; all mean "not reached"
        cause = " ".join(str(exc).split())[:160] or type(exc).__name__
        raise DataError(f"cannot connect to the Dask scheduler at {scheduler} within "
                        f"{SCHEDULER_CONNECT_TIMEOUT_S:g} s ({cause}); check the address and that it is running") \
            from None


class _Executor:
    """Runs block tasks: in this process, on a local process pool, or on a Dask cluster."""

    def __init__(self, model: Any, surface: Any, workers: int | None, scheduler: Any, n_tasks: int) -> None:
        self.model, self.surface = model, surface
        self.pool: Any = None
        self.client: Any = None
        self.own_client = False
        if scheduler is not None:
            self.client, self.own_client = _dask_client(scheduler)
            self.remote_model = self.client.scatter(_absolute(model), broadcast=True)
            self.remote_surface = None if surface is None else self.client.scatter(_absolute(surface), broadcast=True)
            workers_seen = max(len(self.client.scheduler_info().get("workers", {})), 1)
            self.width = 2 * workers_seen + 2
            return
        n = (os.cpu_count() or 1) if workers is None else int(workers)
        if n < 1:
            raise InputError(f"--workers must be 1 or more, got {n}")
        self.width = 1
        if n > 1 and n_tasks > 1:
            methods = mp.get_all_start_methods()
            method = "fork" if sys.platform.startswith("linux") and "fork" in methods else "spawn"
            self.pool = ProcessPoolExecutor(n, mp_context=mp.get_context(method), initializer=_init_worker,
                                            initargs=(_absolute(model), None if surface is None else _absolute(surface)))
            self.width = 2 * n

    def submit(self, task: CoveragePlan) -> Any:
        if self.client is not None:
            return self.client.submit(_dask_block, self.remote_model, task, self.remote_surface, pure=False)
        if self.pool is not None:
            return self.pool.submit(_pool_block, task)
        return _Done(evaluate_block(self.model, task, self.surface))

    def close(self, cancel: bool = False) -> None:
        if self.pool is not None:
            self.pool.shutdown(wait=True, cancel_futures=cancel)
        if self.client is not None and self.own_client:
            self.client.close()


# --------------------------------------------------------------------------- staging

def _block_path(folder: Path, b: int) -> Path:
    return folder / f"block-{b:06d}.npz"


def _save_block(folder: Path, b: int, values: dict[str, np.ndarray]) -> None:
    final = _block_path(folder, b)
    tmp = final.with_name(final.name + ".tmp")
    with open(tmp, "wb") as fh:
        np.savez(fh, **values)  # type: ignore[arg-type]
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, final)


def _load_block(folder: Path, b: int, bands: tuple[str, ...], n: int) -> dict[str, np.ndarray] | None:
    try:
        with np.load(_block_path(folder, b)) as data:
            out = {k: np.asarray(data[k]) for k in bands}
    except (OSError, KeyError, ValueError):
        return None  # absent or damaged: computed again
    if any(v.shape != (n,) for v in out.values()):
        return None
    return out


def _open_stage(out: str, key: str, resume: bool, restart: bool) -> tuple[Path, set[int]]:
    folder = staging_folder(out)
    manifest = folder / "manifest.json"
    if folder.exists():
        if restart:
            shutil.rmtree(folder)
        elif not resume:
            raise InputError(f"an interrupted coverage run of {out} left {folder}; give --resume to finish it "
                             "or --restart to start again")
        else:
            try:
                given = json.loads(manifest.read_text())
            except (OSError, ValueError):
                given = None
            if not isinstance(given, dict) or given.get("run") != key:
                raise InputError(f"{folder} holds a coverage run with other settings or rasters; "
                                 "give --restart to discard it")
    elif resume:
        raise InputError(f"--resume: no interrupted coverage run of {out} to finish ({folder} does not exist)")
    if not folder.exists():
        folder.mkdir(parents=True)
        write_json(manifest, {"run": key, "kind": "terrahop coverage"})
    done = {int(p.name[6:12]) for p in folder.glob("block-*.npz") if p.name[6:12].isdigit()}
    return folder, done


# --------------------------------------------------------------------------- the run

def run_coverage(model: Any, plan: CoveragePlan, out: str, *, surface: Any = None, workers: int | None = None,
                 scheduler: Any = None, resume: bool = False, restart: bool = False, stage: bool = True,
                 progress: Callable[[int, int], None] | None = None) -> tuple[CoverageResult, RunLock | None]:
    """Evaluate every block of ``plan``; return the result and the held lock (release it after writing).

    With ``stage`` (the CLI) blocks are staged beside ``out`` and an
    interrupted run can be resumed; without it nothing is written.
    """
    t0 = time.perf_counter()
    bands = plan.bands
    lock = None
    folder: Path | None = None
    done: set[int] = set()
    if stage:
        lock = RunLock(lock_path(out), out).acquire()
        try:
            folder, done = _open_stage(out, fingerprint(plan, model, surface), resume, restart)
        except BaseException:
            lock.release()
            raise
    n_cells = plan.cell_d.size
    flat = np.full((len(bands), n_cells), np.nan, dtype=np.float32)
    resumed = 0
    todo = []
    for b in range(plan.n_blocks):
        c0, c1 = plan.cells_of_block(b)
        got = _load_block(folder, b, bands, c1 - c0) if (folder is not None and b in done) else None
        if got is None:
            todo.append(b)
            continue
        resumed += 1
        for i, name in enumerate(bands):
            flat[i, c0:c1] = got[name]
    try:
        ex = _Executor(model, surface, workers, scheduler, len(todo))
    except BaseException:
        if lock is not None:
            lock.release()
        raise
    staged = 0
    ok = False
    try:
        pending: list[tuple[int, Any]] = []
        queue = list(todo)
        finished = resumed
        while queue or pending:
            while queue and len(pending) < ex.width:
                b = queue.pop(0)
                pending.append((b, ex.submit(plan.task(b))))
            b, fut = pending.pop(0)
            values = fut.result()
            c0, c1 = plan.cells_of_block(b)
            for i, name in enumerate(bands):
                flat[i, c0:c1] = values[name]
            if folder is not None:
                _save_block(folder, b, values)
                staged += 1
                if CRASH_AFTER_BLOCKS is not None and staged >= CRASH_AFTER_BLOCKS:
                    raise KeyboardInterrupt
            finished += 1
            if progress is not None:
                progress(finished, plan.n_blocks)
        ok = True
    finally:
        ex.close(cancel=not ok)
        if not ok and lock is not None:
            lock.release()
    grid = plan.grid
    on_grid = plan.cell_index >= 0
    pos = plan.cell_index[on_grid]
    out_bands = {}
    for i, name in enumerate(bands):
        img = np.full(grid.n_cells, np.nan, dtype=np.float32)
        img[pos] = flat[i, on_grid]
        out_bands[name] = img.reshape(grid.height, grid.width)
    cand: dict[str, np.ndarray] = {}
    if (~on_grid).any():
        which = -1 - plan.cell_index[~on_grid]
        order = np.argsort(which)
        for i, name in enumerate(bands):
            cand[name] = flat[i, ~on_grid][order]
        cand["distance_m"] = plan.cell_d[~on_grid][order]
        cand["azimuth_deg"] = plan.cell_az[~on_grid][order]
    result = CoverageResult(plan, out_bands, cand, time.perf_counter() - t0, plan.n_blocks, resumed)
    return result, lock


def finish(out: str, lock: RunLock | None) -> None:
    """After the outputs are written: drop the staging folder and release the lock."""
    folder = staging_folder(out)
    if folder.exists():
        shutil.rmtree(folder, ignore_errors=True)
    if lock is not None:
        lock.release()
