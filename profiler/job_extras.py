"""The optional analyses of a link job: Monte Carlo confidence and the ground-reflection search.

Part of :mod:`profiler.jobs` (which re-exports every name here): the
[confidence] and [reflection] tables of a link file under their overrides,
the water layer they name, and the confidence added to an analysed batch.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from .errors import InputError
from .io.linkfile import LinkSpec
from .job_base import LinkJob, pick as _pick
from .link_batch import LinkBatch

__all__ = ["resolve_job_confidence", "with_confidence", "resolve_reflection", "open_water_layer"]


def resolve_job_confidence(opts: dict[str, Any], spec: LinkSpec) -> Any:
    """Confidence settings from the options over the link file's [confidence] (profiler.confidence);
    None when neither gives any.  A bad file value is named by file, table and key."""
    from .confidence import OPTIONS, resolve_confidence

    for key, value in spec.confidence.items():
        if opts.get(key) is None:
            try:
                resolve_confidence({key: value})
            except InputError as exc:
                raise InputError(f"{spec.path}: [confidence] {exc.render(lambda name, word: name)}") from None
    merged = {k: spec.confidence.get(k) if opts.get(k) is None else opts[k] for k in OPTIONS}
    return resolve_confidence(merged)


def resolve_reflection(opts: dict[str, Any], section: dict[str, Any] | None = None,
                       source: str = "link file") -> Any:
    """Reflection settings (profiler.reflection) from --water, --sea-level-water, --reflection-k-min/-max
    over a link file's [reflection] table; overrides win."""
    from .reflection import DEFAULT_K_MAX, DEFAULT_K_MIN, ReflectionSettings

    section = section or {}
    water = opts.get("water") or section.get("water")
    sea = opts.get("sea_level_water") or bool(section.get("sea_level_water", False))
    k_min = _pick(opts.get("reflection_k_min"), section, "k_min", DEFAULT_K_MIN)
    k_max = _pick(opts.get("reflection_k_max"), section, "k_max", DEFAULT_K_MAX)
    return ReflectionSettings(k_min=k_min, k_max=k_max, water_file=water, sea_level_water=bool(sea)).validate()


def open_water_layer(reflection: Any) -> Any:
    """The water polygons named by reflection settings (profiler.reflection.water), or None."""
    if reflection is None or not reflection.water_file:
        return None
    from .reflection.water import read_water_layer

    return read_water_layer(reflection.water_file)


def with_confidence(batch: LinkBatch, job: LinkJob, surroundings: Any) -> LinkBatch:
    """``batch`` with its Monte Carlo confidence (profiler.confidence) when the job asks for it."""
    if job.confidence is None:
        return batch
    from .confidence import confidence_for_batch

    return dataclasses.replace(batch, confidence=confidence_for_batch(
        batch, job.confidence, tree_allowance_m=job.tree_allowance_m if surroundings is not None else None))
