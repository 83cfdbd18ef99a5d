"""One dispatch rule for the compiled kernels and their numpy twins.

Each kernel is written twice with the same arithmetic in the same order: a
plain loop, compiled by numba on first use (``njit(cache=True)``, so later
processes load the machine code from the cache), and a numpy twin.  Both
give the same bits (checked pair by pair in tests/test_kernels.py, fed from
:data:`TWINS`), so a link checked alone and the same link screened among a
million give the same numbers.

numba is a required dependency (pyproject).  The numpy twins exist to verify
the compiled code and to run without compiling: small batches (no compile
or call overhead worth paying) and any batch when ``TERRAHOP_NO_NUMBA=1``.
Pure functions, no I/O.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable

import numpy as np

__all__ = ["NUMBA_MIN_SAMPLES", "TWINS", "Twin", "twin", "use_numba"]

#: Batches with at least this many samples use the compiled kernels.
NUMBA_MIN_SAMPLES = 20_000

#: Every compiled/numpy pair, by name (filled as the kernel modules are imported).
TWINS: dict[str, "Twin"] = {}

_compiled: dict[str, Callable[..., Any]] = {}


def use_numba(n_samples: int) -> bool:
    """True when a batch of ``n_samples`` should use the compiled kernels.

    The rule: at least :data:`NUMBA_MIN_SAMPLES` samples and no
    ``TERRAHOP_NO_NUMBA`` in the environment.
    """
    if os.environ.get("TERRAHOP_NO_NUMBA"):
        return False
    return n_samples >= NUMBA_MIN_SAMPLES


@dataclass(frozen=True)
class Twin:
    """A kernel as a plain loop (compiled on first use) and its numpy twin, same signature.

    ``examples(rng)`` gives argument tuples covering the kernel's cases (the
    bit-for-bit test); ``warm_args(dtypes)`` small ones that compile every
    signature a run will use (``dtypes``: the cell types of cached rasters).
    """

    name: str
    loop: Callable[..., Any]
    numpy: Callable[..., Any]
    examples: Callable[[np.random.Generator], list[tuple]]
    warm_args: Callable[[tuple], Iterable[tuple]]
    njit_options: dict[str, Any] = field(default_factory=dict)

    def compiled(self) -> Callable[..., Any]:
        """The numba-compiled loop (compiled, or loaded from the cache, on first call)."""
        fn = _compiled.get(self.name)
        if fn is None:
            try:
                import numba  # heavy: imported on first use only
            except ImportError as exc:  # a broken install: numba is a declared dependency
                raise ImportError(
                    f"numba is required to compile the {self.name} kernel (pip install numba), "
                    "or set TERRAHOP_NO_NUMBA=1 to run on numpy alone"
                ) from exc
            fn = numba.njit(cache=True, nogil=True, **self.njit_options)(self.loop)
            _compiled[self.name] = fn
        return fn

    def __call__(self, n_samples: int, *args: Any) -> Any:
        """Run the compiled loop or the numpy twin on ``args`` by :func:`use_numba`."""
        return (self.compiled() if use_numba(n_samples) else self.numpy)(*args)


def twin(
    name: str, numpy: Callable[..., Any], examples: Callable[[np.random.Generator], list[tuple]],
    warm_args: Callable[[tuple], Iterable[tuple]] | None = None, **njit_options: Any,
) -> Callable[[Callable[..., Any]], Twin]:
    """Decorator: register the decorated loop with its numpy twin under ``name``."""

    def register(loop: Callable[..., Any]) -> Twin:
        if name in TWINS:
            raise RuntimeError(f"kernel {name!r} registered twice")
        warm = warm_args if warm_args is not None else (lambda _dtypes: examples(np.random.default_rng(0))[:1])
        t = Twin(name, loop, numpy, examples, warm, dict(njit_options))
        TWINS[name] = t
        return t

    return register

