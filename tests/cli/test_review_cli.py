"""terrahop review end to end: the demo screened, then its page written by the real command."""

from __future__ import annotations

import ast
from pathlib import Path

from tests.conftest import DEMO_DEM, REPO, run_cli
from tests.review.fixtures import DEMO_SITES, SCREEN_ARGS


def test_demo_screen_then_review(tmp_path):
    gpkg = tmp_path / "demo.gpkg"
    run_cli("screen", str(DEMO_SITES), "--dem", str(DEMO_DEM), *SCREEN_ARGS, "-o", str(gpkg), "-q", check=True)
    page = tmp_path / "review.html"
    proc = run_cli("review", str(gpkg), "-o", str(page), check=True)  # the terrain named by the run table
    assert proc.stdout.startswith(f"written: {page} (66 links, 66 profiles, ")
    assert proc.stderr == ""
    text = page.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    assert '<meta name="generator" content="terrahop review' in text
    # --dem given as well: the same page from the given raster.
    given = run_cli("review", str(gpkg), "-o", str(tmp_path / "given.html"), "--dem", str(DEMO_DEM), check=True)
    assert "66 profiles" in given.stdout and given.stderr == ""
    # Without terrain (a result without its run table): still a page, and a note saying why.
    from tests.review.fixtures import without_run_table

    bare_gpkg = without_run_table(gpkg, tmp_path / "bare.gpkg")
    bare = run_cli("review", str(bare_gpkg), "-o", str(tmp_path / "bare.html"), check=True)
    assert "note: no terrain" in bare.stderr and "0 profiles" in bare.stdout


def test_review_package_imports_no_click_and_no_cli():
    for path in sorted((REPO / "profiler" / "review").glob("*.py")):
        tree = ast.parse(Path(path).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [("." * node.level) + (node.module or "")]
            for name in names:
                assert not name.startswith("click"), f"{path.name} imports {name}"
                assert "cli" not in name.split("."), f"{path.name} imports {name}"
