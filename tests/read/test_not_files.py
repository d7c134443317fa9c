"""Only regular files are read: a pipe, a device or a folder is refused before it is opened.

A FIFO named like a schedule used to block ``pertbook check`` forever, and a link to
/dev/zero to be hashed forever (issue 9). Each case runs in a child with a time-out, so a
regression fails here instead of hanging the test run (the time-out is a guard, not a
measurement: the checks are on the problem reported).
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
from pathlib import Path

from helpers import REPO, good_xlsx, run_cli

CHILD = """
import json, sys
from converter.read.sheets import read_input
r = read_input(sys.argv[1])
print(json.dumps([[p.code, p.message] for p in r.problems] + [r.sha256]))
"""


def read_guarded(path: Path, child: str = CHILD) -> list:
    proc = subprocess.run(
        [sys.executable, "-c", child, str(path)],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
        env=dict(os.environ, PYTHONPATH=str(REPO)),
    )
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def test_fifo_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "plan.csv"
    os.mkfifo(fifo)
    (code, message), digest = read_guarded(fifo)
    assert code == "not-a-file" and "named pipe (FIFO)" in message and digest is None


def test_link_to_a_device_is_refused_without_reading_it(tmp_path):
    link = tmp_path / "plan.xlsx"
    link.symlink_to("/dev/zero")
    (code, message), digest = read_guarded(link)
    assert code == "not-a-file" and "a device (through a link)" in message and digest is None


def test_fifo_swapped_in_after_the_check_does_not_block(tmp_path):
    # the race: the path passed os.stat as a regular file, then became a FIFO; the opening
    # (O_NONBLOCK) and the fstat of the open descriptor catch it
    fifo = tmp_path / "plan.csv"
    os.mkfifo(fifo)
    child = "import sys, converter.read.source as s\ns.check_regular = lambda path: None\n" + CHILD
    (code, message), _ = read_guarded(fifo, child)
    assert code == "not-a-file" and "named pipe (FIFO)" in message


def test_broken_link_is_a_missing_file(tmp_path):
    link = tmp_path / "plan.xlsx"
    link.symlink_to(tmp_path / "gone.xlsx")
    (code, message), _ = read_guarded(link)
    assert code == "file-missing" and "does not exist" in message


def test_link_to_a_regular_file_is_read(tmp_path):
    target = good_xlsx(tmp_path / "real.xlsx")
    link = tmp_path / "plan.xlsx"
    link.symlink_to(target)
    assert read_guarded(link) == [__import__("hashlib").sha256(target.read_bytes()).hexdigest()]


def test_check_refuses_a_fifo_with_exit_2(tmp_path):
    fifo = tmp_path / "plan.xlsx"
    os.mkfifo(fifo)
    proc = run_cli("check", fifo)
    assert proc.returncode == 2 and "named pipe" in proc.stderr
    assert "Traceback" not in proc.stderr
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)  # left alone


def test_convert_refuses_a_link_loop_with_exit_2(tmp_path):
    # A link to itself: os.open fails with ELOOP ("Too many levels of symbolic links",
    # POSIX); the run's output naming must not stumble on it before the reading does.
    loop = tmp_path / "plan.csv"
    loop.symlink_to("plan.csv")
    proc = run_cli("convert", loop, "--outdir", tmp_path / "out")
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr + proc.stdout
    assert "symbolic links" in proc.stderr
    assert loop.is_symlink()
