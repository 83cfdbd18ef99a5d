"""Diffraction loss over terrain profiles: knife-edge, Deygout, Epstein-Peterson,
Bullington and the complete (delta-Bullington) method of ITU-R P.526-15.

Every method reads a :class:`~profiler.losses.path_geometry.PathGeometry`: a
batch of P profiles of N samples with each path's antenna heights, length,
frequency and k-factor (see that class for the array convention).  The entry
points below accept either one PathGeometry or its 8 arrays in this order,
positional or by name (``distance_m, surface_m, interior, antenna_a_amsl_m,
antenna_b_amsl_m, path_length_m, freq_ghz, k``).  Results are dB of loss in excess of free
space, shape (P,).

The methods are registered in one table, :data:`METHODS`; they live in
:mod:`profiler.losses.bullington` (Bullington, delta-Bullington, knife-edge
from the same reductions) and :mod:`profiler.losses.multiple_edges`
(Deygout, Epstein-Peterson).

Sources
-------
* Knife-edge parameter v and loss J(v): ITU-R P.526-15 (10/2019) section 4.1.
* Bullington construction: ITU-R P.526-15 section 4.5.1.
* Complete (delta-Bullington) method and smooth-surface fit: ITU-R P.526-15
  section 4.5.2 (the same method as ITU-R P.452-17 section 4.2 and P.1812).
* Deygout: J. Deygout, "Multiple knife-edge diffraction of microwaves",
  IEEE Trans. Antennas Propag. AP-14(4), 1966 (from memory).
* Epstein-Peterson: J. Epstein and D. W. Peterson, "An experimental study of
  wave propagation at 850 Mc", Proc. IRE 41(5), 1953 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Callable

import numpy as np
from numpy.typing import ArrayLike

from .._compiled import use_numba
from ..errors import InputError
from ..units import EARTH_RADIUS_M
from .bullington import Reduced, bullington_reduced, delta_bullington, reduce_profiles
from .knife_edge import knife_edge_loss_db
from .multiple_edges import SUMMIT_DIP_F1_FRACTION, deygout, deygout_edges, edge_arrays, epstein_peterson
from .path_geometry import PathGeometry
from .smooth_earth import GroundConstants, resolve_ground, resolve_polarisation

__all__ = [
    "DIFFRACTION_METHODS",
    "DEFAULT_DIFFRACTION_METHOD",
    "METHODS",
    "DiffractionMethod",
    "DiffractionResult",
    "PathGeometry",
    "SUMMIT_DIP_F1_FRACTION",
    "resolve_method",
    "diffraction_loss_db",
    "diffraction_by_method",
    "diffraction_with_warnings",
    "diffraction_validity_warnings",
    "knife_edge_profile_loss_db",
    "deygout_loss_db",
    "epstein_peterson_loss_db",
    "bullington_loss_db",
    "delta_bullington_loss_db",
    "smooth_surface_heights_m",
]

#: Largest diffraction angle (rad) for the small-angle knife-edge formulas of
#: ITU-R P.526-15 section 4.1 (about 12 degrees; from memory).
_MAX_DIFFRACTION_ANGLE_RAD = 0.2
#: Elements per block when a large batch is processed in pieces (memory bound).
_BLOCK_ELEMENTS = 1 << 17


class _Block:
    """One block of paths and what several methods share, each made on first use."""

    def __init__(self, g: PathGeometry, smooth: bool, polarisation: str, ground: str | GroundConstants):
        self.g = g
        self.smooth = smooth
        self.polarisation = polarisation
        self.ground = ground

    @cached_property
    def reduced(self) -> Reduced:
        return reduce_profiles(self.g, self.smooth)

    @cached_property
    def bullington(self) -> np.ndarray:
        return bullington_reduced(self.reduced)

    @cached_property
    def edges(self):
        arrays = edge_arrays(self.g)
        return arrays, deygout_edges(arrays)


@dataclass(frozen=True)
class DiffractionMethod:
    """A terrain diffraction method: its name, how it computes a block, and its checks.

    ``full_arrays``: the method needs (P, N) temporaries (the batch is then cut
    in blocks); ``freq_range_ghz``: outside it the method earns a validity warning.
    """

    name: str
    loss: Callable[[_Block], np.ndarray]
    full_arrays: bool = False
    freq_range_ghz: tuple[float, float] = (0.0, np.inf)


#: Every method, by name, in the order of :data:`DIFFRACTION_METHODS`.  Bullington and
#: delta-Bullington are checked against the ranges of the Recommendations built on them,
#: ITU-R P.1812 (from 30 MHz) and ITU-R P.452 (to 50 GHz) (from memory).
METHODS: dict[str, DiffractionMethod] = {m.name: m for m in (
    DiffractionMethod("delta-bullington", lambda b: delta_bullington(b.reduced, b.polarisation, b.ground,
                                                                     b.bullington), freq_range_ghz=(0.03, 50.0)),
    DiffractionMethod("bullington", lambda b: b.bullington, freq_range_ghz=(0.03, 50.0)),
    DiffractionMethod("deygout", lambda b: deygout(b.edges[1]), full_arrays=True),
    DiffractionMethod("epstein-peterson", lambda b: epstein_peterson(*b.edges), full_arrays=True),
    DiffractionMethod("knife-edge", lambda b: knife_edge_loss_db(b.reduced.v_max)),
)}
#: Method names accepted by :func:`diffraction_loss_db`.
DIFFRACTION_METHODS: tuple[str, ...] = tuple(METHODS)
#: Default for terrain paths: the complete method of ITU-R P.526-15 section 4.5.2.
DEFAULT_DIFFRACTION_METHOD = "delta-bullington"

_ALIASES = {"knife": "knife-edge", "knifeedge": "knife-edge", "delta": "delta-bullington",
            "complete": "delta-bullington", "epstein": "epstein-peterson"}


@dataclass(frozen=True)
class DiffractionResult:
    """Loss by one method with its validity warnings, one tuple of messages per path."""

    method: str
    loss_db: np.ndarray
    warnings: tuple[tuple[str, ...], ...]


def resolve_method(method: str) -> str:
    """Normalised method name; raises InputError listing the valid names."""
    name = str(method).strip().lower().replace("_", "-")
    name = _ALIASES.get(name, name)
    if name not in METHODS:
        raise InputError(
            f"unknown diffraction method {method!r}: choose one of {', '.join(DIFFRACTION_METHODS)}"
        )
    return name


def _blocks(n_paths: int, n_cols: int) -> list[slice]:
    rows = max(1, _BLOCK_ELEMENTS // max(n_cols, 1))
    return [slice(i, min(i + rows, n_paths)) for i in range(0, max(n_paths, 1), rows)]


def _run(methods: tuple[str, ...], g: PathGeometry, polarisation: str,
         ground: str | GroundConstants, warn: str | None = None,
         ) -> tuple[dict[str, np.ndarray], list[tuple[str, ...]]]:
    """Losses of several methods (and the validity warnings of method ``warn``), block by block."""
    polarisation = resolve_polarisation(polarisation)
    ground = resolve_ground(ground)
    table = [METHODS[m] for m in methods]
    pieces: dict[str, list[np.ndarray]] = {m.name: [] for m in table}
    warnings: list[tuple[str, ...]] = []
    # The compiled reductions make no (P, N) temporaries: no need to cut the batch then.
    whole = not any(m.full_arrays for m in table) and use_numba(g.n_paths * g.n_samples)
    for sl in [slice(0, g.n_paths)] if whole else _blocks(g.n_paths, g.n_samples):
        block = _Block(g.rows(sl), "delta-bullington" in methods, polarisation, ground)
        for m in table:
            pieces[m.name].append(m.loss(block))
        if warn:
            warnings.extend(_warnings(METHODS[warn], block.reduced))
    return {m: np.concatenate(p) if p else np.zeros(0) for m, p in pieces.items()}, warnings


def _one(method: str, path: tuple, named: dict, polarisation: str, ground: str | GroundConstants) -> np.ndarray:
    return _run((method,), PathGeometry.of(path, named), polarisation, ground)[0][method]


def diffraction_loss_db(
    method: str, *path: PathGeometry | ArrayLike,
    polarisation: str = "horizontal", ground: str | GroundConstants = "land", **named: ArrayLike,
) -> np.ndarray:
    """Diffraction loss in dB, shape (P,), by ``method`` (one of :data:`DIFFRACTION_METHODS`).

    ``path``: a :class:`PathGeometry` or its 8 arrays (see the module
    docstring).  ``polarisation`` and ``ground`` matter only for
    delta-bullington (its smooth-earth term, ITU-R P.526-15 section 3.2).
    Raises :class:`~profiler.errors.InputError` for an unknown method or bad arrays.
    """
    return _one(resolve_method(method), path, named, polarisation, ground)


def diffraction_by_method(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> dict[str, np.ndarray]:
    """Loss of every method in :data:`DIFFRACTION_METHODS` for the same paths, dB, each (P,)."""
    return _run(DIFFRACTION_METHODS, PathGeometry.of(path, named), polarisation, ground)[0]


def knife_edge_profile_loss_db(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> np.ndarray:
    """Single dominant edge: J(v) at the interior sample of largest v, dB (P,).

    The edge height above the straight antenna line includes the earth bulge
    d1 d2 / (2 k a) (ITU-R P.526-15 section 4.1; bulge: handbook form).
    """
    return _one("knife-edge", path, named, polarisation, ground)


def deygout_loss_db(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> np.ndarray:
    """Deygout construction with up to three edges, dB (P,).

    Main edge by largest v over the whole path; if it blocks the direct line
    (v > 0), add J(v) of the dominant edge of each side sub-path, measured
    against the line from that antenna to the main edge top (Deygout, IEEE
    Trans. AP-14, 1966, from memory; limiting to three edges and to blocking
    main edges is common practice).  A side edge must be a summit distinct
    from the main edge: the profile between them dips below the lower of the
    two by at least 0.6 F1 of the side sub-path at the side edge (common
    practice, our rule), so the flanks of one rounded summit are not counted
    as further edges.  Vectorised with masked maxima over column ranges.
    """
    return _one("deygout", path, named, polarisation, ground)


def epstein_peterson_loss_db(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> np.ndarray:
    """Epstein-Peterson sum over the Deygout edges, dB (P,).

    The edges are the main edge and, when it blocks, the side edges (distinct
    summits, as for Deygout) that obstruct their sub-paths (v > -0.78); each
    edge's v is measured against the line joining its neighbouring edges or
    antennas and the J(v) add (Epstein and Peterson, Proc. IRE 41, 1953, from memory).
    """
    return _one("epstein-peterson", path, named, polarisation, ground)


def bullington_loss_db(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> np.ndarray:
    """Bullington equivalent-edge loss with its empirical correction, dB (P,).

    Lbull = Luc + (1 - exp(-Luc/6)) (10 + 0.02 d[km]), Luc = J of the line-of-sight
    sample of largest v or of the crossing of the two horizon rays
    (ITU-R P.526-15 section 4.5.1).
    """
    return _one("bullington", path, named, polarisation, ground)


def delta_bullington_loss_db(
    *path: PathGeometry | ArrayLike, polarisation: str = "horizontal", ground: str | GroundConstants = "land",
    **named: ArrayLike,
) -> np.ndarray:
    """Complete (delta-Bullington) method, dB (P,).

    Ld = Lbulla + max(Ldsph - Lbulls, 0): Bullington on the real profile plus the
    smooth spherical-earth loss (section 3.2) over a fitted smooth surface, minus
    Bullington on that smooth surface (ITU-R P.526-15 section 4.5.2).
    """
    return _one("delta-bullington", path, named, polarisation, ground)


def smooth_surface_heights_m(
    distance_m: ArrayLike,
    surface_m: ArrayLike,
    interior: ArrayLike,
    antenna_a_amsl_m: ArrayLike,
    antenna_b_amsl_m: ArrayLike,
    path_length_m: ArrayLike,
    freq_ghz: ArrayLike = 1.0,
    k: ArrayLike = 4.0 / 3.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Smooth-surface heights (hstd, hsrd) above sea level at a and b, m, each (P,).

    ITU-R P.526-15 section 4.5.2: least-squares line through the profile,
    lowered under the highest obstacle, capped by the ground at each end.
    """
    g = PathGeometry.of((distance_m, surface_m, interior, antenna_a_amsl_m, antenna_b_amsl_m, path_length_m,
                         freq_ghz, k))
    r = reduce_profiles(g, True)
    return r.hstd, r.hsrd


def diffraction_validity_warnings(method: str, *path: PathGeometry | ArrayLike,
                                  **named: ArrayLike) -> list[tuple[str, ...]]:
    """Validity warnings for ``method``, one tuple of messages per path (empty if none).

    Checks: frequency within the method's published range (Bullington and
    delta-Bullington, see :data:`METHODS`); diffraction angle at the dominant
    edge within the small-angle range of ITU-R P.526-15 section 4.1 (0.2 rad,
    from memory); each antenna above the surface at its own site.
    """
    name = resolve_method(method)
    return _run((), PathGeometry.of(path, named), "horizontal", "land", warn=name)[1]


def diffraction_with_warnings(
    method: str, *path: PathGeometry | ArrayLike,
    polarisation: str = "horizontal", ground: str | GroundConstants = "land", **named: ArrayLike,
) -> DiffractionResult:
    """Loss by ``method`` together with its validity warnings (see the two functions it joins)."""
    name = resolve_method(method)
    losses, warnings = _run((name,), PathGeometry.of(path, named), polarisation, ground, warn=name)
    return DiffractionResult(name, losses[name], tuple(warnings))


def _warnings(method: DiffractionMethod, r: Reduced) -> list[tuple[str, ...]]:
    """Validity warnings of ``method`` for the paths of ``r`` (see diffraction_validity_warnings)."""
    g = r.g
    name = method.name
    freq = g.freq_ghz
    # Diffraction angle at the edge of largest v: height (1/d1 + 1/d2).
    idx = r.i_max
    rows = np.arange(idx.shape[0])
    d1 = g.distance_m[rows, idx]
    ha, hb, length, kk = g.antenna_a_amsl_m, g.antenna_b_amsl_m, g.length_m, g.k
    with np.errstate(divide="ignore", invalid="ignore"):
        d2 = length - d1
        elev = g.surface_m[rows, idx] + d1 * d2 / (2.0 * kk * EARTH_RADIUS_M)
        height = elev - (ha + (hb - ha) * d1 / length)
        angle = height * (1.0 / d1 + 1.0 / d2)
    has_edge = np.isfinite(r.v_max)
    lo, hi = method.freq_range_ghz
    bad_freq = ~((freq >= lo) & (freq <= hi))
    steep = has_edge & (angle > _MAX_DIFFRACTION_ANGLE_RAD)
    low_a = ha < g.surface_m[:, 0]
    low_b = hb < g.surface_m[:, -1]
    block_msgs: list[tuple[str, ...]] = [()] * freq.shape[0]
    for row in np.flatnonzero(bad_freq | steep | low_a | low_b):  # message text only
        msgs: list[str] = []
        if bad_freq[row]:
            msgs.append(
                f"{name} diffraction: frequency {freq[row]:g} GHz lies outside {lo:g}-{hi:g} GHz, "
                "the range of the ITU-R Recommendations built on this method; loss less certain"
            )
        if steep[row]:
            msgs.append(
                f"{name} diffraction: steep obstacle {d1[row] / 1000.0:.3f} km from site a bends the "
                f"path by {np.degrees(angle[row]):.1f} degrees, beyond the small-angle range "
                f"(about {np.degrees(_MAX_DIFFRACTION_ANGLE_RAD):.0f} degrees) of ITU-R P.526-15 section 4.1; "
                "loss less certain"
            )
        if low_a[row]:
            msgs.append(
                f"{name} diffraction: antenna a ({ha[row]:.1f} m above sea level) is below the "
                f"surface at its own site ({g.surface_m[row, 0]:.1f} m); check its height"
            )
        if low_b[row]:
            msgs.append(
                f"{name} diffraction: antenna b ({hb[row]:.1f} m above sea level) is below the "
                f"surface at its own site ({g.surface_m[row, -1]:.1f} m); check its height"
            )
        block_msgs[row] = tuple(msgs)
    return block_msgs
