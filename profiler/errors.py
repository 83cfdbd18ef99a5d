"""Exception and warning types of terrahop.

Every error a planner can cause or fix derives from :class:`TerrahopError`.
Some also derive from a built-in so callers may catch either.  Messages say
what is wrong and where (which site, file, row or distance along the path).

An error about one setting carries it in ``parameter`` (the Python argument
name, e.g. ``"nodata_fill_m"``).  Where the message tells the planner to give
that setting, it writes ``{parameter}``: ``str(error)`` names the Python
argument (``nodata_fill_m=HEIGHT``), and the command line renders the same
error with its flag (``--nodata-fill-m HEIGHT``) through :meth:`TerrahopError.render`.
Every warning terrahop issues derives from :class:`TerrahopWarning`.
"""

from __future__ import annotations

from typing import Callable

__all__ = [
    "TerrahopError",
    "InputError",
    "DataError",
    "DataFileError",
    "ModelValidityError",
    "TerrahopWarning",
    "ModelValidityWarning",
    "PARAMETER",
    "argument_form",
    "Problem",
]

#: Placeholder a message writes where it names the setting it concerns.
PARAMETER = "{parameter}"


def argument_form(parameter: str, value_word: str = "") -> str:
    """How the Python API names a setting in a message: ``nodata_fill_m=HEIGHT``."""
    return f"{parameter}={value_word}" if value_word else parameter


class TerrahopError(Exception):
    """Root of all terrahop errors; ``parameter`` names the setting concerned (or None)."""

    def __init__(self, message: str = "", *, parameter: str | None = None, value_word: str = "") -> None:
        self.template = message
        self.parameter = parameter
        self.value_word = value_word
        super().__init__(self.render())
        self.args = (self.render(),)  # OSError keeps the arguments of __new__ otherwise

    def render(self, name_of: Callable[[str, str], str] = argument_form) -> str:
        """The message with the setting named by ``name_of(parameter, value_word)`` (a CLI flag, say)."""
        if self.parameter is None or PARAMETER not in self.template:
            return self.template
        return self.template.replace(PARAMETER, name_of(self.parameter, self.value_word))

    def __reduce__(self):  # keep the parameter across processes (Dask workers)
        return (_rebuild, (type(self), self.template, self.parameter, self.value_word))


def _rebuild(cls: type, template: str, parameter: str | None, value_word: str) -> TerrahopError:
    return cls(template, parameter=parameter, value_word=value_word)


class InputError(TerrahopError, ValueError):
    """A setting, coordinate or file content given by the planner is invalid."""


class DataError(TerrahopError):
    """An elevation raster or vector layer cannot serve the request."""


class DataFileError(DataError, OSError):
    """A data file is missing, unreadable or not of the expected kind."""

    def __new__(cls, *args: object, **kwargs: object) -> "DataFileError":
        return OSError.__new__(cls, *args)  # OSError.__new__ takes no keywords


class ModelValidityError(TerrahopError, ValueError):
    """Inputs fall outside the validity range of a propagation model."""


class TerrahopWarning(UserWarning):
    """Root of every warning terrahop issues (filter them all with this class)."""


class ModelValidityWarning(TerrahopWarning):
    """Inputs lie outside the range a model was published for; results are less certain."""


class Problem(str):
    """The sentence why one path of a batch was not analysed, as recorded (command-line wording),
    with the setting that would fix it (``parameter``) and its message template for the API."""

    parameter: str | None
    template: str
    value_word: str

    def __new__(cls, template: str, parameter: str, value_word: str, cli_text: str) -> "Problem":
        self = super().__new__(cls, cli_text)
        self.parameter, self.template, self.value_word = parameter, template, value_word
        return self

    def __reduce__(self):
        return (Problem, (self.template, self.parameter, self.value_word, str(self)))

    def error(self, cls: type[TerrahopError]) -> TerrahopError:
        """This problem as an exception of ``cls`` carrying its parameter."""
        return cls(self.template, parameter=self.parameter, value_word=self.value_word)
