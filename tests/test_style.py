"""The tree is ``ruff check`` and ``ruff format`` clean (ruff is in the test extras).

CI runs the README's test command, so these two checks run there too.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _ruff(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "ruff", *args, "converter", "tests"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )


def test_ruff_check_is_clean():
    done = _ruff("check", "--no-cache")
    assert done.returncode == 0, done.stdout + done.stderr


def test_ruff_format_is_clean():
    done = _ruff("format", "--check", "--no-cache")
    assert done.returncode == 0, done.stdout + done.stderr
