"""The drop folder on disk: its layout, safe moves, and the job folders a watcher works in.

Every move is a rename inside one file system, so a file is always wholly in one place.
A watcher claims an input by renaming it into a job folder of its own private working
folder; the job folder then holds the input, the converter's outputs and, once the
outcome is known, a *plan* naming where each file goes. ``settle`` carries a job out:
with a plan it delivers every file (rolling forward after a crash), without one it puts
the input back in the inbox (rolling back). Both are safe to repeat.

Nothing here ever overwrites a file: moves into shared folders use a no-replace rename
(``renameat2(RENAME_NOREPLACE)`` on Linux, ``os.rename`` on Windows, which refuses an
existing target, else a hard link followed by an unlink) and pick a new name on a clash.
"""

from __future__ import annotations

import ctypes
import errno
import json
import os
import re
import secrets
import shutil
import socket
import stat
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from converter.api import DEFAULT_NAME_MAX, fit_stem, name_limit
from converter.read import SUFFIXES

ACCEPTED_SUFFIXES = SUFFIXES  # the reader's one list of readable types
LOCK_PREFIXES = ("~$", ".~lock")
TEMP_SUFFIXES = (".tmp", ".crdownload", ".part")

TAKE, SKIP, OTHER = "take", "skip", "other"

PLAN = ".pb-plan.json"
RESULT_XLSX = ".pb-result.xlsx"
RESULT_JSON = ".pb-result.json"
PROBLEMS_TXT = ".pb-problems.txt"
PROBLEMS_XLSX = ".pb-problems.xlsx"
HEARTBEAT = ".pb-heartbeat"
ADOPTED_PREFIX = "adopted-"

# errno values meaning "this file system cannot do that", not "that failed".
_UNSUPPORTED = {
    errno.EINVAL,
    errno.ENOSYS,
    errno.EOPNOTSUPP,
    getattr(errno, "ENOTSUP", errno.EOPNOTSUPP),
}
_NO_HARD_LINKS = _UNSUPPORTED | {errno.EPERM, errno.EMLINK, errno.EACCES}


def classify(name: str, *, hidden: bool = False) -> str:
    """``"take"`` an accepted spreadsheet, ``"skip"`` office lock/temp/hidden, else ``"other"``.

    Lock and temporary names are common practice: ``~$`` (Microsoft Office owner files),
    ``.~lock`` (LibreOffice), ``.tmp``, ``.crdownload`` (Chromium downloads), ``.part``
    (Firefox and many copy tools).
    """
    lower = name.lower()
    if hidden or name.startswith(".") or lower.startswith(LOCK_PREFIXES):
        return SKIP
    if lower.endswith(TEMP_SUFFIXES):
        return SKIP
    if lower.endswith(ACCEPTED_SUFFIXES):
        return TAKE
    return OTHER


def is_hidden(entry: os.DirEntry) -> bool:
    """Hidden by name (``.x``) or, on Windows, by the hidden attribute."""
    if entry.name.startswith("."):
        return True
    attrs = getattr(entry.stat(follow_symlinks=False), "st_file_attributes", 0)
    return bool(attrs & getattr(stat, "FILE_ATTRIBUTE_HIDDEN", 0))


@dataclass(frozen=True)
class Layout:
    """Where the drop folder's parts are. Names are relative to ``root`` unless absolute.

    All parts must be on one file system (one share): moves between them are renames.
    """

    root: Path
    inbox: Path
    outbox: Path
    archive: Path
    failed: Path
    work: Path

    @classmethod
    def under(
        cls,
        root: str | os.PathLike,
        *,
        inbox: str = "inbox",
        outbox: str = "outbox",
        archive: str = "archive",
        failed: str = "failed",
        work: str = ".pertbook-work",
    ) -> Layout:
        base = Path(root)
        return cls(base, base / inbox, base / outbox, base / archive, base / failed, base / work)

    def folder(self, key: str) -> Path:
        """The folder named by a plan item's key (``"outbox"``, ``"inbox"``, ...)."""
        if key not in ("inbox", "outbox", "archive", "failed"):
            raise ValueError(f"unknown drop-folder part {key!r}")
        return getattr(self, key)

    def shared(self) -> tuple[tuple[str, Path], ...]:
        return (
            ("inbox", self.inbox),
            ("outbox", self.outbox),
            ("archive", self.archive),
            ("failed", self.failed),
        )


# --------------------------------------------------------------------------- moves


_renameat2_fn = None
_renameat2_known = False


def _renameat2():
    global _renameat2_fn, _renameat2_known
    if not _renameat2_known:
        _renameat2_known = True
        if sys.platform.startswith("linux"):
            try:
                libc = ctypes.CDLL(None, use_errno=True)
                fn = libc.renameat2
                fn.argtypes = [
                    ctypes.c_int,
                    ctypes.c_char_p,
                    ctypes.c_int,
                    ctypes.c_char_p,
                    ctypes.c_uint,
                ]
                fn.restype = ctypes.c_int
                _renameat2_fn = fn
            except (OSError, AttributeError):
                _renameat2_fn = None
    return _renameat2_fn


def _rename_noreplace_linux(src: Path, dst: Path) -> bool | None:
    """``renameat2(..., RENAME_NOREPLACE)`` (Linux 3.15+, glibc 2.28+); None if unsupported."""
    fn = _renameat2()
    if fn is None:
        return None
    at_fdcwd, rename_noreplace = -100, 1  # <fcntl.h>, <linux/fs.h>
    if fn(at_fdcwd, os.fsencode(src), at_fdcwd, os.fsencode(dst), rename_noreplace) == 0:
        return True
    err = ctypes.get_errno()
    if err == errno.EEXIST:
        return False
    if err in _UNSUPPORTED:
        return None
    raise OSError(err, os.strerror(err), str(src), None, str(dst))


def move_noreplace(src: Path, dst: Path) -> bool:
    """Rename ``src`` to ``dst`` unless ``dst`` exists; False (nothing moved) if it does."""
    if os.name == "nt":
        try:
            os.rename(src, dst)  # Windows refuses an existing target
        except FileExistsError:
            return False
        return True
    done = _rename_noreplace_linux(src, dst)
    if done is not None:
        return done
    try:
        os.link(src, dst, follow_symlinks=False)
    except FileExistsError:
        return False
    except OSError as exc:
        if exc.errno not in _NO_HARD_LINKS:
            raise
        # A share without hard links: check, then rename (a tiny window remains).
        if os.path.lexists(dst):
            return False
        os.rename(src, dst)
        return True
    os.unlink(src)
    return True


def free_stem(
    stem: str,
    suffixes: list[str] | tuple[str, ...],
    taken: Callable[[str], bool],
    stamp: str,
    limit: int = DEFAULT_NAME_MAX,
) -> str:
    """``stem``, else ``stem-<stamp>``, else that plus ``-2``, ``-3``...: the first for which
    ``taken(<stem><suffix>)`` is false for every suffix. Pure: ``taken`` answers for the folder.

    Every name fits in ``limit`` bytes (the file system's, :func:`converter.api.name_limit`):
    a stem too long for it is shortened (:func:`converter.api.fit_stem`), the stamp and
    count kept whole.

    Examples
    --------
    >>> there = {"plan.xlsx", "plan-20250314-101502.xlsx"}
    >>> free_stem("plan", [".xlsx"], there.__contains__, "20250314-101502")
    'plan-20250314-101502-2'
    >>> free_stem("plan", [".json"], there.__contains__, "20250314-101502")
    'plan'
    >>> free_stem("p" * 60, [".xlsx"], there.__contains__, "20250314-101502", limit=40)
    'pppppppppppppppppppppppppp~598b320c'
    """

    def fitted(decoration: str) -> str:
        return fit_stem(stem, [f"{decoration}{s}" for s in suffixes], limit) + decoration

    def free(candidate: str) -> bool:
        return not any(taken(f"{candidate}{s}") for s in suffixes)

    n = 0
    while True:
        decoration = "" if n == 0 else f"-{stamp}" if n == 1 else f"-{stamp}-{n}"
        candidate = fitted(decoration)
        if free(candidate):
            return candidate
        n += 1


def time_stamp() -> str:
    """The local time as ``YYYYmmdd-HHMMSS``, for names that would clash."""
    return time.strftime("%Y%m%d-%H%M%S")


def unique_stem(folder: Path, stem: str, suffixes: list[str] | tuple[str, ...]) -> str:
    """:func:`free_stem` against what is in ``folder`` now, stamped with the current time,
    fitted to the folder's file-name limit."""
    return free_stem(
        stem,
        suffixes,
        lambda name: os.path.lexists(folder / name),
        time_stamp(),
        name_limit(folder),
    )


def _twin_in(folder: Path, st: os.stat_result) -> Path | None:
    """A name in ``folder`` for the same file as ``st`` (left by a crash mid link+unlink)."""
    try:
        with os.scandir(folder) as entries:
            for entry in entries:
                try:
                    other = entry.stat(follow_symlinks=False)
                except OSError:
                    continue
                if other.st_ino == st.st_ino and other.st_dev == st.st_dev:
                    return Path(entry.path)
    except FileNotFoundError:
        return None
    return None


def deliver(src: Path, folder: Path, stem: str, suffix: str) -> Path:
    """Move ``src`` to ``folder/<stem><suffix>``, or a unique variant; never overwrites."""
    st = os.stat(src, follow_symlinks=False)
    if st.st_nlink > 1:
        twin = _twin_in(folder, st)
        if twin is not None:
            os.unlink(src)
            return twin
    name = f"{unique_stem(folder, stem, [suffix])}{suffix}"
    for _ in range(1000):
        target = folder / name
        if move_noreplace(src, target):
            return target
        name = f"{unique_stem(folder, stem, [suffix])}{suffix}"
    raise OSError(errno.EEXIST, "could not find a free name", str(folder / f"{stem}{suffix}"))


def split_name(name: str) -> tuple[str, str]:
    """``("plan.v2", ".xlsx")`` for ``"plan.v2.xlsx"``."""
    p = Path(name)
    return p.stem, p.suffix


def remove_tree(path: Path) -> None:
    shutil.rmtree(path, ignore_errors=True)


# --------------------------------------------------------------------------- jobs


@dataclass
class Job:
    """One claimed input: its job folder and the input's name in it."""

    dir: Path
    name: str
    started: float = field(default_factory=time.monotonic)
    adopted: bool = False  # taken over from a watcher that stopped without finishing it

    @property
    def input(self) -> Path:
        return self.dir / self.name


def new_token() -> str:
    return f"{time.time_ns():x}-{secrets.token_hex(3)}"


def input_name(job_dir: Path) -> str | None:
    """The job's input: the one file whose name does not start with a dot."""
    try:
        names = sorted(n for n in os.listdir(job_dir) if not n.startswith("."))
    except FileNotFoundError:
        return None
    return names[0] if names else None


def write_plan(job_dir: Path, outcome: str, items: list[tuple[str, str, str, str]]) -> None:
    """Record where each file goes: ``(file in job, part key, stem, suffix)``; atomic."""
    tmp = job_dir / f"{PLAN}.tmp"
    tmp.write_text(json.dumps({"outcome": outcome, "items": items}), encoding="utf-8")
    os.replace(tmp, job_dir / PLAN)


def read_plan(job_dir: Path) -> dict | None:
    try:
        return json.loads((job_dir / PLAN).read_text(encoding="utf-8"))
    except FileNotFoundError:
        return None
    except ValueError:  # cannot happen with the atomic write; treat as no plan
        return None


@dataclass
class Settled:
    """What ``settle`` did: the outcome and where each file went."""

    outcome: str  # "converted" | "invalid" | "fault" | "returned" | "empty"
    placed: dict[str, Path]


def settle(job_dir: Path, layout: Layout) -> Settled:
    """Carry out a job folder's plan, or put its input back in the inbox; then remove it.

    Raises OSError when a folder cannot be written; the job folder is left as it was
    (minus whatever was already delivered), so calling again later finishes the job.
    """
    plan = read_plan(job_dir)
    placed: dict[str, Path] = {}
    if plan is None:
        name = input_name(job_dir)
        outcome = "empty"
        if name is not None:
            stem, suffix = split_name(name)
            placed[name] = deliver(job_dir / name, layout.inbox, stem, suffix)
            outcome = "returned"
        remove_tree(job_dir)
        return Settled(outcome, placed)
    for src, key, stem, suffix in plan["items"]:
        path = job_dir / src
        if os.path.lexists(path):
            placed[src] = deliver(path, layout.folder(key), stem, suffix)
    remove_tree(job_dir)
    return Settled(plan["outcome"], placed)


# --------------------------------------------------------------------------- work area


def host_name() -> str:
    return re.sub(r"[^A-Za-z0-9.]", "_", socket.gethostname() or "host")


def pid_alive(pid: int) -> bool:
    """True if a process with this id is running on this machine."""
    if pid <= 0:
        return False
    if os.name == "nt":
        kernel32 = ctypes.windll.kernel32  # type: ignore[attr-defined]
        handle = kernel32.OpenProcess(0x1000, False, pid)  # PROCESS_QUERY_LIMITED_INFORMATION
        if not handle:
            return False
        code = ctypes.c_ulong()
        kernel32.GetExitCodeProcess(handle, ctypes.byref(code))
        kernel32.CloseHandle(handle)
        return code.value == 259  # STILL_ACTIVE
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class WorkArea:
    """One watcher's private working folder ``<work>/<host>-<pid>-<random>/``.

    The name says which machine and process own it; a heartbeat file's time says the
    owner is alive. A folder whose owner is gone (same machine, process not running)
    or silent (heartbeat older than ``stale_after``) is adopted by the next watcher,
    which settles the jobs in it.
    """

    def __init__(self, layout: Layout) -> None:
        self.layout = layout
        self.host = host_name()
        self.pid = os.getpid()
        self.dir = layout.work / f"{self.host}-{self.pid}-{secrets.token_hex(3)}"
        self.dir.mkdir(parents=True)
        self.heartbeat()

    def heartbeat(self) -> float:
        """Touch the heartbeat file; returns its time as the share's clock sees it."""
        beat = self.dir / HEARTBEAT
        if not beat.exists():
            beat.write_bytes(b"")
        os.utime(beat)
        return beat.stat().st_mtime

    def new_job_dir(self) -> Path:
        path = self.dir / new_token()
        path.mkdir()
        return path

    def _abandoned(self, path: Path, now: float, stale_after: float) -> bool:
        try:
            host, pid_text, _ = path.name.rsplit("-", 2)
            pid = int(pid_text)
        except ValueError:
            host, pid = "", -1
        if host == self.host and pid != self.pid and not pid_alive(pid):
            return True
        try:
            beat = (path / HEARTBEAT).stat().st_mtime
        except FileNotFoundError:
            try:
                beat = path.stat().st_mtime
            except FileNotFoundError:
                return False
        return now - beat > stale_after

    def adopt_abandoned(self, stale_after: float) -> list[Path]:
        """Take over the job folders of dead watchers; returns them (now under ``self.dir``)."""
        now = self.heartbeat()
        adopted: list[Path] = []
        for path in sorted(self.layout.work.iterdir()):
            if path == self.dir or not path.is_dir() or not self._abandoned(path, now, stale_after):
                continue
            mine = self.dir / f"{ADOPTED_PREFIX}{path.name}"
            try:
                os.rename(path, mine)  # atomic: one watcher wins
            except FileNotFoundError:
                continue
            for job in sorted(p for p in mine.iterdir() if p.is_dir()):
                if job.name.startswith(ADOPTED_PREFIX):  # adopted earlier by the dead one
                    inner = [p for p in job.iterdir() if p.is_dir()]
                    for sub in inner:
                        target = self.dir / sub.name
                        os.rename(sub, target)
                        adopted.append(target)
                    continue
                target = self.dir / job.name
                os.rename(job, target)
                adopted.append(target)
            remove_tree(mine)
        return adopted

    def close(self) -> bool:
        """Remove the working folder if no job is left in it; True if removed."""
        try:
            if any(p.is_dir() for p in self.dir.iterdir()):
                return False
        except FileNotFoundError:
            return True
        remove_tree(self.dir)
        return True
