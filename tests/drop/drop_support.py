"""Shared pieces of the drop-folder tests: invented inputs, checks, injected converters.

The injected converters are module-level functions so pool workers can load them. A
watcher with one of them can also run in a process of its own (``watch_command``), for
the tests that send it signals.
"""

from __future__ import annotations

import errno
import hashlib
import os
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import openpyxl

from converter import api
from converter.api import ConvertOptions

HERE = Path(__file__).resolve().parent
REPO = HERE.parents[1]
ITER = 200  # few Monte Carlo iterations: the lifecycle, not the statistics, is under test
HEADER = "ID,Description,Predecessors,Optimistic,Most likely,Pessimistic"
DEADLINE = 180.0  # a hang guard only; no test passes or fails on speed
CLI_WATCH = [sys.executable, "-m", "converter", "watch"]
#: Where the blocking converter leaves its marks and waits for the test's go-ahead.
SIGNAL_DIR = "PERTBOOK_TEST_SIGNAL_DIR"


# --------------------------------------------------------------------------- inputs


def schedule_csv(n: int = 12, tag: str = "", bad: bool = False) -> bytes:
    """An invented schedule: a chain with extra links back three places."""
    rows = [HEADER]
    for i in range(1, n + 1):
        preds = [f"A{j}" for j in (i - 1, i - 3) if j >= 1]
        if bad and i == 3:
            preds.append("Q7")  # not an activity: the validator must report it
        o = 1 + (i * 7) % 5
        m = o + 1 + (i * 3) % 4
        p = m + 2 + (i * 5) % 6
        rows.append(f"A{i},Task {i} {tag},{';'.join(preds)},{o},{m},{p}")
    return ("\n".join(rows) + "\n").encode()


def schedule_xlsx(path: Path, n: int = 8) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Activities"
    sheet.append(HEADER.split(","))
    for i in range(1, n + 1):
        sheet.append([f"X{i}", f"Step {i}", f"X{i - 1}" if i > 1 else None, 2, 3, 5 + i])
    book.save(path)


# --------------------------------------------------------------------------- checks


def sha(data: bytes | Path) -> str:
    if isinstance(data, Path):
        data = data.read_bytes()
    return hashlib.sha256(data).hexdigest()


def is_complete_xlsx(path: Path) -> bool:
    try:
        with zipfile.ZipFile(path) as z:
            if z.testzip() is not None:
                return False
        openpyxl.load_workbook(path, read_only=True).close()
    except Exception:  # noqa: BLE001 - any failure to open means not a whole workbook
        return False
    return True


def names(folder: Path) -> set[str]:
    return {p.name for p in folder.iterdir()} if folder.exists() else set()


def work_jobs(root: Path) -> list[Path]:
    work = root / ".pertbook-work"
    if not work.exists():
        return []
    return [j for d in work.iterdir() if d.is_dir() for j in d.iterdir() if j.is_dir()]


def wait_for(cond, what: str, deadline: float = DEADLINE) -> None:
    end = time.monotonic() + deadline
    while not cond():
        if time.monotonic() > end:
            raise AssertionError(f"gave up waiting for {what}")
        time.sleep(0.02)


def log_text(root: Path) -> str:
    path = root / "pertbook.log"
    return path.read_text(encoding="utf-8") if path.exists() else ""


def running(pid: int) -> bool:
    """True while ``pid`` runs; a zombie (dead, not yet reaped) counts as stopped.

    The process state is the third field of ``/proc/<pid>/stat`` (proc(5), Linux);
    elsewhere signal 0 says whether the id exists.
    """
    stat = Path(f"/proc/{pid}/stat")
    if Path("/proc/self/stat").exists():
        try:
            text = stat.read_text()
        except OSError:
            return False
        return text.rsplit(")", 1)[1].split()[0] not in ("Z", "X")
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    return True


# --------------------------------------------------------------------------- injected converters


def convert_with_faults(path, options=None, **kw):
    """A converter with a bug for files named boom*, and a hard crash for crash*."""
    name = Path(path).name
    if name.startswith("boom"):
        raise RuntimeError("injected fault: the analysis fell over")
    if name.startswith("crash"):
        os._exit(3)  # the worker process dies without a word
    return api.convert(path, options, **kw)


DISK_FULL_LEFT = {"n": 0}


def convert_disk_full_twice(path, options=None, **kw):
    """The first two writes fail as on a full disk."""
    if DISK_FULL_LEFT["n"] > 0:
        DISK_FULL_LEFT["n"] -= 1
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(kw.get("workbook_path")))
    return api.convert(path, options, **kw)


BREAK_OUTBOX: dict[str, Path | None] = {"outbox": None}


def convert_then_break_outbox(path, options=None, **kw):
    """Convert, then replace the outbox by a plain file (as if the share went read-only)."""
    result = api.convert(path, options, **kw)
    outbox = BREAK_OUTBOX["outbox"]
    if outbox is not None and outbox.is_dir():
        outbox.rmdir()
        outbox.write_text("not a folder")
    return result


def convert_when_told(path, options=None, **kw):
    """For inputs named held*: start a child process (as a converter may), write
    ``<pid> <child pid>`` to ``$PERTBOOK_TEST_SIGNAL_DIR/pids``, wait there for a file
    ``go``, then convert. Other inputs are converted at once."""
    if not Path(path).name.startswith("held"):
        return api.convert(path, options, **kw)
    signals = Path(os.environ[SIGNAL_DIR])
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(600)"])
    tmp = signals / "pids.tmp"
    tmp.write_text(f"{os.getpid()} {child.pid}")
    os.replace(tmp, signals / "pids")
    while not (signals / "go").exists():
        time.sleep(0.02)
    child.kill()
    child.wait()
    return api.convert(path, options, **kw)


# --------------------------------------------------------------------------- a watcher process


def watch_command(root: Path, converter: str, *extra: str) -> list[str]:
    """Command line of a watcher process converting with ``converter`` (a name here)."""
    code = (
        "import sys; sys.path.insert(0, sys.argv[1]); import drop_support; "
        "sys.exit(drop_support.main(sys.argv[2:]))"
    )
    return [
        sys.executable,
        "-c",
        code,
        str(HERE),
        converter,
        str(root),
        "--quiet",
        "--interval",
        "0.05",
        *extra,
    ]


def main(argv: list[str]) -> int:
    """``main(["convert_when_told", FOLDER, --watch-options...])``: run a watcher."""
    import argparse

    from converter.drop.command import add_watch_arguments, watcher_from_args

    parser = argparse.ArgumentParser()
    parser.add_argument("converter")
    add_watch_arguments(parser)
    args = parser.parse_args(argv)
    convert_fn = globals()[args.converter]
    return watcher_from_args(args, ConvertOptions(iterations=ITER), convert_fn=convert_fn).run()
