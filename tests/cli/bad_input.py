"""Harness for the bad-input corpus (``tests/cli/test_bad_inputs_*.py``).

Each case runs the real command (in-process with click's runner, or as a
subprocess with ``subprocess=True``) and asserts what the project promises for
bad input: a non-zero exit, exactly one line on stderr that contains the given
words, no traceback, nothing on stdout that looks like a result, and every
input file byte-for-byte unchanged (SHA-256 before and after).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable


def sha256_of(paths: Iterable[Path]) -> dict[Path, str | None]:
    """SHA-256 of each file (None when it does not exist); folders hash every file inside."""
    out: dict[Path, str | None] = {}
    for p in map(Path, paths):
        if p.is_dir():
            for f in sorted(p.rglob("*")):
                if f.is_file():
                    out[f] = hashlib.sha256(f.read_bytes()).hexdigest()
        elif p.exists():
            out[p] = hashlib.sha256(p.read_bytes()).hexdigest()
        else:
            out[p] = None
    return out


@dataclass
class Outcome:
    exit_code: int
    stdout: str
    stderr: str


def run_command(args: list[str], *, subprocess: bool = False) -> Outcome:
    """Run ``terrahop ARGS``; stdout and stderr kept apart."""
    if subprocess:
        from tests.conftest import run_cli

        proc = run_cli(*map(str, args))
        return Outcome(proc.returncode, proc.stdout, proc.stderr)
    from click.testing import CliRunner

    from profiler.cli.main import cli

    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=True)
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise AssertionError(f"terrahop {' '.join(map(str, args))} raised {result.exception!r}") \
            from result.exception
    return Outcome(result.exit_code, result.stdout, result.stderr)


def assert_refused(
    args: list[str],
    words: Iterable[str] = (),
    *,
    inputs: Iterable[Path] = (),
    subprocess: bool = False,
    exit_code: int | None = None,
) -> Outcome:
    """Run a bad command and check the promise: one clear line, non-zero exit, inputs untouched.

    ``words`` must all appear (case-insensitive) in the one stderr line.
    ``inputs`` are files or folders that must be unchanged afterwards.
    """
    inputs = list(inputs)
    before = sha256_of(inputs)
    out = run_command(list(args), subprocess=subprocess)
    after = sha256_of(inputs)
    shown = f"exit {out.exit_code}\nstdout:\n{out.stdout}\nstderr:\n{out.stderr}"
    assert out.exit_code != 0, shown
    if exit_code is not None:
        assert out.exit_code == exit_code, shown
    assert "Traceback" not in out.stderr and "Traceback" not in out.stdout, shown
    lines = [line for line in out.stderr.strip().splitlines() if line.strip()]
    # click's usage errors print "Usage: ...", a "Try ..." hint and then one "Error:" line.
    error_lines = [line for line in lines if not line.startswith(("Usage:", "Try ", "  "))]
    assert len(error_lines) == 1, shown
    for w in words:
        assert w.lower() in error_lines[0].lower(), f"{w!r} not in the message\n{shown}"
    assert before == after, f"an input changed\n{shown}"
    return out
