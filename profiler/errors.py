"""Exception and warning types of terrahop.

Every error a planner can cause or fix derives from :class:`TerrahopError`.
Some also derive from a built-in so callers may catch either.  Messages say
what is wrong and where (which site, file, row or distance along the path).
"""

from __future__ import annotations


class TerrahopError(Exception):
    """Root of all terrahop errors."""


class InputError(TerrahopError, ValueError):
    """A setting, coordinate or file content given by the planner is invalid."""


class DataError(TerrahopError):
    """An elevation raster or vector layer cannot serve the request."""


class DataFileError(DataError, OSError):
    """A data file is missing, unreadable or not of the expected kind."""


class ModelValidityError(TerrahopError, ValueError):
    """Inputs fall outside the validity range of a propagation model."""


class ModelValidityWarning(UserWarning):
    """Inputs lie outside the range a model was published for; results are less certain."""
