"""The drop folder (``pertbook watch``) on real temporary folders.

What is checked against what:
- "byte-identical": SHA-256 of what was dropped against what ends up archived/failed
  (hashlib), so a moved file is the dropped file and not a copy that was re-written;
- a result "is a workbook": it opens with openpyxl and passes zipfile's CRC test (a
  half-written .xlsx fails both);
- the problems report lists every problem that ``converter.api.check`` finds on the
  same bytes, each with its sheet!cell and its fix (or message);
- lock/temporary file names: common practice (Microsoft Office ``~$`` owner files,
  LibreOffice ``.~lock``, browser ``.crdownload``/``.part`` downloads).

Tests run the real converter with few simulation iterations; faults are injected by
wrapping it (module-level functions, so pool workers can load them).
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import signal
import subprocess
import sys
import threading
import time
import zipfile
from pathlib import Path

import openpyxl
import pytest

from converter import api
from converter.api import ConvertOptions
from converter.drop import folder as df
from converter.drop.watcher import Watcher, add_watch_arguments, main, options_from_args
from converter.model import Problem
from converter.write.problems import problems_text, write_problems_xlsx

REPO = Path(__file__).resolve().parents[2]
ITER = 200  # few Monte Carlo iterations: the lifecycle, not the statistics, is under test
HEADER = "ID,Description,Predecessors,Optimistic,Most likely,Pessimistic"
WATCH_CMD = [sys.executable, "-c",
             "import sys; from converter.drop.watcher import main; sys.exit(main(sys.argv[1:]))"]
DEADLINE = 180.0  # a hang guard only; no test passes or fails on speed


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


def watcher(root: Path, **kw) -> Watcher:
    kw.setdefault("interval", 0.05)
    kw.setdefault("workers", 0)
    kw.setdefault("echo", False)
    kw.setdefault("once_wait", 30.0)
    return Watcher(root, ConvertOptions(iterations=ITER), **kw)


def wait_for(cond, what: str, deadline: float = DEADLINE) -> None:
    end = time.monotonic() + deadline
    while not cond():
        if time.monotonic() > end:
            raise AssertionError(f"gave up waiting for {what}")
        time.sleep(0.02)


def log_text(root: Path) -> str:
    path = root / "pertbook.log"
    return path.read_text(encoding="utf-8") if path.exists() else ""


# --------------------------------------------------------------------------- injected converters



def convert_with_faults(path, options=None, **kw):
    """A converter with a bug for files named boom*, and a hard crash for crash*."""
    name = Path(path).name
    if name.startswith("boom"):
        raise RuntimeError("injected fault: the analysis fell over")
    if name.startswith("crash"):
        os._exit(3)  # the worker process dies without a word
    return api.convert(path, options, **kw)


_DISK_FULL_LEFT = {"n": 0}


def convert_disk_full_twice(path, options=None, **kw):
    """The first two writes fail as on a full disk."""
    if _DISK_FULL_LEFT["n"] > 0:
        _DISK_FULL_LEFT["n"] -= 1
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(kw.get("workbook_path")))
    return api.convert(path, options, **kw)


_BREAK_OUTBOX: dict[str, Path | None] = {"outbox": None}


def convert_then_break_outbox(path, options=None, **kw):
    """Convert, then replace the outbox by a plain file (as if the share went read-only)."""
    result = api.convert(path, options, **kw)
    outbox = _BREAK_OUTBOX["outbox"]
    if outbox is not None and outbox.is_dir():
        outbox.rmdir()
        outbox.write_text("not a folder")
    return result


# --------------------------------------------------------------------------- lifecycle


def test_lifecycle_valid_invalid_skipped_and_duplicates(tmp_path):
    root = tmp_path / "drop"
    inbox = root / "inbox"
    for part in ("inbox", "outbox", "archive"):
        (root / part).mkdir(parents=True)
    dropped = {
        "plan.csv": schedule_csv(10, "plan"),
        "broken.csv": schedule_csv(6, "broken", bad=True),
        "twin.csv": schedule_csv(5, "twin"),
    }
    for name, data in dropped.items():
        (inbox / name).write_bytes(data)
    schedule_xlsx(inbox / "twin.xlsx")
    dropped["twin.xlsx"] = (inbox / "twin.xlsx").read_bytes()
    skipped = {  # office lock/temp files, hidden files and other types stay where they are
        "~$plan.xlsx": b"owner", ".~lock.plan.xlsx#": b"lock", "plan.xlsx.tmp": b"t",
        "big.csv.crdownload": b"d", "big.csv.part": b"p", ".hidden.csv": HEADER.encode(),
        "notes.txt": b"not a schedule", "report.PDF": b"%PDF",
    }
    for name, data in skipped.items():
        (inbox / name).write_bytes(data)
    (inbox / "sub").mkdir()
    (inbox / "sub" / "inner.csv").write_bytes(schedule_csv(3))
    # an earlier result and an earlier input of the same names must survive untouched
    old_result = b"an earlier result"
    (root / "outbox" / "plan.analysis.xlsx").write_bytes(old_result)
    old_input = b"an earlier plan.csv"
    (root / "archive" / "plan.csv").write_bytes(old_input)

    code = watcher(root, once=True).run()

    assert code == 2  # an input was invalid
    assert names(inbox) == set(skipped) | {"sub"}
    for name, data in skipped.items():
        assert (inbox / name).read_bytes() == data
    assert (inbox / "sub" / "inner.csv").exists()

    archive, outbox, failed = root / "archive", root / "outbox", root / "failed"
    assert (outbox / "plan.analysis.xlsx").read_bytes() == old_result
    assert (archive / "plan.csv").read_bytes() == old_input
    # each dropped file is in exactly one place, byte for byte
    everywhere = [p for part in (inbox, archive, failed, outbox) for p in part.iterdir()
                  if p.is_file()]
    for name, data in dropped.items():
        copies = [p for p in everywhere if sha(p) == sha(data)]
        assert len(copies) == 1, (name, copies)
        where = copies[0]
        assert where.parent == (failed if name == "broken.csv" else archive)
        assert where.suffix == Path(name).suffix
    new_plan = [n for n in names(archive) if n.startswith("plan-")]
    assert len(new_plan) == 1 and new_plan[0].endswith(".csv")
    results = sorted(n for n in names(outbox) if n != "plan.analysis.xlsx")
    assert len(results) == 3  # plan (renamed), twin.csv, twin.xlsx
    assert "twin.analysis.xlsx" in results
    assert sum(n.startswith("twin-") for n in results) == 1
    assert sum(n.startswith("plan-") for n in results) == 1
    for n in results:
        assert n.endswith(".analysis.xlsx") and is_complete_xlsx(outbox / n)

    # the rejected input carries its problems, each with place and fix
    assert names(failed) == {"broken.csv", "broken.problems.txt", "broken.problems.xlsx"}
    tmp_copy = tmp_path / "broken.csv"
    tmp_copy.write_bytes(dropped["broken.csv"])
    expected = api.check(tmp_copy, ConvertOptions(iterations=ITER)).problems
    assert any(p.severity == "error" for p in expected)
    text = (failed / "broken.problems.txt").read_text(encoding="utf-8")
    assert "Q7" in text
    for p in expected:
        assert p.message in text
        if p.where:
            assert p.where in text
        assert (p.fix or p.message) in text
    rows = list(openpyxl.load_workbook(failed / "broken.problems.xlsx").active.values)
    q7 = [r for r in rows if any("Q7" in str(v) for v in r if v)]
    assert q7, rows

    log = log_text(root)
    assert "broken.csv\tinvalid" in log and "plan.csv\tconverted" in log
    assert log.count("notes.txt: ignored") == 1
    assert not work_jobs(root)


def test_once_exit_code_zero_when_all_converted(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    for i in range(3):
        (root / "inbox" / f"ok{i}.csv").write_bytes(schedule_csv(4 + i))
    assert watcher(root, once=True).run() == 0
    assert names(root / "outbox") == {f"ok{i}.analysis.xlsx" for i in range(3)}
    assert names(root / "failed") == set()


def test_main_once_exit_codes_and_options(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    (root / "inbox" / "a.csv").write_bytes(schedule_csv(5))
    args = [str(root), "--once", "--interval", "0.05", "--workers", "0", "--quiet",
            "--iterations", str(ITER), "--json"]
    assert main(args) == 0
    assert names(root / "outbox") == {"a.analysis.xlsx", "a.analysis.json"}
    # the JSON names where the input now is, not the watcher's working folder
    data = json.loads((root / "outbox" / "a.analysis.json").read_text(encoding="utf-8"))
    assert data["input"]["file"] == "archive/a.csv"
    (root / "inbox" / "b.csv").write_bytes(schedule_csv(5, bad=True))
    assert main(args) == 2
    assert names(root / "failed") == {"b.csv", "b.problems.txt", "b.problems.xlsx",
                                      "b.problems.json"}


def test_file_still_being_written_is_taken_only_when_complete(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    data = schedule_csv(60, "growing")
    target = root / "inbox" / "growing.csv"
    step = len(data) // 20 + 1
    target.write_bytes(data[:step])
    started = threading.Event()

    def grow() -> None:  # another writer appending in steps shorter than the poll interval
        started.wait()
        with open(target, "ab") as fh:
            for i in range(step, len(data), step):
                time.sleep(0.05)
                fh.write(data[i:i + step])
                fh.flush()

    writer = threading.Thread(target=grow)
    writer.start()
    w = watcher(root, once=True, interval=0.5)
    started.set()
    code = w.run()
    writer.join()
    assert code == 0
    archived = root / "archive" / "growing.csv"
    assert sha(archived) == sha(data)
    assert is_complete_xlsx(root / "outbox" / "growing.analysis.xlsx")


# --------------------------------------------------------------------------- faults


def test_injected_fault_and_crash_go_to_failed_and_the_next_file_converts(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    files = {"boom.csv": schedule_csv(5), "crash.csv": schedule_csv(6), "fine.csv":
             schedule_csv(7), "fine2.csv": schedule_csv(8)}
    for name, data in files.items():
        (root / "inbox" / name).write_bytes(data)
    code = watcher(root, once=True, workers=2, convert_fn=convert_with_faults).run()
    assert code == 1  # faults are the tool's own failures
    failed = root / "failed"
    assert names(failed) == {f"{s}{x}" for s in ("boom", "crash")
                             for x in (".csv", ".problems.txt", ".problems.xlsx")}
    assert sha(failed / "boom.csv") == sha(files["boom.csv"])
    assert sha(failed / "crash.csv") == sha(files["crash.csv"])
    boom = (failed / "boom.problems.txt").read_text(encoding="utf-8")
    assert "RuntimeError: injected fault" in boom and "Traceback" in boom
    assert "stopped abruptly" in (failed / "crash.problems.txt").read_text(encoding="utf-8")
    sheets = openpyxl.load_workbook(failed / "boom.problems.xlsx").sheetnames
    assert sheets == ["Problems", "Fault details"]
    assert names(root / "outbox") == {"fine.analysis.xlsx", "fine2.analysis.xlsx"}
    assert sha(root / "archive" / "fine.csv") == sha(files["fine.csv"])


def test_disk_full_while_converting_waits_and_retries(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    data = schedule_csv(6)
    (root / "inbox" / "full.csv").write_bytes(data)
    _DISK_FULL_LEFT["n"] = 2
    w = watcher(root, once=True, convert_fn=convert_disk_full_twice, max_backoff=0.2)
    assert w.run() == 0
    assert _DISK_FULL_LEFT["n"] == 0
    log = log_text(root)
    assert log.count("the disk is full") == 2
    assert log.count("full.csv\treturned to the inbox") == 2
    assert sha(root / "archive" / "full.csv") == sha(data)
    assert names(root / "outbox") == {"full.analysis.xlsx"}


def _run_in_thread(w: Watcher) -> tuple[threading.Thread, dict]:
    out: dict = {}
    thread = threading.Thread(target=lambda: out.setdefault("code", w.run()))
    thread.start()
    return thread, out


def test_unwritable_outbox_input_waits_then_converts(tmp_path):
    root = tmp_path / "drop"
    for part in ("inbox", "archive", "failed"):
        (root / part).mkdir(parents=True)
    outbox = root / "outbox"
    outbox.write_text("a plain file where the outbox should be")
    data = schedule_csv(6)
    (root / "inbox" / "wait.csv").write_bytes(data)
    w = watcher(root, max_backoff=0.2)
    thread, out = _run_in_thread(w)
    try:
        wait_for(lambda: log_text(root).count("the outbox is not a folder") >= 3, "3 retries")
        assert (root / "inbox" / "wait.csv").read_bytes() == data  # still where it was
        outbox.unlink()
        outbox.mkdir()
        wait_for(lambda: (root / "archive" / "wait.csv").exists(), "the conversion")
    finally:
        w.stop()
        thread.join()
    assert out["code"] == 0
    assert names(outbox) == {"wait.analysis.xlsx"}
    assert is_complete_xlsx(outbox / "wait.analysis.xlsx")
    assert "usable again" in log_text(root)


def test_outbox_lost_after_converting_result_is_placed_when_back(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    outbox = root / "outbox"
    data = schedule_csv(6)
    (root / "inbox" / "late.csv").write_bytes(data)
    _BREAK_OUTBOX["outbox"] = outbox
    w = watcher(root, convert_fn=convert_then_break_outbox, max_backoff=0.2)
    thread, out = _run_in_thread(w)
    try:
        wait_for(lambda: "cannot be placed yet" in log_text(root)
                 and log_text(root).count("the outbox is not a folder") >= 2, "2 retries")
        assert not (root / "archive" / "late.csv").exists()
        _BREAK_OUTBOX["outbox"] = None
        outbox.unlink()
        outbox.mkdir()
        wait_for(lambda: (root / "archive" / "late.csv").exists(), "the result to be placed")
    finally:
        _BREAK_OUTBOX["outbox"] = None
        w.stop()
        thread.join()
    assert out["code"] == 0
    assert sha(root / "archive" / "late.csv") == sha(data)
    assert names(outbox) == {"late.analysis.xlsx"}
    assert is_complete_xlsx(outbox / "late.analysis.xlsx")
    assert not work_jobs(root)


def test_share_gone_for_a_while_then_back(tmp_path):
    root = tmp_path / "drop"
    away = tmp_path / "drop-away"  # the share unmounted: the path is simply not there
    (root / "inbox").mkdir(parents=True)
    w = watcher(root, max_backoff=0.2)
    thread, out = _run_in_thread(w)
    try:
        wait_for(lambda: "watching" in log_text(root), "the watcher to start")
        root.rename(away)
        # the log file stays open, so its lines follow the folder
        wait_for(lambda: log_text(away).count("cannot be used") >= 3, "3 retries")
        assert not root.exists()  # nothing was created locally in its place
        data = schedule_csv(5)
        (away / "inbox" / "back.csv").write_bytes(data)
        away.rename(root)
        wait_for(lambda: (root / "archive" / "back.csv").exists(), "the conversion")
    finally:
        w.stop()
        thread.join()
    assert out["code"] == 0
    assert sha(root / "archive" / "back.csv") == sha(data)
    assert names(root / "outbox") == {"back.analysis.xlsx"}
    assert "usable again" in log_text(root)


# --------------------------------------------------------------------------- several watchers


def _spawn(root: Path, *extra: str, log: str | None = None) -> subprocess.Popen:
    args = [str(root), "--interval", "0.05", "--iterations", str(ITER), "--quiet", *extra]
    if log:
        args += ["--log", log]
    return subprocess.Popen(WATCH_CMD + args, cwd=REPO, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE)


def test_two_watchers_100_files_each_converted_once(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    dropped = {f"f{i:03d}.csv": schedule_csv(4 + i % 5, f"n{i}") for i in range(100)}
    for name, data in dropped.items():
        (root / "inbox" / name).write_bytes(data)
    logs = [str(tmp_path / "w1.log"), str(tmp_path / "w2.log")]
    procs = [_spawn(root, "--once", "--workers", "1", log=log) for log in logs]
    for proc in procs:
        _, err = proc.communicate(timeout=DEADLINE * 2)
        assert proc.returncode == 0, err.decode()
    assert names(root / "inbox") == set()
    assert names(root / "failed") == set()
    assert names(root / "outbox") == {f"{Path(n).stem}.analysis.xlsx" for n in dropped}
    assert names(root / "archive") == set(dropped)
    for name, data in dropped.items():
        assert sha(root / "archive" / name) == sha(data)
    per_watcher = [Path(log).read_text().count("\tconverted\t") for log in logs]
    assert sum(per_watcher) == 100  # no file converted by both
    assert not work_jobs(root)


def test_sigkill_mid_batch_then_restart_loses_nothing(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    dropped = {f"k{i:02d}.csv": schedule_csv(6 + i % 7, f"k{i}") for i in range(40)}
    for name, data in dropped.items():
        (root / "inbox" / name).write_bytes(data)
    archive, outbox = root / "archive", root / "outbox"
    claimed_at_kill = []
    for kill_at in (4, 12, 20):  # three kills at different points of the batch
        proc = _spawn(root, "--workers", "2")
        try:
            wait_for(lambda n=kill_at, p=proc: len(names(archive)) >= n or p.poll() is not None,
                     f"{kill_at} files archived")
        finally:
            proc.send_signal(signal.SIGKILL)
            proc.wait()
        claimed_at_kill.append(len(work_jobs(root)))
        # whatever is in the outbox is whole: results arrive by rename only
        for name in names(outbox):
            assert name.endswith(".analysis.xlsx"), name
            assert is_complete_xlsx(outbox / name), name
    assert any(claimed_at_kill), claimed_at_kill  # some kill caught files in hand
    proc = _spawn(root, "--once", "--workers", "2")
    _, err = proc.communicate(timeout=DEADLINE * 2)
    assert proc.returncode == 0, err.decode()
    assert "left by a stopped watcher" in log_text(root)
    assert names(root / "inbox") == set()
    assert names(root / "failed") == set()
    assert names(archive) == set(dropped)  # a second conversion would add a stamped name
    assert names(outbox) == {f"{Path(n).stem}.analysis.xlsx" for n in dropped}
    for name, data in dropped.items():
        assert sha(archive / name) == sha(data)
    for name in names(outbox):
        assert is_complete_xlsx(outbox / name)
    assert not work_jobs(root)


def test_sigterm_finishes_the_file_in_hand(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    data = schedule_csv(40)
    (root / "inbox" / "slow.csv").write_bytes(data)
    proc = subprocess.Popen(
        WATCH_CMD + [str(root), "--interval", "0.05", "--workers", "1", "--quiet",
                     "--iterations", "200000"],
        cwd=REPO, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        wait_for(lambda: not (root / "inbox" / "slow.csv").exists(), "the file to be claimed")
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=DEADLINE)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 0, err.decode()
    assert sha(root / "archive" / "slow.csv") == sha(data)
    assert is_complete_xlsx(root / "outbox" / "slow.analysis.xlsx")
    assert not work_jobs(root)


# --------------------------------------------------------------------------- pieces


def test_classify_names():
    # common practice: office owner/lock files, partial downloads, hidden files
    for name in ("~$plan.xlsx", ".~lock.plan.ods#", "plan.xlsx.tmp", "a.CRDOWNLOAD",
                 "a.csv.part", ".plan.csv"):
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
    df.write_plan(job, "converted", [[df.RESULT_XLSX, "outbox", "b", ".analysis.xlsx"],
                                     ["b.csv", "archive", "b", ".csv"]])
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


def test_problems_report_text_and_workbook(tmp_path):
    problems = [
        Problem("error", "unknown-predecessor", "C4 names predecessor Q7, which is not in "
                "the ID column", "Activities", "C4", "A3",
                fix="Add Q7 to the ID column, or remove it from A3's predecessors."),
        Problem("warning", "odd", "=SUM(A1) looks like a formula", "Activities", "B9"),
    ]
    text = problems_text("plan.xlsx", problems)
    assert "Activities!C4" in text and "activity A3" in text
    assert "What to do: Add Q7 to the ID column" in text
    assert "Activities!B9" in text and "1 error, 1 warning" in text
    path = tmp_path / "p.xlsx"
    write_problems_xlsx(path, "plan.xlsx", problems)
    sheet = openpyxl.load_workbook(path).active
    rows = [r for r in sheet.iter_rows(min_row=5, values_only=True)]
    assert rows[0][1:5] == ("error", "Activities", "C4", "A3")
    assert rows[0][6].startswith("Add Q7")
    assert rows[1][6] == "=SUM(A1) looks like a formula"  # no fix: the message instead
    assert sheet.cell(row=6, column=7).data_type == "s"  # kept as text, not a formula


def test_watch_arguments_build_convert_options():
    import argparse

    parser = argparse.ArgumentParser()
    parser.add_argument("--json", action="store_true")  # a shared option the CLI may add
    add_watch_arguments(parser)
    args = parser.parse_args(["F", "--due", "2025-03-31", "--json", "--iterations", "500",
                              "--seed", "7", "--distribution", "triangular",
                              "--correlation", "0.25", "--paths", "4", "--workers", "3"])
    opts = options_from_args(args)
    assert (opts.due, opts.json, opts.iterations, opts.seed) == ("2025-03-31", True, 500, 7)
    assert (opts.distribution, opts.correlation, opts.paths) == ("triangular", 0.25, 4)
    assert args.workers == 3 and args.interval == 5.0 and args.once is False
    assert options_from_args(parser.parse_args(["F", "--due", "30"])).due == 30.0
    defaults = options_from_args(parser.parse_args(["F"]))
    assert defaults == ConvertOptions()
