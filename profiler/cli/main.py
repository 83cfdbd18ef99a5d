"""The ``terrahop`` click group; subcommands register here."""

from __future__ import annotations

import contextlib
import warnings
from typing import Iterator

import click

from .._version import __version__
from .coverage import coverage
from .demo import demo
from .heights import heights
from .link import link
from .options import quiet_broken_pipe
from .review import review
from .screen import screen
from .sheet import sheet
from .terrain import terrain


def format_warning(message: Warning | str, category: type[Warning], filename: str, lineno: int) -> str:
    """One line for stderr: terrahop's own warnings as they are, numeric ones with where they arose."""
    text = " ".join(str(message).split())
    if issubclass(category, RuntimeWarning):
        # A numpy warning (divide by zero, invalid value, overflow) is a defect of terrahop, not of
        # the input; say so plainly instead of numpy's wording, which reads like a crash.
        where = f"{filename.rsplit('/', 1)[-1]}:{lineno}"
        return (f"warning: an internal calculation gave a non-finite value ({text}; {where}); "
                "check the figures and please report it")
    return f"warning: {text}"


@contextlib.contextmanager
def tool_warnings() -> Iterator[None]:
    """Within a command, Python warnings go to stderr as one line each, once per place."""
    with warnings.catch_warnings():
        # The filters in force (Python's defaults, or -W given by whoever runs us) are kept;
        # library deprecation notices are for developers, not for a planner.
        for category in (DeprecationWarning, PendingDeprecationWarning, FutureWarning):
            warnings.filterwarnings("ignore", category=category)

        def show(message, category, filename, lineno, file=None, line=None) -> None:
            try:
                click.echo(format_warning(message, category, filename, lineno), err=True)
            except (BrokenPipeError, ValueError):  # stderr gone: nowhere to warn
                pass

        warnings.showwarning = show
        yield


@click.group(context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="terrahop")
@click.pass_context
def cli(ctx: click.Context) -> None:
    """terrahop: terrain-aware point-to-point radio path profiler.

    Samples the geodesic between two sites over elevation rasters, checks
    first-Fresnel-zone clearance at a design and a worst-case k-factor, adds
    ITU-R P.526 diffraction to free-space loss and reports received level,
    SNR and fade margin.  Heights are metres in the raster's vertical datum.
    """
    ctx.with_resource(tool_warnings())


cli.add_command(link)
cli.add_command(demo)
cli.add_command(heights)
cli.add_command(sheet)
cli.add_command(screen)
cli.add_command(terrain)
cli.add_command(review)
cli.add_command(coverage)


def main() -> None:
    """Console-script entry point."""
    try:
        cli(prog_name="terrahop")
    except BrokenPipeError:  # the reader of stdout went away outside a command (e.g. --help | head)
        quiet_broken_pipe()

