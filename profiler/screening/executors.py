"""Where chunks are evaluated: in this process, on a local process pool, or on a Dask cluster.

Every executor has ``submit(task)`` returning an object with ``result()``,
and ``close(cancel=False)``; chunks come back in the order submitted.
"""

from __future__ import annotations

import dataclasses
import multiprocessing as mp
import os
import re
import signal
import sys
import threading
from concurrent.futures import ProcessPoolExecutor
from typing import Any

import numpy as np

from ..errors import DataError, DataFileError, InputError
from ..kernels import warm_up
from ..terrain import ElevationModel, _is_remote
from .evaluate import ChunkTask, evaluate_chunk

__all__ = ["make_executor", "run_chunk", "check_scheduler_address", "with_absolute_paths", "for_workers",
           "PRELOAD_MAX_CELLS", "SCHEDULER_CONNECT_TIMEOUT_S"]

#: Rasters up to this many cells are read whole into each worker's memory.
PRELOAD_MAX_CELLS = 40_000_000

_WORKER: dict[str, Any] = {}
_WORKER_LOCK = threading.Lock()


def _model_key(model: ElevationModel) -> tuple:
    return (tuple(s.path for s in model.sources), model.nodata_fill_m,
            tuple(s.unit_factor_m for s in model.sources))


def _worker_model(model: ElevationModel) -> ElevationModel:
    """The worker's own open copy of ``model`` (opened and preloaded once per process)."""
    key = _model_key(model)
    with _WORKER_LOCK:
        if _WORKER.get("key") != key:
            _prepare(model)
            _WORKER["key"] = key
            _WORKER["model"] = model
        return _WORKER["model"]


def _worker_surroundings(surroundings: Any) -> Any:
    """The worker's copy of the run's surroundings, its surface model preloaded once per process.

    The layers arrive already read (polygons in WGS84, heights checked) from
    the parent; only the surface rasters are opened here, by path.
    """
    if surroundings is None or surroundings.surface is None:
        return surroundings
    key = ("surface", _model_key(surroundings.surface))
    with _WORKER_LOCK:
        if _WORKER.get("surface_key") != key:
            surface = surroundings.surface
            if surface.total_cells() <= PRELOAD_MAX_CELLS:
                surface.preload(max_cells=PRELOAD_MAX_CELLS)
            _WORKER["surface_key"] = key
        return surroundings


def for_workers(surroundings: Any) -> Any:
    """A fresh copy of ``surroundings`` to send to workers: read layers, surface rasters by absolute path.

    Fresh, so that no index built in the parent (the layers' STRtree) is
    pickled; each worker builds its own on first use.
    """
    if surroundings is None:
        return None
    from ..obstructions import Surroundings

    surface = with_absolute_paths(surroundings.surface) if surroundings.surface is not None else None
    return Surroundings(layers=surroundings.layers, surface=surface, tree_allowance_m=surroundings.tree_allowance_m)


def _prepare(model: ElevationModel) -> None:
    """Read small rasters whole and load the compiled kernels for their cell types."""
    if model.total_cells() <= PRELOAD_MAX_CELLS:
        model.preload(max_cells=PRELOAD_MAX_CELLS)
    warm_up(tuple(cells.tiles.dtype for cells in model._cache.values()) or (np.float64,))


def _init_local_worker(model: ElevationModel, surroundings: Any = None) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent decides what an interrupt means
    try:
        _worker_model(model)
        _WORKER["surroundings"] = _worker_surroundings(surroundings)
    except Exception as exc:  # noqa: BLE001 - an initializer that raises breaks the whole pool
        # Kept and raised by the first task instead, so the parent sees the one-line error
        # (e.g. a damaged raster) rather than "process pool broken".
        _WORKER["error"] = exc


def run_chunk(model: ElevationModel, task: ChunkTask, surroundings: Any = None):
    """Worker entry point (local pool or Dask): evaluate ``task`` on the worker's model."""
    model = _worker_model(model)
    if surroundings is None:
        return evaluate_chunk(model, task)
    return evaluate_chunk(model, task, _worker_surroundings(surroundings))


def _local_pool_run(task: ChunkTask):
    if "error" in _WORKER:
        raise _WORKER["error"]
    if _WORKER.get("surroundings") is None:
        return evaluate_chunk(_WORKER["model"], task)
    return evaluate_chunk(_WORKER["model"], task, _WORKER["surroundings"])


def _warm() -> None:
    """A no-op task that makes a pool start its workers now."""


class _InProcess:
    def __init__(self, model: ElevationModel, surroundings: Any = None) -> None:
        self.model = model
        self.surroundings = surroundings  # the caller's own (layers read, surface open)
        if model.total_cells() <= PRELOAD_MAX_CELLS:
            model.preload(max_cells=PRELOAD_MAX_CELLS)

    def submit(self, task: ChunkTask):
        if self.surroundings is None:
            return _Done(evaluate_chunk(self.model, task))
        return _Done(evaluate_chunk(self.model, task, self.surroundings))

    def close(self, cancel: bool = False) -> None:
        pass


class _Done:
    def __init__(self, value: Any) -> None:
        self.value = value

    def result(self) -> Any:
        return self.value


class _LocalPool:
    def __init__(self, model: ElevationModel, workers: int, surroundings: Any = None) -> None:
        # Linux: fork, so workers start with the parent's modules already imported (the
        # pool starts before any progress-bar thread); elsewhere a fresh interpreter each.
        # Workers get copies without the parent's open raster handles (placing roof mounts
        # reads the rasters first): a handle shared across fork shares its file offset.
        methods = mp.get_all_start_methods()
        method = "fork" if sys.platform.startswith("linux") and "fork" in methods else (
            "forkserver" if "forkserver" in methods else "spawn")
        ctx = mp.get_context(method)
        if method == "forkserver":
            ctx.set_forkserver_preload(["profiler.screening"])
        self.pool = ProcessPoolExecutor(workers, mp_context=ctx, initializer=_init_local_worker,
                                        initargs=(with_absolute_paths(model), for_workers(surroundings)))
        for _ in range(workers):  # start the workers while the parent prepares the pairs
            self.pool.submit(_warm)

    def submit(self, task: ChunkTask):
        return self.pool.submit(_local_pool_run, task)

    def close(self, cancel: bool = False) -> None:
        self.pool.shutdown(wait=True, cancel_futures=cancel)


#: Longest wait for a Dask scheduler to answer, s (a wrong address must not hang the run).
SCHEDULER_CONNECT_TIMEOUT_S = 10.0

_ADDRESS_SCHEMES = ("tcp", "tls", "ucx", "ws", "wss")


def check_scheduler_address(address: str) -> str:
    """A Dask scheduler address as ``scheme://host:port`` (``host:port`` means tcp); InputError if garbled."""
    text = str(address).strip()
    if text.startswith("inproc://"):
        return text
    m = re.fullmatch(r"(?:([A-Za-z]+)://)?(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9_.-]+):(\d{1,5})/?", text)
    if m is None or (m.group(1) is not None and m.group(1).lower() not in _ADDRESS_SCHEMES) \
            or not 0 < int(m.group(3)) < 65536:
        raise InputError(
            f"--scheduler {address!r} is not a Dask scheduler address; give one like tcp://host:8786"
        )
    return text if m.group(1) else f"tcp://{text}"


def with_absolute_paths(model: ElevationModel) -> ElevationModel:
    """A copy of ``model`` whose local raster paths are absolute (workers elsewhere have another cwd)."""
    copy = ElevationModel.__new__(ElevationModel)
    copy.__dict__.update(model.__getstate__())
    copy.sources = tuple(
        s if _is_remote(s.path) else dataclasses.replace(s, path=os.path.abspath(s.path)) for s in model.sources
    )
    return copy


class _WorkerFuture:
    """A Dask future whose data errors say they happened on a worker."""

    def __init__(self, future: Any) -> None:
        self.future = future

    def result(self) -> Any:
        try:
            return self.future.result()
        except DataFileError as exc:
            raise DataFileError(
                f"on a Dask worker: {exc} (workers must reach the rasters by the same absolute paths)"
            ) from None

    def cancel(self) -> None:
        self.future.cancel()


class _DaskPool:
    def __init__(self, model: ElevationModel, scheduler: Any, surroundings: Any = None) -> None:
        try:
            from distributed import Client
        except ImportError:
            raise InputError(
                "running on a Dask cluster needs the distributed package: pip install 'terrahop[distributed]'"
            ) from None
        self.own = False
        if isinstance(scheduler, Client):
            self.client = scheduler
        else:
            if isinstance(scheduler, str):
                scheduler = check_scheduler_address(scheduler)
            try:
                self.client = Client(scheduler, timeout=SCHEDULER_CONNECT_TIMEOUT_S)  # an address or a cluster
            except Exception as exc:  # noqa: BLE001 - distributed raises many kinds; all mean "not reached"
                cause = " ".join(str(exc).split())[:160] or type(exc).__name__
                if isinstance(exc, MemoryError):  # a reply read as a huge message: not a scheduler
                    cause = "the other end does not answer as a Dask scheduler"
                raise DataError(
                    f"cannot connect to the Dask scheduler at {scheduler} within "
                    f"{SCHEDULER_CONNECT_TIMEOUT_S:g} s ({cause}); check the address and that it is running"
                ) from None
            self.own = True
        self.model = self.client.scatter(with_absolute_paths(model), broadcast=True)
        # Read once here, sent once to every worker: workers need not reach the layer files.
        self.surroundings = (None if surroundings is None
                             else self.client.scatter(for_workers(surroundings), broadcast=True))

    @property
    def workers(self) -> int:
        return max(len(self.client.scheduler_info().get("workers", {})), 1)

    def submit(self, task: ChunkTask):
        if self.surroundings is None:
            return _WorkerFuture(self.client.submit(run_chunk, self.model, task, pure=False))
        return _WorkerFuture(self.client.submit(run_chunk, self.model, task, self.surroundings, pure=False))

    def close(self, cancel: bool = False) -> None:
        if self.own:
            self.client.close()


def make_executor(model: ElevationModel, workers: int | None, scheduler: Any, remaining: int, chunk_pairs: int,
                  surroundings: Any = None):
    """The executor of a run and how many chunks it may hold at once; ``surroundings`` reach every worker."""
    if scheduler is not None:
        pool = _DaskPool(model, scheduler, surroundings)
        return pool, 2 * pool.workers + 2
    n = (os.cpu_count() or 1) if workers is None else workers
    if n < 1:
        raise InputError(f"--workers must be 1 or more, got {n}")
    if n == 1 or remaining <= chunk_pairs:
        return _InProcess(model, surroundings), 1
    return _LocalPool(model, n, surroundings), 2 * n + 1


