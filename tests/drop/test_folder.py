"""The drop folder on disk (``converter.drop.folder``): names, moves, job folders.

Lock and temporary file names are common practice (Microsoft Office ``~$`` owner files,
LibreOffice ``.~lock``, browser ``.crdownload``/``.part`` downloads); a no-replace move
must leave both files as they were (the README's "nothing is ever overwritten"); link
counts come from ``os.stat`` (POSIX ``st_nlink``).
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest
from drop_support import names

from converter.drop import folder as df


def test_classify_names():
    # common practice: office owner/lock files, partial downloads, hidden files
    for name in (
        "~$plan.xlsx",
        ".~lock.plan.ods#",
        "plan.xlsx.tmp",
        "a.CRDOWNLOAD",
        "a.csv.part",
        ".plan.csv",
    ):
        assert df.classify(name) == df.SKIP, name
    for name in ("plan.xlsx", "PLAN.XLSM", "old.xls", "lo.ods", "list.csv"):
        assert df.classify(name) == df.TAKE, name
    for name in ("notes.txt", "plan.docx", "plan"):
        assert df.classify(name) == df.OTHER, name
    assert df.classify("plan.xlsx", hidden=True) == df.SKIP


@pytest.mark.parametrize("native", [True, False])
def test_move_noreplace_never_overwrites(tmp_path, monkeypatch, native):
    if not native:  # the hard-link path used on shares without renameat2
        monkeypatch.setattr(df, "_rename_noreplace_linux", lambda s, d: None)
    a, b, c = tmp_path / "a", tmp_path / "b", tmp_path / "c"
    a.write_bytes(b"A")
    b.write_bytes(b"B")
    assert df.move_noreplace(a, b) is False
    assert a.read_bytes() == b"A" and b.read_bytes() == b"B"
    assert df.move_noreplace(a, c) is True
    assert not a.exists() and c.read_bytes() == b"A"
    assert os.stat(c).st_nlink == 1


def test_unique_stem_counts_up(tmp_path):
    assert df.unique_stem(tmp_path, "plan", [".xlsx"]) == "plan"
    (tmp_path / "plan.xlsx").write_bytes(b"")
    first = df.unique_stem(tmp_path, "plan", [".xlsx"])
    assert first.startswith("plan-") and first != "plan"
    (tmp_path / f"{first}.xlsx").write_bytes(b"")
    second = df.unique_stem(tmp_path, "plan", [".xlsx"])
    assert second not in ("plan", first) and not (tmp_path / f"{second}.xlsx").exists()
    # a free .xlsx name is not enough when the .json partner name is taken
    (tmp_path / "other.json").write_bytes(b"")
    assert df.unique_stem(tmp_path, "other", [".xlsx", ".json"]) != "other"


def test_settle_rolls_back_without_plan_and_forward_with_one(tmp_path):
    layout = df.Layout.under(tmp_path)
    for _, path in layout.shared():
        path.mkdir()
    job = tmp_path / "job1"
    job.mkdir()
    (job / "a.csv").write_bytes(b"input")
    (job / df.RESULT_XLSX).write_bytes(b"half")  # no plan yet: the result is discarded
    assert df.settle(job, layout).outcome == "returned"
    assert (layout.inbox / "a.csv").read_bytes() == b"input"
    assert names(layout.outbox) == set() and not job.exists()

    # a crash after the result was delivered but before the input was archived
    job.mkdir()
    (job / "b.csv").write_bytes(b"input b")
    (job / df.RESULT_XLSX).write_bytes(b"result b")
    df.write_plan(
        job,
        "converted",
        [[df.RESULT_XLSX, "outbox", "b", ".analysis.xlsx"], ["b.csv", "archive", "b", ".csv"]],
    )
    os.rename(job / df.RESULT_XLSX, layout.outbox / "b.analysis.xlsx")
    # ...and one between the hard link and the unlink of the input's move
    os.link(job / "b.csv", layout.archive / "b.csv")
    settled = df.settle(job, layout)
    assert settled.outcome == "converted"
    assert names(layout.outbox) == {"b.analysis.xlsx"}
    assert names(layout.archive) == {"b.csv"}
    assert os.stat(layout.archive / "b.csv").st_nlink == 1
    assert not job.exists()


def test_dead_watcher_is_adopted_live_one_is_not(tmp_path):
    layout = df.Layout.under(tmp_path)
    for _, path in layout.shared():
        path.mkdir()
    layout.work.mkdir()
    # a pid that is certainly not running: a child that has exited and been reaped
    gone = subprocess.Popen([sys.executable, "-c", "pass"])
    gone.wait()
    dead = layout.work / f"{df.host_name()}-{gone.pid}-abcdef"
    (dead / "tok1").mkdir(parents=True)
    (dead / "tok1" / "x.csv").write_bytes(b"x")
    alive = layout.work / f"{df.host_name()}-{os.getppid()}-abcdef"
    (alive / "tok2").mkdir(parents=True)
    (alive / "tok2" / "y.csv").write_bytes(b"y")
    (alive / df.HEARTBEAT).write_bytes(b"")
    mine = df.WorkArea(layout)
    adopted = mine.adopt_abandoned(stale_after=900)
    assert [p.name for p in adopted] == ["tok1"]
    assert not dead.exists() and (alive / "tok2" / "y.csv").exists()
    assert df.settle(adopted[0], layout).outcome == "returned"
    assert (layout.inbox / "x.csv").read_bytes() == b"x"


def test_free_stem_asks_only_the_given_folder_and_counts_up():
    taken = {"plan.xlsx", "plan-20250314-101502.xlsx", "plan-20250314-101502-2.xlsx"}
    assert (
        df.free_stem("plan", [".xlsx"], taken.__contains__, "20250314-101502")
        == "plan-20250314-101502-3"
    )
    assert df.free_stem("plan", [".csv"], taken.__contains__, "20250314-101502") == "plan"
