"""On-disk staging of a screening run: the lock, the committed column files, the final renames.

A run writing ``RESULT`` keeps three things beside it:

- ``RESULT.lock``: an exclusive advisory lock (``flock``) holding the PID of
  the run; the operating system drops it when that process ends, however it
  ends, so a second run is refused only while the first is alive;
- ``RESULT.partial/``: the staging folder: append-only column files, a
  problem list, ``manifest.json`` (what run this is) and ``progress.json``
  (how many rows are final, with a CRC-32 of each file's committed bytes, so
  damage is found on resume rather than read as numbers);
- ``RESULT.partial/finish.json``: written when every output file is complete
  under a temporary name; it lists the renames still to do, so a crash
  between two renames is finished by the next run (the result and its
  ``-sites`` file are always the old pair or the new pair).
"""

from __future__ import annotations

import json
import os
import shutil
import zlib
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence, TypeGuard

import numpy as np

from ..errors import InputError

__all__ = [
    "Stage", "RunLock", "RunInProgress", "StageDamaged", "staging_folder", "lock_path",
    "write_json", "finish_renames", "pending_renames", "crash_point",
]

#: Version of the staging layout; a folder of another version is not resumed.
STAGE_FORMAT = 2


class RunInProgress(InputError):
    """Another live process holds the lock of this output."""


class StageDamaged(InputError):
    """The staging folder cannot be trusted (damaged, garbage, or another layout)."""


# --------------------------------------------------------------------------- crash points

#: Test hook: called with the name of each step of the final write (see :func:`crash_point`).
CRASH_HOOK: Callable[[str], None] | None = None


def crash_point(step: str) -> None:
    """Mark a step of the final write; tests set :data:`CRASH_HOOK` to stop the run there."""
    if CRASH_HOOK is not None:
        CRASH_HOOK(step)


# --------------------------------------------------------------------------- paths

def staging_folder(out: str | os.PathLike) -> Path:
    """Folder holding the staged results of a run writing ``out``."""
    p = Path(out)
    return p.with_name(p.name + ".partial")


def lock_path(out: str | os.PathLike) -> Path:
    """Lock file of a run writing ``out``."""
    p = Path(out)
    return p.with_name(p.name + ".lock")


def write_json(path: Path, data: Any) -> None:
    """Write JSON atomically (temporary file, fsync, rename)."""
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "w") as fh:
        json.dump(data, fh)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


def _fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory handles
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


# --------------------------------------------------------------------------- the lock

try:
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]

#: Lock descriptors held by this process (closed in forked workers, see below).
_HELD: set[int] = set()


def _close_in_child() -> None:
    # A forked worker shares the lock's open file; closing its copy keeps the lock
    # tied to the parent alone (it is freed when the parent ends, workers or not).
    for fd in list(_HELD):
        try:
            os.close(fd)
        except OSError:
            pass
    _HELD.clear()


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_close_in_child)


def _try_lock(fd: int) -> bool:
    if fcntl is not None:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except (BlockingIOError, PermissionError):
            return False
        return True
    import msvcrt  # pragma: no cover - Windows

    try:  # pragma: no cover
        msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
    except OSError:  # pragma: no cover
        return False
    return True  # pragma: no cover


class RunLock:
    """Exclusive advisory lock on ``path`` for one run (a context manager).

    The file holds the PID of the holder.  It is removed on release; a run
    that opened the file just before it was removed notices (the inode on
    disk is another one) and locks the new file instead.
    """

    def __init__(self, path: str | os.PathLike, what: str) -> None:
        self.path = Path(path)
        self.what = what
        self.fd: int | None = None

    def acquire(self) -> "RunLock":
        for _ in range(100):
            try:
                fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
            except OSError as exc:
                raise InputError(f"cannot create the lock file {self.path}: {exc.strerror}") from None
            if not _try_lock(fd):
                pid = _read_pid(fd)
                os.close(fd)
                who = f"PID {pid}" if pid else "PID unknown"
                raise RunInProgress(
                    f"a run is in progress ({who}) writing {self.what}; wait for it to end "
                    f"(or stop it), then run again"
                )
            try:
                st = os.stat(self.path)
                mine = os.fstat(fd)
                same = (st.st_ino, st.st_dev) == (mine.st_ino, mine.st_dev)
            except FileNotFoundError:
                same = False
            if same:
                os.ftruncate(fd, 0)
                os.write(fd, f"{os.getpid()}\n".encode())
                self.fd = fd
                _HELD.add(fd)
                return self
            os.close(fd)  # the holder removed it as we opened it: lock the file on disk now
        raise InputError(f"cannot take the lock {self.path}: it keeps being replaced")  # pragma: no cover

    def release(self) -> None:
        if self.fd is None:
            return
        try:
            os.unlink(self.path)  # while still held, so no one locks a removed file and keeps it
        except OSError:
            pass
        _HELD.discard(self.fd)
        os.close(self.fd)
        self.fd = None

    def __enter__(self) -> "RunLock":
        return self.acquire()

    def __exit__(self, *exc: Any) -> None:
        self.release()


def _read_pid(fd: int) -> int | None:
    try:
        text = os.pread(fd, 32, 0).decode("ascii", "replace").strip()
    except OSError:
        return None
    return int(text) if text.isdigit() else None


# --------------------------------------------------------------------------- staged columns

class Stage:
    """Append-only column files of a run, committed chunk by chunk.

    ``columns`` maps column names to numpy dtype strings.  ``progress.json``
    (written atomically) says how many rows and problem-list bytes are final
    and holds a CRC-32 of each file's committed bytes; anything written
    after it by an interrupted run is cut away on resume, and anything that
    does not match it is refused (:class:`StageDamaged`).
    """

    def __init__(self, folder: Path, columns: Mapping[str, str]) -> None:
        self.folder = Path(folder)
        self.spec = dict(columns)
        self.files: dict[str, Any] = {}
        self.crc: dict[str, int] = {name: 0 for name in self.spec}
        self.problems_bytes = 0
        self.problems_crc = 0

    # -- paths
    @property
    def progress_path(self) -> Path:
        return self.folder / "progress.json"

    @property
    def manifest_path(self) -> Path:
        return self.folder / "manifest.json"

    @property
    def problems_path(self) -> Path:
        return self.folder / "problems.jsonl"

    @property
    def finish_path(self) -> Path:
        return self.folder / "finish.json"

    def _column_path(self, name: str) -> Path:
        return self.folder / "columns" / f"{name}.bin"

    def exists(self) -> bool:
        """True when a staging folder is there; InputError when that path is something else.

        A file, or a folder with none of a stage's files, is not ours to
        resume or to remove.
        """
        if not (self.folder.exists() or self.folder.is_symlink()):
            return False
        ours = self.folder.is_dir() and not self.folder.is_symlink() and any(
            (self.folder / name).exists() for name in ("manifest.json", "progress.json", "columns"))
        if not ours:
            raise InputError(
                f"{self.folder} exists and is not a terrahop staging folder; move it or choose another --out"
            )
        return True

    # -- life cycle
    def create(self, manifest: dict) -> None:
        """Start an empty stage (any previous folder is removed)."""
        self.discard()
        (self.folder / "columns").mkdir(parents=True)
        for name in self.spec:
            self._column_path(name).touch()
        self.problems_path.touch()
        write_json(self.manifest_path, {**manifest, "format": STAGE_FORMAT, "columns": self.spec})
        self.crc = {name: 0 for name in self.spec}
        self.problems_bytes = self.problems_crc = 0
        self._commit(0, 0)

    def discard(self) -> None:
        if self.folder.is_dir() and not self.folder.is_symlink():
            shutil.rmtree(self.folder)

    def _damaged(self, what: str) -> StageDamaged:
        return StageDamaged(
            f"the interrupted run in {self.folder} is damaged ({what}); "
            "add --restart to discard it and start again"
        )

    def manifest(self) -> dict:
        """The manifest, checked for shape and layout (StageDamaged otherwise)."""
        data = self._read_json(self.manifest_path)
        if not isinstance(data, dict) or not isinstance(data.get("fingerprint"), str):
            raise self._damaged("manifest.json does not describe a run")
        if data.get("format") != STAGE_FORMAT or data.get("columns") != self.spec:
            raise self._damaged("written by another version of terrahop")
        if not _count(data.get("total_pairs")):
            raise self._damaged("manifest.json has no pair count")
        return data

    def _read_json(self, path: Path) -> Any:
        try:
            return json.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise self._damaged(f"{path.name} is missing") from None
        except (OSError, UnicodeDecodeError, ValueError):
            raise self._damaged(f"{path.name} is not readable JSON") from None

    def validate(self, total_pairs: int) -> tuple[int, int]:
        """Check the committed bytes against ``progress.json``; return ``(rows, chunks)``."""
        state = self._read_json(self.progress_path)
        if not isinstance(state, dict):
            raise self._damaged("progress.json is not a record")
        rows, chunks = state.get("rows"), state.get("chunks")
        pbytes, pcrc, crc = state.get("problems_bytes"), state.get("problems_crc"), state.get("crc")
        if not (_count(rows) and _count(chunks) and _count(pbytes) and _count(pcrc)) or not isinstance(crc, dict):
            raise self._damaged("progress.json lacks its counts")
        if rows > total_pairs or chunks > rows + 1:
            raise self._damaged(f"progress.json counts {rows} rows of {total_pairs} pairs")
        if set(crc) != set(self.spec) or not all(_count(v) for v in crc.values()):
            raise self._damaged("progress.json lacks a column checksum")
        for name, dt in self.spec.items():
            size = rows * np.dtype(dt).itemsize
            got = _crc_of(self._column_path(name), size)
            if got is None:
                raise self._damaged(f"column {name} is shorter than its {rows} committed rows")
            if got != crc[name]:
                raise self._damaged(f"column {name} does not match its checksum")
        got = _crc_of(self.problems_path, pbytes)
        if got is None or got != pcrc:
            raise self._damaged("problems.jsonl does not match its checksum")
        with open(self.problems_path, "rb") as fh:
            for line in fh.read(pbytes).splitlines():
                try:
                    p = json.loads(line)
                except ValueError:
                    raise self._damaged("problems.jsonl holds a line that is not JSON") from None
                if not (isinstance(p, list) and len(p) == 2 and _count(p[0]) and p[0] < rows
                        and isinstance(p[1], str)):
                    raise self._damaged("problems.jsonl holds a line that is not a pair's problem")
        self.crc = {name: int(v) for name, v in crc.items()}
        self.problems_bytes, self.problems_crc = pbytes, pcrc
        return rows, chunks

    def reopen(self, rows: int) -> None:
        """Cut every file back to what :meth:`validate` found committed."""
        for name, dt in self.spec.items():
            with open(self._column_path(name), "r+b") as fh:
                fh.truncate(rows * np.dtype(dt).itemsize)
        with open(self.problems_path, "r+b") as fh:
            fh.truncate(self.problems_bytes)

    def open(self) -> None:
        for name in self.spec:
            self.files[name] = open(self._column_path(name), "ab")
        self.files["__problems"] = open(self.problems_path, "ab")

    def append(self, cols: dict[str, np.ndarray], problems: list[tuple[int, str]], chunks: int, rows: int) -> None:
        """Append one chunk's rows and problems, then commit them."""
        for name, dt in self.spec.items():
            data = np.ascontiguousarray(cols[name], dtype=dt).tobytes()
            self.files[name].write(data)
            self.crc[name] = zlib.crc32(data, self.crc[name])
        text = "".join(json.dumps([int(p), str(m)]) + "\n" for p, m in problems).encode()
        self.files["__problems"].write(text)
        self.problems_bytes += len(text)
        self.problems_crc = zlib.crc32(text, self.problems_crc)
        for fh in self.files.values():
            fh.flush()
        self._commit(chunks, rows)

    def _commit(self, chunks: int, rows: int) -> None:
        write_json(self.progress_path, {
            "chunks": chunks, "rows": rows, "crc": self.crc,
            "problems_bytes": self.problems_bytes, "problems_crc": self.problems_crc,
        })

    def close(self) -> None:
        for fh in self.files.values():
            fh.close()
        self.files.clear()

    # -- reading
    def columns(self, rows: int, names: Sequence[str] | None = None) -> dict[str, np.ndarray]:
        """The first ``rows`` rows of some columns, in pair order."""
        out = {}
        for name in names if names is not None else tuple(self.spec):
            dt = self.spec[name]
            out[name] = np.fromfile(self._column_path(name), dtype=dt, count=rows) if rows else np.zeros(0, dt)
        return out

    def rank(self, order: np.ndarray) -> Callable[[int, int], dict[str, np.ndarray]]:
        """Rewrite every column in ``order`` (one column in memory at a time); return a batch reader."""
        folder = self.folder / "ranked"
        folder.mkdir(exist_ok=True)
        for name in self.spec:
            self.columns(order.size, (name,))[name][order].tofile(folder / f"{name}.bin")
        spec = self.spec

        def read(start: int, stop: int) -> dict[str, np.ndarray]:
            out = {}
            for name, dt in spec.items():
                size = np.dtype(dt).itemsize
                out[name] = np.fromfile(folder / f"{name}.bin", dtype=dt, count=stop - start, offset=start * size)
            return out

        return read

    def problems(self) -> list[list]:
        """The committed problems ``[pair_index, sentence]``."""
        if not self.problems_path.exists():
            return []
        with open(self.problems_path, "rb") as fh:
            data = fh.read(self.problems_bytes) if self.problems_bytes else fh.read()
        return [json.loads(line) for line in data.splitlines() if line.strip()]


def _count(v: Any) -> TypeGuard[int]:
    return isinstance(v, int) and not isinstance(v, bool) and v >= 0


def _crc_of(path: Path, size: int) -> int | None:
    """CRC-32 of the first ``size`` bytes of ``path``; None when it is missing or shorter."""
    try:
        if path.stat().st_size < size:
            return None
        crc = 0
        left = size
        with open(path, "rb") as fh:
            while left:
                block = fh.read(min(left, 1 << 22))
                if not block:
                    return None
                crc = zlib.crc32(block, crc)
                left -= len(block)
        return crc
    except OSError:
        return None


# --------------------------------------------------------------------------- final renames

def pending_renames(stage: Stage) -> list[tuple[Path, Path]] | None:
    """The renames a crashed final write left to do (None when it never got that far)."""
    if not stage.finish_path.exists():
        return None
    data = stage._read_json(stage.finish_path)
    if not (isinstance(data, dict) and isinstance(data.get("renames"), list)
            and all(isinstance(r, list) and len(r) == 2 and all(isinstance(x, str) for x in r)
                    for r in data["renames"])):
        raise stage._damaged("finish.json does not list the renames")
    return [(Path(src), Path(dst)) for src, dst in data["renames"]]


def finish_renames(stage: Stage, renames: Sequence[tuple[Path, Path]]) -> None:
    """Record the renames, then do them; a rename already done (source gone) is skipped.

    The record is written before the first rename, so a crash between two
    renames is finished by :func:`finish_renames` on the next run.
    """
    if not stage.finish_path.exists():
        write_json(stage.finish_path, {"renames": [[str(s), str(d)] for s, d in renames]})
        crash_point("marker written")
    for k, (src, dst) in enumerate(renames):
        if src.exists():
            os.replace(src, dst)
            _fsync_dir(dst.parent)
        crash_point(f"rename {k + 1} of {len(renames)} done")
