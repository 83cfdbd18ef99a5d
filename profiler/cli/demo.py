"""``terrahop demo``: analyse the invented demo links shipped with terrahop."""

from __future__ import annotations

import json
from pathlib import Path

import click

from ..demo_files import demo_path
from ..errors import DataFileError
from .link import run_link
from .options import friendly_errors, resolve_link

__all__ = ["demo", "demo_link_files", "DEMO_DIR"]

#: The examples folder, home of the demo link files: inside the installed
#: package when installed from a wheel, else at the top of the repository.
DEMO_DIR = demo_path("examples")


def demo_link_files() -> list[Path]:
    """Demo link files in name order."""
    return sorted(DEMO_DIR.glob("demo-*.toml"))


@click.command()
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list, one object per link.")
@friendly_errors
def demo(as_json: bool) -> None:
    """Analyse the demo links on the invented demo terrain (no data needed)."""
    from ..io.report import format_link_summary  # lazy: brings numpy; the CLI's import stays light

    files = demo_link_files()
    if not files:
        raise DataFileError(
            f"no demo link files in {DEMO_DIR}; reinstall terrahop from its wheel or run it "
            "from a clone of the repository"
        )
    records = [run_link(resolve_link(str(f), {})) for f in files]
    if as_json:
        click.echo(json.dumps(records, indent=2))
        return
    click.echo("terrahop demo: INVENTED terrain, sites and names (data/make_demo.py); not a real place.\n")
    for r in records:
        click.echo(format_link_summary(r))
        click.echo("")
    ok = sum(r.get("meets_criterion", False) for r in records)
    click.echo(f"{len(records)} links analysed, {ok} meet the clearance criterion.")
