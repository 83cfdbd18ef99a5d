"""Two `terrahop screen` processes on one output: one is refused, the result is exact.

The first process is held after its first committed chunk (a wrapper waits
for a gate file before each later chunk), so the second one always meets a
live run; then the gate opens and the first finishes.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pytest

from tests._screening_data import DEMO_DEM, REPO, random_sites_csv

RADIO = ["--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi", "23"]

_HELD = """
import os, sys, time
import profiler.screening.executors as s
real = s.evaluate_chunk
def held(model, task):
    if task.first_pair > 0:
        while not os.path.exists(sys.argv[1]):
            time.sleep(0.02)
    return real(model, task)
s.evaluate_chunk = held
from profiler.cli.main import cli
cli(sys.argv[2:], prog_name="terrahop")
"""


def _env():
    return dict(os.environ, PYTHONPATH=str(REPO))


def _run(*args):
    return subprocess.run([sys.executable, "-m", "profiler", *map(str, args)], capture_output=True, text=True,
                          env=_env(), timeout=300)


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    """Sites, the command and the bytes of an uninterrupted run's result pair."""
    folder = tmp_path_factory.mktemp("concurrent")
    sites = random_sites_csv(folder / "sites.csv", 20)
    args = ["screen", sites, "--dem", DEMO_DEM, *RADIO, "--max-km", "9", "--chunk-pairs", "8", "--workers", "1",
            "-q"]
    ref = folder / "ref.csv"
    proc = _run(*args, "--out", ref)
    assert proc.returncode == 0, proc.stderr
    return args, ref.read_bytes(), (folder / "ref-sites.csv").read_bytes()


def _start_held(args, out, gate):
    return subprocess.Popen([sys.executable, "-c", _HELD, str(gate), *map(str, args), "--out", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env())


def _wait_committed(out, proc, rows=8):
    progress = out.with_name(out.name + ".partial") / "progress.json"
    deadline = time.time() + 120
    while time.time() < deadline:
        try:
            if json.loads(progress.read_text())["rows"] >= rows:
                return
        except (OSError, ValueError, KeyError):
            pass
        assert proc.poll() is None, proc.communicate()
        time.sleep(0.02)
    raise AssertionError("the first run never committed a chunk")


@pytest.mark.parametrize("flags", [[], ["--resume"], ["--restart"], ["--overwrite"]])
def test_a_second_run_on_a_live_output_is_refused_and_the_first_is_exact(tmp_path, case, flags):
    args, ref_links, ref_sites = case
    out, gate = tmp_path / "r.csv", tmp_path / "gate"
    first = _start_held(args, out, gate)
    try:
        _wait_committed(out, first)
        second = _run(*args, "--out", out, *flags)
        assert second.returncode == 1, second.stderr
        lines = second.stderr.strip().splitlines()
        assert len(lines) == 1 and "Traceback" not in second.stderr
        assert "in progress" in lines[0] and f"PID {first.pid}" in lines[0], lines[0]
        assert "--resume" not in lines[0]
    finally:
        gate.touch()
        _, err = first.communicate(timeout=300)
    assert first.returncode == 0, err
    assert out.read_bytes() == ref_links
    assert (tmp_path / "r-sites.csv").read_bytes() == ref_sites
    assert not (tmp_path / "r.csv.partial").exists() and not (tmp_path / "r.csv.lock").exists()


def test_the_lock_dies_with_its_process_and_resume_is_exact(tmp_path, case):
    args, ref_links, ref_sites = case
    out, gate = tmp_path / "r.csv", tmp_path / "gate"
    first = _start_held(args, out, gate)
    _wait_committed(out, first)
    first.send_signal(signal.SIGKILL)
    first.communicate(timeout=60)
    assert (tmp_path / "r.csv.lock").exists()  # left behind, but no longer held
    resumed = _run(*args, "--out", out, "--resume")
    assert resumed.returncode == 0, resumed.stderr
    assert out.read_bytes() == ref_links
    assert (tmp_path / "r-sites.csv").read_bytes() == ref_sites
