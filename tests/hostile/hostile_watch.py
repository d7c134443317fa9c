"""The drop-folder part of the corpus: a few cases dropped into one inbox, one ``watch
--once`` run, and what must hold afterwards (README, "Office set-up (drop folder)"):

- every dropped regular file ends in exactly one place, ``archive/`` when it converts and
  ``failed/`` when it does not, byte for byte (SHA-256, hashlib), whatever its name;
- a converted file has its workbook in ``outbox/``; a failed one has none, but its
  ``.problems.txt`` (naming the case's places) and ``.problems.xlsx`` in ``failed/``;
- anything that is not a regular file (a pipe, a link to a device, a folder) stays where
  it is, untouched, and the watcher returns (``--once``) without waiting on it;
- results and reports get ``0o666 & ~umask`` (POSIX ``open`` and ``umask``);
- no input text becomes a formula in a workbook written (``hostile_run``);
- no traceback, and the watcher with its worker processes stays under the memory limit.
"""

from __future__ import annotations

import hashlib
import os
import stat
from dataclasses import dataclass, field
from pathlib import Path

from hostile_corpus import Case
from hostile_run import Run, formula_problems, run_measured


@dataclass
class WatchSet:
    root: Path
    cases: list[Case]
    files: dict[str, Path]  # case name -> the file in the inbox
    before: dict[str, str | None] = field(default_factory=dict)
    run: Run | None = None


def _digest(path: Path) -> str | None:
    if path.is_symlink() or not path.is_file():
        return None
    return hashlib.sha256(path.read_bytes()).hexdigest()


def prepare(root: Path, cases: list[Case]) -> WatchSet:
    """Each case built straight into ``root/inbox``, its file name prefixed by the case's
    name (a long name is kept as it is), so that no stem is a prefix of another's."""
    inbox = root / "inbox"
    inbox.mkdir(parents=True)
    files = {}
    for case in cases:
        name = case.file if len(case.file) > 100 else f"{case.name}-{case.file}"
        files[case.name] = inbox / name
        case.build(files[case.name])
    ws = WatchSet(root, cases, files)
    ws.before = {name: _digest(path) for name, path in files.items()}
    return ws


def run(ws: WatchSet, umask: int) -> WatchSet:
    ws.run = run_measured(
        [
            "watch",
            str(ws.root),
            "--once",
            "--interval",
            "0.1",
            "--workers",
            "1",
            "--once-wait",
            "10",
            "--no-simulation",
            "--json",
            "--quiet",
        ],
        ws.root.parent,
        umask=umask,
        tag="watch",
    )
    return ws


def _placed(folder: Path, path: Path, digest: str) -> list[Path]:
    """Files in ``folder`` named like ``path`` (its stem starts theirs) with its bytes."""
    stem = path.stem[:100]
    return [
        p
        for p in folder.iterdir()
        if p.name.startswith(stem) and p.suffix == path.suffix and _digest(p) == digest
    ]


def _results_of(folder: Path, path: Path, suffix: str) -> list[Path]:
    stem = path.stem[:100]
    return [p for p in folder.iterdir() if p.name.startswith(stem) and p.name.endswith(suffix)]


def verify(ws: WatchSet, umask: int, peak_mb: float) -> None:
    """Every assertion of the module docstring; fails with the first that does not hold."""
    run_ = ws.run
    assert run_ is not None and not run_.hung, "the watcher did not return"
    log = (ws.root / "pertbook.log").read_text("utf-8", "replace")
    assert "Traceback" not in run_.stderr + log, (run_.stderr + log)[-3000:]
    assert run_.peak_mb < peak_mb, run_.peak_mb
    regular = [c for c in ws.cases if c.regular]
    assert run_.code == max(c.exit for c in regular), (run_.code, run_.stderr[-2000:])
    folders = {k: ws.root / k for k in ("inbox", "outbox", "archive", "failed")}
    mode = 0o666 & ~umask
    for case in ws.cases:
        path = ws.files[case.name]
        if not case.regular:
            assert os.path.lexists(path), f"{case.name}: moved although not a regular file"
            if path.is_symlink() or not path.is_dir():  # folders are passed over silently
                assert path.name in log, f"{case.name}: not noted in the log"
            continue
        assert not os.path.lexists(path), f"{case.name}: left in the inbox"
        digest = ws.before[case.name]
        home = "archive" if case.exit == 0 else "failed"
        other = "failed" if case.exit == 0 else "archive"
        assert len(_placed(folders[home], path, digest)) == 1, f"{case.name}: not in {home}/"
        assert not _placed(folders[other], path, digest), f"{case.name}: also in {other}/"
        results = _results_of(folders["outbox"], path, ".analysis.xlsx")
        assert len(results) == (1 if case.exit == 0 else 0), (case.name, results)
        reports = []
        if case.exit == 2:
            text = _results_of(folders["failed"], path, ".problems.txt")
            reports = _results_of(folders["failed"], path, ".problems.xlsx")
            assert len(text) == 1 and len(reports) == 1, case.name
            written = text[0].read_text("utf-8")
            for place in case.places:
                assert place in written, (case.name, place, written)
        for book in results + reports:
            assert formula_problems(book, case.texts) == [], (case.name, book)
    for folder in ("outbox", "failed"):
        for path in folders[folder].iterdir():
            if ".analysis." in path.name or ".problems." in path.name:
                assert stat.S_IMODE(path.stat().st_mode) == mode, path
