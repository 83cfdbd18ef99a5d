"""One value of a link job: an override over a link-file key, checked by the shared value rule.

Shared by :mod:`profiler.jobs` and the job modules it imports
(:mod:`profiler.job_equipment`, :mod:`profiler.job_extras`); imports none of them.
"""

from __future__ import annotations

from typing import Any, overload

from .errors import PARAMETER, InputError
from .validation import check_number

__all__ = ["pick", "checked"]


def pick(override: Any, spec: dict, key: str, default: Any = None) -> Any:
    if override is not None:
        return override
    return spec.get(key, default)


@overload
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: float, source: str = "link file") -> float: ...
@overload
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: None = None, source: str = "link file") -> float | None: ...
def checked(opts: dict[str, Any], section: dict[str, Any], key: str, *, opt: str, table: str,
             name: str | None = None, default: float | None = None, source: str = "link file") -> float | None:
    """An override over a link-file key, checked by the shared value rule; None when neither is given.

    The message names the override (``parameter``) when it gave the value, else the link file and its table.
    """
    if opts.get(opt) is not None:
        tag = table.removeprefix("site_") if table.startswith("site_") else None
        where = f"site {tag} ({PARAMETER})" if tag else PARAMETER
        try:
            return check_number(opts[opt], name or key, where)
        except InputError as exc:
            raise InputError(exc.template, parameter=opt) from None
    if key in section:
        return check_number(section[key], name or key, f"{source or 'link file'} [{table}] {key}")
    if default is None:
        return None
    return check_number(default, name or key)
