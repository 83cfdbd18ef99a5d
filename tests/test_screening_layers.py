"""Import direction of the screening code: io never imports screening; the column table imports nothing of ours."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "profiler"


def _imported(path: Path) -> set[str]:
    """Absolute names of the profiler modules a file imports (relative imports resolved)."""
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    names = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = parts[:len(parts) - node.level + (1 if path.name == "__init__.py" else 0)]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            names.add(mod)
            names.update(f"{mod}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
    return {n for n in names if n.startswith("profiler")}


@pytest.mark.parametrize("path", sorted((PACKAGE / "io").glob("*.py")), ids=lambda p: p.name)
def test_io_never_imports_screening(path):
    assert not any(n.startswith("profiler.screening") for n in _imported(path)), _imported(path)


def test_the_column_table_imports_nothing_of_the_package():
    assert _imported(PACKAGE / "io" / "columns.py") == set()


def test_the_resolver_sees_relative_imports():
    """The check above would pass vacuously if relative imports were not resolved."""
    assert "profiler.io.columns" in _imported(PACKAGE / "io" / "screen_output.py")
    assert "profiler.io.screen_output" in _imported(PACKAGE / "screening" / "run.py")
