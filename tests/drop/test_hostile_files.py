"""The drop folder against files that are not files, names at the limit, and stops.

What is checked against what:
- file types from POSIX ``stat`` (IEEE Std 1003.1, <sys/stat.h>): a named pipe made with
  ``os.mkfifo``, a symbolic link to ``/dev/zero`` (a character device); opening a pipe
  for reading waits for a writer, reading ``/dev/zero`` never ends (POSIX ``open``,
  ``read``), so watchers run in a child process under a hang guard (``DEADLINE``);
- name limits: ``os.pathconf(folder, "PC_NAME_MAX")`` (POSIX ``{NAME_MAX}``, in bytes of
  one path component), names measured with ``os.fsencode``;
- "every dropped file ends in archive/ or failed/, byte for byte": SHA-256 (hashlib);
- modes: a new file gets the requested mode less the umask (POSIX ``open``, ``umask``);
  0666 is what ordinary tools request (common practice), so outputs are ``0o666 & ~umask``;
- signals: POSIX semantics (SIGTERM asks); a process is stopped per ``/proc/<pid>/stat``.
"""

from __future__ import annotations

import os
import signal
import stat
import subprocess
from pathlib import Path

import drop_support as ds
import pytest
from drop_support import (
    CLI_WATCH,
    DEADLINE,
    ITER,
    REPO,
    is_complete_xlsx,
    log_text,
    names,
    schedule_csv,
    sha,
    wait_for,
    work_jobs,
)

from converter.api import ConvertOptions, name_limit
from converter.drop.inbox import BUSY, GONE, open_check
from converter.drop.loop import Watcher

pytestmark = pytest.mark.skipif(os.name != "posix", reason="pipes, devices and modes are POSIX")


def watch_cli(root: Path, *extra: str, umask: int | None = None) -> subprocess.Popen:
    """``pertbook watch ROOT`` in a child process (few iterations, quick polls)."""
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    kw = {} if umask is None else {"umask": umask}
    return subprocess.Popen(
        [*CLI_WATCH, str(root), "--interval", "0.05", "--quiet", "--iterations", str(ITER), *extra],
        cwd=REPO,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        **kw,
    )


def finish(proc: subprocess.Popen) -> tuple[int, str]:
    try:
        _, err = proc.communicate(timeout=DEADLINE)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    return proc.returncode, err.decode()


def inbox_with_odd_files(root: Path) -> Path:
    inbox = root / "inbox"
    inbox.mkdir(parents=True)
    os.mkfifo(inbox / "pipe.csv")
    (inbox / "zero.xlsx").symlink_to("/dev/zero")
    return inbox


# --------------------------------------------------------------------------- not files
def test_open_check_never_opens_what_is_not_a_regular_file(tmp_path):
    os.mkfifo(tmp_path / "pipe.csv")
    (tmp_path / "zero.xlsx").symlink_to("/dev/zero")
    (tmp_path / "plan.csv").write_bytes(schedule_csv(3))
    assert open_check(tmp_path / "pipe.csv") == "a named pipe (FIFO)"
    assert open_check(tmp_path / "zero.xlsx") == "a symbolic link"
    assert open_check(tmp_path / "plan.csv") is None
    assert open_check(tmp_path / "gone.csv") == GONE
    assert BUSY not in (GONE, None)


def test_once_returns_with_a_pipe_in_the_inbox_and_converts_the_rest(tmp_path):
    root = tmp_path / "drop"
    inbox = inbox_with_odd_files(root)
    data = schedule_csv(6)
    (inbox / "good.csv").write_bytes(data)
    code, err = finish(watch_cli(root, "--once", "--workers", "1"))
    assert code == 0, err
    assert sha(root / "archive" / "good.csv") == sha(data)
    assert is_complete_xlsx(root / "outbox" / "good.analysis.xlsx")
    assert stat.S_ISFIFO(os.lstat(inbox / "pipe.csv").st_mode)  # left alone
    assert os.readlink(inbox / "zero.xlsx") == "/dev/zero"
    log = log_text(root)
    assert log.count("pipe.csv: ignored (a named pipe (FIFO), not a regular file") == 1
    assert log.count("zero.xlsx: ignored (a symbolic link, not a regular file") == 1
    assert not work_jobs(root)


def test_sigterm_stops_a_watcher_with_a_pipe_in_the_inbox(tmp_path):
    root = tmp_path / "drop"
    inbox = inbox_with_odd_files(root)
    (inbox / "first.csv").write_bytes(schedule_csv(5))
    proc = watch_cli(root, "--workers", "0")
    try:
        wait_for(
            lambda: (root / "archive" / "first.csv").exists() or proc.poll() is not None,
            "the first file",
        )
        # a second file needs two more looks at the inbox, with the pipe still there
        (inbox / "second.csv").write_bytes(schedule_csv(4))
        wait_for(
            lambda: (root / "archive" / "second.csv").exists() or proc.poll() is not None,
            "the second file",
        )
        assert proc.poll() is None
        proc.send_signal(signal.SIGTERM)
    finally:
        code, err = finish(proc)
    assert code == 0, err
    assert log_text(root).count("pipe.csv: ignored") == 1  # told once, not at every poll


def test_a_pipe_swapped_in_after_the_check_goes_back_unopened(tmp_path, monkeypatch):
    import converter.drop.loop as loop

    root = tmp_path / "drop"
    inbox = root / "inbox"
    inbox.mkdir(parents=True)
    os.mkfifo(inbox / "plan.csv")
    monkeypatch.setattr(loop, "open_check", lambda path: None)  # as if it was a file then
    w = Watcher(root, ConvertOptions(iterations=ITER), workers=0, echo=False, log_path=None)
    w._start()
    try:
        assert w._claim("plan.csv") is None
    finally:
        w._close()
    assert stat.S_ISFIFO(os.lstat(inbox / "plan.csv").st_mode)
    assert not work_jobs(root)


# --------------------------------------------------------------------------- bounded stop
@pytest.mark.parametrize("workers", ["0", "1"])
def test_sigterm_stop_is_bounded_when_the_file_in_hand_never_finishes(tmp_path, workers):
    root, signals = tmp_path / "drop", tmp_path / "signals"
    (root / "inbox").mkdir(parents=True)
    signals.mkdir()
    data = schedule_csv(6)
    (root / "inbox" / "held.csv").write_bytes(data)
    env = dict(os.environ, **{ds.SIGNAL_DIR: str(signals)})
    proc = subprocess.Popen(
        ds.watch_command(root, "convert_when_told", "--workers", workers, "--stop-wait", "0.5"),
        cwd=REPO,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    pids: tuple[int, ...] = ()
    try:
        wait_for(lambda: (signals / "pids").exists() or proc.poll() is not None, "the file")
        assert proc.poll() is None, proc.stderr.read().decode()
        pids = tuple(int(x) for x in (signals / "pids").read_text().split())
        proc.send_signal(signal.SIGTERM)  # once; the converter is never told to go on
        code = proc.wait(timeout=DEADLINE)  # not communicate: the converter's child
    finally:  # (left running by an inline converter) holds the stderr pipe open
        for pid in pids:
            if pid != proc.pid and ds.running(pid):
                os.kill(pid, signal.SIGKILL)
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    err = proc.stderr.read().decode()
    proc.stderr.close()
    assert code == 0, err
    assert "did not finish within 0.5 s" in log_text(root)
    assert sha(root / "inbox" / "held.csv") == sha(data)  # back where it was dropped
    assert names(root / "outbox") == set() and names(root / "archive") == set()
    assert not work_jobs(root)


def test_a_file_waiting_to_be_retried_alone_goes_back_when_stopping(tmp_path):
    # after a worker died, its files wait to be retried one by one; a stop must not wait
    # for a retry that is never started while stopping
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    data = schedule_csv(5)
    (root / "inbox" / "again.csv").write_bytes(data)
    w = Watcher(root, ConvertOptions(iterations=ITER), workers=0, echo=False, log_path=None)
    w._start()
    try:
        job = w._claim("again.csv")
        assert job is not None and names(root / "inbox") == set()
        w._isolate.append(job)
        w.stop()
        assert w._finished() is True
    finally:
        w._close()
    assert sha(root / "inbox" / "again.csv") == sha(data)
    assert w.exit_code() == 0 and not work_jobs(root)


# --------------------------------------------------------------------------- long names
def test_names_at_the_limit_are_always_placed(tmp_path):
    root = tmp_path / "drop"
    inbox = root / "inbox"
    inbox.mkdir(parents=True)
    limit = name_limit(tmp_path)
    valid = "V" * (limit - 6) + ".csv"  # legal: two bytes short of the limit
    broken = "B" * (limit - 6) + ".csv"
    wide = "é" * ((limit - 5) // 2) + ".csv"  # UTF-8: two bytes per letter
    dropped = {valid: schedule_csv(5), broken: schedule_csv(5, bad=True)}
    if os.fsencode("é") == "é".encode():
        dropped[wide] = schedule_csv(4)
    for name, data in dropped.items():
        (inbox / name).write_bytes(data)
    kw = dict(workers=0, echo=False, interval=0.05, once=True, once_wait=30.0)
    assert Watcher(root, ConvertOptions(iterations=ITER), **kw).run() == 2
    (inbox / valid).write_bytes(dropped[valid])  # again: every name now needs a time stamp
    assert Watcher(root, ConvertOptions(iterations=ITER), **kw).run() == 0

    archive, failed, outbox = root / "archive", root / "failed", root / "outbox"
    assert names(inbox) == set()
    for part in (archive, failed, outbox):
        for name in names(part):
            assert len(os.fsencode(name)) <= limit, name
    assert broken in names(failed)  # the input keeps the name it was dropped with
    reports = sorted(n for n in names(failed) if n != broken)
    assert len(reports) == 2 and all(n.startswith("B" * 100) and "~" in n for n in reports)
    copies = [sha(archive / n) for n in names(archive)]
    assert copies.count(sha(dropped[valid])) == 2 and valid in names(archive)
    results = [n for n in names(outbox) if n.startswith("V" * 100)]
    assert len(results) == 2 and all(is_complete_xlsx(outbox / n) for n in results)
    if wide in dropped:
        assert sha(archive / wide) == sha(dropped[wide])
        assert any(n.startswith("é" * 50) for n in names(outbox))
    assert "too long" not in log_text(root) and not work_jobs(root)


# --------------------------------------------------------------------------- modes
@pytest.mark.parametrize("umask", [0o022, 0o002], ids=["umask022", "umask002"])
def test_drop_folder_outputs_get_the_ordinary_mode(tmp_path, umask):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    (root / "inbox" / "good.csv").write_bytes(schedule_csv(5))
    (root / "inbox" / "bad.csv").write_bytes(schedule_csv(5, bad=True))
    code, err = finish(watch_cli(root, "--once", "--workers", "1", "--json", umask=umask))
    assert code == 2, err
    made = [root / "outbox" / n for n in ("good.analysis.xlsx", "good.analysis.json")]
    made += [
        root / "failed" / n for n in ("bad.problems.txt", "bad.problems.xlsx", "bad.problems.json")
    ]
    for path in made:
        assert stat.S_IMODE(path.stat().st_mode) == 0o666 & ~umask, path.name
