"""The ``terrahop`` click group; subcommands register here."""

from __future__ import annotations

import click

from .. import __version__
from .demo import demo
from .heights import heights
from .link import link
from .screen import screen
from .sheet import sheet


@click.group(context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="terrahop")
def cli() -> None:
    """terrahop: terrain-aware point-to-point radio path profiler.

    Samples the geodesic between two sites over elevation rasters, checks
    first-Fresnel-zone clearance at a design and a worst-case k-factor, adds
    ITU-R P.526 diffraction to free-space loss and reports received level,
    SNR and fade margin.  Heights are metres in the raster's vertical datum.
    """


cli.add_command(link)
cli.add_command(demo)
cli.add_command(heights)
cli.add_command(sheet)
cli.add_command(screen)


def main() -> None:
    """Console-script entry point."""
    cli(prog_name="terrahop")
