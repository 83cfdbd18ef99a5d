"""Staging of a screening run: the lock, checks of staged files on resume, the final write's crash points."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest

from profiler import screening
from profiler.budget import Radio
from profiler.errors import InputError
from profiler.io import stage as stage_mod
from profiler.io.sites import read_sites
from profiler.io.stage import RunInProgress, RunLock, Stage, StageDamaged
from profiler.link import Settings
from profiler.screening import PairPlan, screen
from profiler.terrain import ElevationModel

from tests._screening_data import DEMO_DEM, REPO, random_sites_csv, lose_worker_after

RADIO = Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)


def _run(sites, out, max_km=5.0, **kw):
    kw.setdefault("workers", 1)
    with ElevationModel([DEMO_DEM]) as model:
        return screen(sites, model, RADIO, Settings(), out, plan=PairPlan(max_km=max_km), chunk_pairs=9, **kw)


@pytest.fixture(scope="module")
def sites(tmp_path_factory):
    s, bad = read_sites(random_sites_csv(tmp_path_factory.mktemp("st") / "sites.csv", 20))
    assert not bad
    return s


# --------------------------------------------------------------------------- lock

def test_a_second_lock_is_refused_with_the_holders_pid(tmp_path):
    path = tmp_path / "r.csv.lock"
    with RunLock(path, "r.csv"):
        assert path.read_text().strip() == str(os.getpid())
        with pytest.raises(RunInProgress, match=f"in progress \\(PID {os.getpid()}\\) writing r.csv"):
            RunLock(path, "r.csv").acquire()
    assert not path.exists()
    with RunLock(path, "r.csv"):  # free again
        pass


def test_a_lock_held_by_a_dead_process_is_free(tmp_path):
    path = tmp_path / "r.csv.lock"
    code = ("import sys, os; from profiler.io.stage import RunLock; RunLock(sys.argv[1], 'r').acquire(); "
            "os._exit(0)")  # ends without releasing: the OS drops the lock
    env = dict(os.environ, PYTHONPATH=str(REPO))
    subprocess.run([sys.executable, "-c", code, str(path)], check=True, env=env)
    assert path.exists()
    with RunLock(path, "r.csv"):
        pass


def test_a_forked_worker_does_not_keep_the_lock(tmp_path):
    path = tmp_path / "r.csv.lock"
    lock = RunLock(path, "r.csv").acquire()
    pid = os.fork()
    if pid == 0:  # the child: its copy of the descriptor was closed at fork
        os._exit(0 if lock.fd not in stage_mod._HELD else 1)
    _, status = os.waitpid(pid, 0)
    assert os.WEXITSTATUS(status) == 0
    lock.release()


# --------------------------------------------------------------------------- staged files

@pytest.fixture
def interrupted(tmp_path, sites, monkeypatch):
    """A run stopped after 3 committed chunks (27 rows); returns its output path and stage."""
    real = lose_worker_after(monkeypatch, 3)
    out = tmp_path / "r.gpkg"
    with pytest.raises(RuntimeError):
        _run(sites, out)
    monkeypatch.setattr(screening.executors, "evaluate_chunk", real)
    st = Stage(screening.staging_folder(out), screening.COLUMNS)
    assert json.loads(st.progress_path.read_text())["rows"] == 27
    return out, st


def _set_progress(st, **values):
    state = json.loads(st.progress_path.read_text())
    state.update(values)
    st.progress_path.write_text(json.dumps(state))


def _problems(st, text):
    import zlib

    st.problems_path.write_bytes(text)
    _set_progress(st, problems_bytes=len(text), problems_crc=zlib.crc32(text))


def _flip_byte(path, at):
    data = bytearray(path.read_bytes())
    data[at] ^= 0x40
    path.write_bytes(bytes(data))


@pytest.mark.parametrize("damage, words", [
    (lambda st: st.progress_path.write_text("{not json"), "progress.json is not readable"),
    (lambda st: st.progress_path.write_text('{"rows": "lots", "chunks": 3}'), "lacks its counts"),
    (lambda st: st.progress_path.write_text("[1, 2]"), "not a record"),
    (lambda st: st.manifest_path.write_text("\x00\x01garbage"), "manifest.json is not readable"),
    (lambda st: st.manifest_path.unlink(), "manifest.json is missing"),
    (lambda st: _flip_byte(st.folder / "columns" / "fade_margin_db.bin", 17), "fade_margin_db does not match"),
    (lambda st: open(st.folder / "columns" / "snr_db.bin", "r+b").truncate(40), "snr_db is shorter"),
    (lambda st: (st.folder / "columns" / "status.bin").unlink(), "status is shorter"),
    (lambda st: _problems(st, b"zzz\n"), "problems.jsonl holds a line that is not JSON"),
    (lambda st: _problems(st, b'[3, 4]\n'), "not a pair's problem"),
    (lambda st: _set_progress(st, problems_bytes=100), "problems.jsonl does not match"),
    (lambda st: _set_progress(st, rows=10_000), "rows of"),
])
def test_damaged_staging_is_refused_with_restart_advice(interrupted, sites, damage, words):
    out, st = interrupted
    damage(st)
    with pytest.raises(StageDamaged, match="--restart") as err:
        _run(sites, out, resume=True)
    assert words in str(err.value)
    assert not out.exists()
    summary = _run(sites, out, restart=True)
    assert summary.resumed_pairs == 0 and summary.pairs > 27


def test_rows_written_after_the_last_commit_are_cut_away(interrupted, sites, tmp_path):
    out, st = interrupted
    with open(st.folder / "columns" / "pair.bin", "ab") as fh:
        fh.write(np.arange(5, dtype="i8").tobytes())
    with open(st.problems_path, "a") as fh:
        fh.write('[999, "half a line')
    summary = _run(sites, out, resume=True)
    assert summary.resumed_pairs == 27
    full = _run(sites, tmp_path / "full.gpkg")
    assert summary.pairs == full.pairs and summary.viable == full.viable


# --------------------------------------------------------------------------- final write

STEPS = ["links written", "sites written", "marker written", "rename 1 of 3 done", "rename 2 of 3 done",
         "rename 3 of 3 done", "staging removed"]  # the third file renamed is the run description, r.run.json


class Crash(Exception):
    pass


@pytest.fixture(scope="module")
def pairs(tmp_path_factory, sites):
    """Bytes of an old result pair (4 km) and of the new one (5 km)."""
    folder = tmp_path_factory.mktemp("pairs")
    _run(sites, folder / "old.csv", max_km=4.0)
    _run(sites, folder / "new.csv", max_km=5.0)
    read = lambda stem: ((folder / f"{stem}.csv").read_bytes(), (folder / f"{stem}-sites.csv").read_bytes())
    old, new = read("old"), read("new")
    assert old != new
    return old, new


@pytest.mark.parametrize("recovery", ["plain", "resume"])
@pytest.mark.parametrize("step", STEPS)
def test_a_crash_at_any_step_of_the_final_write_leaves_the_old_pair_or_the_new(
        tmp_path, sites, pairs, monkeypatch, step, recovery):
    old, new = pairs
    out, out_sites = tmp_path / "r.csv", tmp_path / "r-sites.csv"
    out.write_bytes(old[0])
    out_sites.write_bytes(old[1])
    seen = []

    def hook(name):
        seen.append(name)
        if name == step:
            raise Crash(name)

    monkeypatch.setattr(stage_mod, "CRASH_HOOK", hook)
    with pytest.raises(Crash):
        _run(sites, out, overwrite=True)
    monkeypatch.setattr(stage_mod, "CRASH_HOOK", None)
    assert seen[-1] == step
    state = (out.read_bytes(), out_sites.read_bytes())
    staging = screening.staging_folder(out)
    if STEPS.index(step) < STEPS.index("rename 1 of 3 done"):
        assert state == old  # nothing renamed yet
        assert (staging / "finish.json").exists() == (step == "marker written")
    elif step == "rename 1 of 3 done":
        assert state == (new[0], old[1]) and (staging / "finish.json").exists()  # finished by the next run
    else:
        assert state == new
    assert not (tmp_path / "r.csv.lock").exists()
    if recovery == "plain":
        # Any next run first finishes a recorded rename; then it is refused (staging or result left).
        with pytest.raises(InputError):
            _run(sites, out)
        state = (out.read_bytes(), out_sites.read_bytes())
        assert state in (old, new)
        if STEPS.index(step) >= STEPS.index("marker written"):
            assert state == new and not staging.exists()
        if staging.exists():
            _run(sites, out, resume=True, overwrite=True)
    else:
        summary = _run(sites, out, resume=True, overwrite=True)
        assert summary.pairs > 0 and summary.outputs == (str(out), str(out_sites), str(tmp_path / "r.csv.run.json"))
    assert (out.read_bytes(), out_sites.read_bytes()) == new
    assert not staging.exists()


def test_damaged_finish_marker_is_refused(tmp_path, sites, monkeypatch):
    out = tmp_path / "r.csv"

    def hook(name):
        if name == "marker written":
            raise Crash(name)

    monkeypatch.setattr(stage_mod, "CRASH_HOOK", hook)
    with pytest.raises(Crash):
        _run(sites, out)
    monkeypatch.setattr(stage_mod, "CRASH_HOOK", None)
    (screening.staging_folder(out) / "finish.json").write_text('{"renames": 5}')
    with pytest.raises(StageDamaged, match="finish.json"):
        _run(sites, out, resume=True)
    summary = _run(sites, out, restart=True)  # the advice given gets past it
    assert summary.pairs > 0 and not screening.staging_folder(out).exists()


def test_error_rows_carry_null_figures(tmp_path):
    import pandas as pd

    path = random_sites_csv(tmp_path / "s.csv", 4)
    lines = path.read_text().splitlines()
    first = lines[1].split(",")
    lines.append(",".join(["Twin", first[1], first[2], "10", "40", "x"]))
    path.write_text("\n".join(lines) + "\n")
    s, _ = read_sites(path)
    with ElevationModel([DEMO_DEM]) as model:
        screen(s, model, RADIO, Settings(), tmp_path / "r.csv", workers=1)
        screen(s, model, RADIO, Settings(), tmp_path / "r.gpkg", workers=1)
    import geopandas as gpd

    for links in (pd.read_csv(tmp_path / "r.csv"), gpd.read_file(tmp_path / "r.gpkg", layer="links")):
        err = links[links["verdict"] == "error"]
        good = links[links["verdict"] != "error"]
        assert len(err) == 1 and len(good) == 9
        for col in ("fade_margin_db", "worst_clearance_m", "worst_f1_fraction", "ground_a_m", "free_space_db",
                    "diffraction_db", "rx_level_dbm", "snr_db", "wc_fade_margin_db", "mast_raise_m",
                    "availability_pct", "line_of_sight", "meets_criterion", "meets_availability",
                    "fixable_with_masts"):
            assert err[col].isna().all(), col
            if col not in ("availability_pct", "meets_availability"):  # not estimated on every path
                assert good[col].notna().all(), col
