"""Screening results for the review tests: the demo screening, and copies with a run description added."""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
from pathlib import Path

from tests.conftest import DEMO_DEM, REPO

DEMO_SITES = REPO / "data" / "demo" / "sites.csv"
#: The radio of the demo screening the review tests use.
SCREEN_ARGS = ["--freq-ghz", "5.8", "--tx-power-dbm", "20", "--gain-a-dbi", "23", "--gain-b-dbi", "23"]


def screen_demo(out: Path) -> Path:
    """Screen the demo sites over the demo terrain into ``out`` (a GeoPackage), in process."""
    from click.testing import CliRunner

    from profiler.cli.main import cli

    res = CliRunner().invoke(cli, ["screen", str(DEMO_SITES), "--dem", str(DEMO_DEM), *SCREEN_ARGS, "-o", str(out),
                                   "-q"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    return out


def sha256(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def with_run_table(src: Path, out: Path, run: dict | None = None, *, terrain: list | None = None) -> Path:
    """A copy of ``src`` with the non-spatial table ``run`` (one row, ``run_json``) the screening writes."""
    shutil.copyfile(src, out)
    if run is None:
        run = {
            "software": {"name": "terrahop", "version": "test"},
            "created_utc": "2026-01-01T00:00:00Z",
            "command": "terrahop screen data/demo/sites.csv ...",
            "radio": {"freq_ghz": 5.8, "tx_power_dbm": 20.0},
            "k": 4 / 3, "k_worst": 2 / 3, "criterion": "0.6 F1 at k, 0 at k worst", "min_margin_db": 10.0,
            "diffraction_method": "delta-bullington", "climate": {"rain_rate_mm_h": 42.0},
            "terrain": terrain if terrain is not None else
            [{"path": str(DEMO_DEM.resolve()), "sha256": sha256(DEMO_DEM), "role": "dem"}],
            "sites_file": {"path": str(DEMO_SITES.resolve()), "sha256": sha256(DEMO_SITES)},
        }
    _drop_run_table(out)  # the screening's own, replaced by this one
    con = sqlite3.connect(out)
    with con:
        con.execute("CREATE TABLE run (id INTEGER PRIMARY KEY, run_json TEXT)")
        con.execute("INSERT INTO run (run_json) VALUES (?)", (json.dumps(run),))
        con.execute("INSERT INTO gpkg_contents (table_name, data_type, identifier) VALUES ('run', 'attributes', 'run')")
    con.close()
    return out


def _drop_run_table(path: Path) -> None:
    """Remove the run description a screening writes (table ``run`` and its gpkg_contents row)."""
    con = sqlite3.connect(path)
    with con:
        con.execute("DROP TABLE IF EXISTS run")
        con.execute("DELETE FROM gpkg_contents WHERE table_name = 'run'")
    con.close()


def without_run_table(src: Path, out: Path) -> Path:
    """A copy of ``src`` without its run description: a result whose terrain the page is not told."""
    shutil.copyfile(src, out)
    _drop_run_table(out)
    return out


def links_rows(path: Path) -> list[dict]:
    """Every row of the links layer as a dict, in rank order."""
    con = sqlite3.connect(path)
    con.row_factory = sqlite3.Row
    rows = [dict(r) for r in con.execute("SELECT * FROM links ORDER BY rank")]
    con.close()
    return rows
