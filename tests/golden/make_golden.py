"""Write the golden outputs that tests/test_golden.py compares against.

Run from the repository root after a change that is MEANT to alter results:
``python -m tests.golden.make_golden``, then review ``git diff tests/golden``.
A refactor that should change nothing must leave these files untouched.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parents[1]
EXAMPLES = REPO / "examples"
DEMO = REPO / "data" / "demo"

#: Date of the magnetic declination in the installer figures: fixed, so the records do not change with the day.
INSTALL_DATE = "2026-06-01"

#: Fields that change from run to run (time stamps, wall time, absolute paths).
VOLATILE = {"computed_at", "software_version"}


def _scrub(value):
    if isinstance(value, dict):
        return {k: _scrub(v) for k, v in value.items() if k not in VOLATILE}
    if isinstance(value, list):
        return [_scrub(v) for v in value]
    if isinstance(value, str) and str(REPO) in value:
        return value.replace(str(REPO), "<repo>")
    return value


def _invoke(args: list[str]):
    from click.testing import CliRunner

    from profiler.cli.main import cli

    result = CliRunner().invoke(cli, args, catch_exceptions=False)
    if result.exit_code != 0:
        raise AssertionError(f"terrahop {' '.join(args)}: exit {result.exit_code}\n{result.stderr}")
    return result


def link_records() -> dict:
    """Each demo link file's JSON record (``terrahop link FILE --json``)."""
    out = {}
    for toml in sorted(EXAMPLES.glob("demo-*.toml")):
        result = _invoke(["link", str(toml), "--json", "--date", INSTALL_DATE])
        out[toml.stem] = _scrub(json.loads(result.stdout))
    return out


def sheet_rows() -> dict:
    """The parameter table of each demo sheet, in metres and in feet."""
    from profiler.sheets.table import parameter_rows

    out = {}
    for name, record in link_records().items():
        for units in ("m", "ft"):
            out[f"{name}:{units}"] = [[r.label, r.left, getattr(r, "right", None), r.flag]
                                      for r in parameter_rows(record, units)]
    return out


def screening_csv(tmp: Path) -> str:
    """``terrahop screen`` over the demo sites (5.8 GHz, 23 dBi) as CSV text, links then sites."""
    out = tmp / "golden.csv"
    _invoke(["screen", str(DEMO / "sites.csv"), "--dem", str(DEMO / "terrain.tif"), "--freq-ghz", "5.8",
             "--tx-power-dbm", "20", "--gain-a-dbi", "23", "--gain-b-dbi", "23", "--bandwidth-mhz", "20",
             "--required-snr-db", "15", "--out", str(out), "--workers", "1", "-q", "--overwrite"])
    return out.read_text() + "\n---\n" + (tmp / "golden-sites.csv").read_text()


def main() -> None:
    import tempfile

    (HERE / "links.json").write_text(json.dumps(link_records(), indent=1, sort_keys=True) + "\n")
    (HERE / "sheet_rows.json").write_text(json.dumps(sheet_rows(), indent=1, sort_keys=True) + "\n")
    with tempfile.TemporaryDirectory() as tmp:
        (HERE / "screen.csv").write_text(screening_csv(Path(tmp)))
    print(f"golden files written to {HERE}", file=sys.stderr)


if __name__ == "__main__":
    main()
