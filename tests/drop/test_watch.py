"""The drop folder (``pertbook watch``) on real temporary folders, end to end.

What is checked against what:
- "byte-identical": SHA-256 of what was dropped against what ends up archived/failed
  (hashlib), so a moved file is the dropped file and not a copy that was re-written;
- a result "is a workbook": it opens with openpyxl and passes zipfile's CRC test (a
  half-written .xlsx fails both);
- the problems report lists every problem that ``converter.api.check`` finds on the
  same bytes, each with its sheet!cell and its fix (or message);
- lock/temporary file names: common practice (Microsoft Office ``~$`` owner files,
  LibreOffice ``.~lock``, browser ``.crdownload``/``.part`` downloads);
- signals: POSIX semantics (SIGTERM and a first SIGINT ask, a second SIGINT insists,
  SIGKILL cannot be caught); a process is stopped per ``/proc/<pid>/stat`` (proc(5)).

Tests run the real converter with few simulation iterations; faults are injected by
wrapping it (``drop_support``: module-level functions, so pool workers can load them).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import threading
import time
from pathlib import Path

import drop_support as ds
import openpyxl
from drop_support import (
    CLI_WATCH,
    DEADLINE,
    HEADER,
    ITER,
    REPO,
    is_complete_xlsx,
    log_text,
    names,
    schedule_csv,
    schedule_xlsx,
    sha,
    wait_for,
    work_jobs,
)

from converter import api, cli
from converter.api import ConvertOptions
from converter.drop.loop import Watcher


def watcher(root: Path, **kw) -> Watcher:
    kw.setdefault("interval", 0.05)
    kw.setdefault("workers", 0)
    kw.setdefault("echo", False)
    kw.setdefault("once_wait", 30.0)
    return Watcher(root, ConvertOptions(iterations=ITER), **kw)


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
        "~$plan.xlsx": b"owner",
        ".~lock.plan.xlsx#": b"lock",
        "plan.xlsx.tmp": b"t",
        "big.csv.crdownload": b"d",
        "big.csv.part": b"p",
        ".hidden.csv": HEADER.encode(),
        "notes.txt": b"not a schedule",
        "report.PDF": b"%PDF",
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
    everywhere = [
        p for part in (inbox, archive, failed, outbox) for p in part.iterdir() if p.is_file()
    ]
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


def test_cli_watch_once_exit_codes_and_options(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    (root / "inbox" / "a.csv").write_bytes(schedule_csv(5))
    args = [
        "watch",
        str(root),
        "--once",
        "--interval",
        "0.05",
        "--workers",
        "0",
        "--quiet",
        "--iterations",
        str(ITER),
        "--json",
    ]
    assert cli.main(args) == 0
    assert names(root / "outbox") == {"a.analysis.xlsx", "a.analysis.json"}
    # the JSON names where the input now is, not the watcher's working folder
    data = json.loads((root / "outbox" / "a.analysis.json").read_text(encoding="utf-8"))
    assert data["input"]["file"] == "archive/a.csv"
    (root / "inbox" / "b.csv").write_bytes(schedule_csv(5, bad=True))
    assert cli.main(args) == 2
    assert names(root / "failed") == {
        "b.csv",
        "b.problems.txt",
        "b.problems.xlsx",
        "b.problems.json",
    }


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
                fh.write(data[i : i + step])
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
    files = {
        "boom.csv": schedule_csv(5),
        "crash.csv": schedule_csv(6),
        "fine.csv": schedule_csv(7),
        "fine2.csv": schedule_csv(8),
    }
    for name, data in files.items():
        (root / "inbox" / name).write_bytes(data)
    code = watcher(root, once=True, workers=2, convert_fn=ds.convert_with_faults).run()
    assert code == 1  # faults are the tool's own failures
    failed = root / "failed"
    assert names(failed) == {
        f"{s}{x}" for s in ("boom", "crash") for x in (".csv", ".problems.txt", ".problems.xlsx")
    }
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
    ds.DISK_FULL_LEFT["n"] = 2
    w = watcher(root, once=True, convert_fn=ds.convert_disk_full_twice, max_backoff=0.2)
    assert w.run() == 0
    assert ds.DISK_FULL_LEFT["n"] == 0
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
    ds.BREAK_OUTBOX["outbox"] = outbox
    w = watcher(root, convert_fn=ds.convert_then_break_outbox, max_backoff=0.2)
    thread, out = _run_in_thread(w)
    try:
        wait_for(
            lambda: (
                "cannot be placed yet" in log_text(root)
                and log_text(root).count("the outbox is not a folder") >= 2
            ),
            "2 retries",
        )
        assert not (root / "archive" / "late.csv").exists()
        ds.BREAK_OUTBOX["outbox"] = None
        outbox.unlink()
        outbox.mkdir()
        wait_for(lambda: (root / "archive" / "late.csv").exists(), "the result to be placed")
    finally:
        ds.BREAK_OUTBOX["outbox"] = None
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
    return subprocess.Popen(
        CLI_WATCH + args, cwd=REPO, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE
    )


def test_two_watchers_share_a_folder_each_file_converted_once(tmp_path):
    root = tmp_path / "drop"
    (root / "inbox").mkdir(parents=True)
    # 12 files: each is a race between the two watchers' claims
    dropped = {f"f{i:03d}.csv": schedule_csv(4 + i % 5, f"n{i}") for i in range(12)}
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
    assert sum(per_watcher) == len(dropped)  # no file converted by both
    assert not work_jobs(root)


# --------------------------------------------------------------------------- signals


def _watch_held_file(tmp_path, before: int = 0, after: int = 0, workers: int = 1):
    """A watcher process whose converter holds ``held.csv`` until told; ``before`` and
    ``after`` more files whose names sort before and after it (files are claimed in name
    order). Returns ``(root, {name: bytes dropped}, signal folder, process)``."""
    root, signals = tmp_path / "drop", tmp_path / "signals"
    (root / "inbox").mkdir(parents=True)
    signals.mkdir()
    names_ = [f"a{i:02d}.csv" for i in range(before)] + ["held.csv"]
    names_ += [f"z{i:02d}.csv" for i in range(after)]
    dropped = {name: schedule_csv(6 + i % 7, name) for i, name in enumerate(names_)}
    for name, data in dropped.items():
        (root / "inbox" / name).write_bytes(data)
    proc = _watch_process(root, signals, "--workers", str(workers))
    return root, dropped, signals, proc


def _watch_process(root: Path, signals: Path, *extra: str) -> subprocess.Popen:
    env = dict(os.environ, **{ds.SIGNAL_DIR: str(signals)})
    return subprocess.Popen(
        ds.watch_command(root, "convert_when_told", *extra),
        cwd=REPO,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )


def _pids_in_hand(signals: Path, proc: subprocess.Popen) -> tuple[int, int]:
    """``(worker, its child)`` once the converter has the file in hand."""
    wait_for(lambda: (signals / "pids").exists() or proc.poll() is not None, "the file in hand")
    assert proc.poll() is None, proc.stderr.read().decode()
    worker, child = (int(x) for x in (signals / "pids").read_text().split())
    return worker, child


def _end(proc: subprocess.Popen, *pids: int) -> None:
    """Whatever happened, leave no process of the test behind."""
    for pid in pids:
        if ds.running(pid):
            os.kill(pid, signal.SIGKILL)
    if proc.poll() is None:
        proc.kill()
        proc.wait()


def test_sigterm_finishes_the_file_in_hand(tmp_path):
    root, dropped, signals, proc = _watch_held_file(tmp_path)
    data = dropped["held.csv"]
    pids: tuple[int, ...] = ()
    try:
        pids = _pids_in_hand(signals, proc)
        proc.send_signal(signal.SIGTERM)
        wait_for(lambda: "stopping after the 1 file(s) in hand" in log_text(root), "the stop")
        (signals / "go").touch()
        _, err = proc.communicate(timeout=DEADLINE)
    finally:
        _end(proc, *pids)
    assert proc.returncode == 0, err.decode()
    assert sha(root / "archive" / "held.csv") == sha(data)
    assert is_complete_xlsx(root / "outbox" / "held.analysis.xlsx")
    assert not work_jobs(root)


def test_second_ctrl_c_stops_the_worker_and_what_it_started(tmp_path):
    root, dropped, signals, proc = _watch_held_file(tmp_path)
    data = dropped["held.csv"]
    pids: tuple[int, ...] = ()
    try:
        pids = worker, child = _pids_in_hand(signals, proc)
        proc.send_signal(signal.SIGINT)
        wait_for(lambda: "stopping after the 1 file(s) in hand" in log_text(root), "the stop")
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=DEADLINE)
        # the converter never got its go-ahead: only the watcher can have stopped them
        wait_for(lambda: not ds.running(worker) and not ds.running(child), "both to stop")
    finally:
        _end(proc, *pids)
    assert proc.returncode == 0, err.decode()
    assert "stopping now" in log_text(root)
    assert sha(root / "inbox" / "held.csv") == sha(data)  # back where it was dropped
    assert names(root / "outbox") == set() and names(root / "archive") == set()
    assert not work_jobs(root)


def test_sigkill_mid_batch_orphans_stop_then_a_restart_loses_nothing(tmp_path):
    # held.csv is claimed fifth of nine (two workers): killed with it in hand, after some
    # files were converted, typically before others were claimed
    root, dropped, signals, proc = _watch_held_file(tmp_path, before=4, after=4, workers=2)
    archive, outbox = root / "archive", root / "outbox"
    pids: tuple[int, ...] = ()
    try:
        pids = worker, child = _pids_in_hand(signals, proc)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        # orphaned, the worker stops itself and what it started
        wait_for(lambda: not ds.running(worker) and not ds.running(child), "both to stop")
    finally:
        _end(proc, *pids)
    held = [job / "held.csv" for job in work_jobs(root) if (job / "held.csv").exists()]
    assert len(held) == 1  # the input waits in its job folder for the next watcher
    for name in names(outbox):  # whatever is in the outbox is whole: results arrive by rename
        assert name.endswith(".analysis.xlsx"), name
        assert is_complete_xlsx(outbox / name), name

    (signals / "go").touch()  # the next watcher's converter need not wait
    proc = _watch_process(root, signals, "--once", "--workers", "2")
    _, err = proc.communicate(timeout=DEADLINE)
    assert proc.returncode == 0, err.decode()
    log = log_text(root)
    assert "held.csv\treturned to the inbox (left by a stopped watcher)" in log
    assert names(root / "inbox") == set()
    assert names(root / "failed") == set()
    assert names(archive) == set(dropped)  # a second conversion would add a stamped name
    assert names(outbox) == {f"{Path(n).stem}.analysis.xlsx" for n in dropped}
    for name, data in dropped.items():
        assert sha(archive / name) == sha(data)
        # at most one "converted" line: a SIGKILL between placing a file and logging it
        # leaves the line out, while the archive and outbox above (no stamped second copy)
        # show that every file was converted exactly once
        assert log.count(f"{name}\tconverted") <= 1
    for name in names(outbox):
        assert is_complete_xlsx(outbox / name)
    assert not work_jobs(root)
