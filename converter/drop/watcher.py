"""``pertbook watch FOLDER``: convert whatever is dropped into ``FOLDER/inbox``.

Lifecycle of one input (see ``drop_folder`` for the moves):

1. seen in the inbox with the same size and modification time at two polls, and
   readable: it is complete;
2. claimed by renaming it into a job folder in this watcher's private working folder
   (only one watcher can win the rename);
3. converted in a worker process, outputs written inside the job folder;
4. a plan is written (which file goes where), then carried out: the result into
   ``outbox/`` and the input into ``archive/``, or the input with its problems report
   into ``failed/``. Nothing is ever overwritten.

Folders are polled, not watched: change notifications do not arrive reliably from
network shares. When a folder cannot be written the watcher logs it, leaves the input
where it was, and retries with exponential backoff.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import dataclasses
import errno
import json
import logging
import logging.handlers
import os
import signal
import sys
import threading
import time
import traceback
from collections import deque
from collections.abc import Callable
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path

from converter.api import ConvertOptions, convert
from converter.drop import folder as df
from converter.model import DISTRIBUTIONS
from converter.write.problems import fault_problem, write_problems_text, write_problems_xlsx

#: errno values that say the storage is in trouble (full, gone, read-only), not the file.
STORAGE_ERRNOS = {
    errno.ENOSPC,
    getattr(errno, "EDQUOT", errno.ENOSPC),
    errno.EROFS,
    errno.EIO,
    getattr(errno, "ESTALE", errno.EIO),
    errno.ENOTCONN,
    getattr(errno, "EHOSTDOWN", errno.EHOSTUNREACH),
    errno.EHOSTUNREACH,
    errno.ENETDOWN,
    errno.ENETUNREACH,
    errno.ETIMEDOUT,
}
FULL_ERRNOS = {errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)}

ConvertFn = Callable[..., object]


@dataclass
class Job:
    """One claimed input."""

    dir: Path
    name: str
    started: float = field(default_factory=time.monotonic)
    adopted: bool = False

    @property
    def input(self) -> Path:
        return self.dir / self.name


# --------------------------------------------------------------------------- worker side


def _worker_init(parent: int, single_thread: bool) -> None:
    """Pool worker start: ignore Ctrl+C/SIGTERM (the watcher decides), die with the watcher.

    On POSIX the worker leads a process group of its own, so the watcher (or the worker
    itself, once orphaned) can stop it together with any processes the converter starts.
    """
    if hasattr(os, "setpgrp"):
        try:
            os.setpgrp()
        except OSError:
            pass
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if hasattr(signal, "SIGTERM"):
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
    if single_thread:  # one numeric thread per process: the pool already uses every core
        for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
            os.environ.setdefault(name, "1")

    def orphan_check() -> None:
        while True:
            time.sleep(0.5)
            if os.getppid() != parent or not df.pid_alive(parent):
                _kill_own_group()
                os._exit(0)

    threading.Thread(target=orphan_check, daemon=True, name="orphan-check").start()
    for module in (
        "converter.read.sheets",
        "converter.validate.schedule",
        "converter.analyse.analysis",
        "converter.write.workbook",
    ):
        try:
            __import__(module)
        except Exception:  # noqa: BLE001 - warming up only; convert reports real errors
            pass


def _kill_own_group() -> None:
    """SIGKILL this process's group, but only if this process leads it."""
    if hasattr(os, "killpg") and os.getpgrp() == os.getpid():
        os.killpg(os.getpid(), signal.SIGKILL)


def _kill_worker(proc) -> None:
    """Stop a pool worker now, with whatever it started (its process group on POSIX)."""
    try:
        if hasattr(os, "killpg") and os.getpgid(proc.pid) == proc.pid:
            os.killpg(proc.pid, signal.SIGKILL)
        else:
            proc.kill()
    except (OSError, ValueError):
        pass


def run_conversion(convert_fn: ConvertFn, job_dir: Path, name: str, options: ConvertOptions):
    """Convert one claimed input; never raises. Returns ``(kind, payload)``:

    ``("done", ConvertResult)``, ``("oserror", (errno, text))`` or ``("fault", text)``.
    """
    try:
        result = convert_fn(
            job_dir / name,
            options,
            workbook_path=job_dir / df.RESULT_XLSX,
            json_path=job_dir / df.RESULT_JSON,
        )
        return "done", result
    except OSError as exc:
        return "oserror", (exc.errno, traceback.format_exc())
    except Exception:  # noqa: BLE001 - any other exception is a fault of the converter
        return "fault", traceback.format_exc()


class _Inline:
    """Runs each job at once in this process (``workers=0``)."""

    def submit(self, fn, *args):
        future: cf.Future = cf.Future()
        try:
            future.set_result(fn(*args))
        except BaseException as exc:  # noqa: BLE001
            future.set_exception(exc)
        return future

    def shutdown(self, wait: bool = True, cancel_futures: bool = False) -> None:
        pass


# --------------------------------------------------------------------------- logging


def _format_figure(value) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def headline_text(headline: dict) -> str:
    """``key=value`` pairs of the headline figures, for the log line."""
    return " ".join(f"{k}={_format_figure(v)}" for k, v in headline.items() if v is not None)


def make_logger(log_path: Path | None, *, echo: bool = True) -> logging.Logger:
    """A private logger: rotating ``log_path`` (1 MB x 5) and, if ``echo``, stderr."""
    logger = logging.getLogger(f"pertbook.watch.{id(object())}")
    logger.setLevel(logging.INFO)
    logger.propagate = False
    fmt = logging.Formatter("%(asctime)s  %(levelname)-7s  %(message)s", "%Y-%m-%d %H:%M:%S")
    if log_path is not None:
        handler = logging.handlers.RotatingFileHandler(
            log_path, maxBytes=1_000_000, backupCount=5, encoding="utf-8", delay=True
        )
        handler.setFormatter(fmt)
        logger.addHandler(handler)
    if echo:
        stream = logging.StreamHandler()
        stream.setFormatter(fmt)
        logger.addHandler(stream)
    return logger


def close_logger(logger: logging.Logger) -> None:
    for handler in list(logger.handlers):
        handler.close()
        logger.removeHandler(handler)


# --------------------------------------------------------------------------- watcher


class Watcher:
    """Polls a drop folder and converts what arrives. ``run()`` returns an exit code.

    ``convert_fn`` is ``converter.api.convert`` or anything with its signature (tests
    inject faults through it; with ``workers > 0`` it must be picklable, i.e. a
    module-level function).
    """

    def __init__(
        self,
        folder: str | os.PathLike,
        options: ConvertOptions | None = None,
        *,
        convert_fn: ConvertFn = convert,
        names: dict[str, str] | None = None,
        interval: float = 5.0,
        workers: int | None = None,
        once: bool = False,
        once_wait: float = 60.0,
        log_path: str | os.PathLike | None = "",
        echo: bool = True,
        max_backoff: float = 60.0,
        stale_after: float = 900.0,
        recover_every: float = 60.0,
    ) -> None:
        self.layout = df.Layout.under(folder, **(names or {}))
        # no progress callback: the options cross a process boundary
        self.options = dataclasses.replace(options or ConvertOptions(), progress=None)
        self.convert_fn = convert_fn
        self.interval = max(float(interval), 0.01)
        self.workers = (os.cpu_count() or 1) if workers is None else max(int(workers), 0)
        self.once = once
        self.once_wait = once_wait
        self.max_backoff = max_backoff
        self.stale_after = stale_after
        self.recover_every = recover_every
        if log_path == "":
            log_path = self.layout.root / "pertbook.log"
        self.log_path = Path(log_path) if log_path else None
        self.echo = echo

        self.counts = {"converted": 0, "invalid": 0, "fault": 0}
        self.stop_requested = False
        self._stop_announced = False
        self._signals = 0
        self._pool = None
        self._inflight: dict[cf.Future, Job] = {}
        self._isolate: deque[Job] = deque()  # jobs to rerun alone after a worker died
        self._isolated: Job | None = None
        self._stuck: list[Job] = []  # jobs whose files could not be placed yet
        self._ready: deque[str] = deque()
        self._seen: dict[str, tuple[int, int]] = {}
        self._waiting: set[str] = set()
        self._told_other: set[str] = set()
        self._scans = 0
        self._healthy = True
        self._trouble_level = 0
        self._next_poll = 0.0
        self._next_recover = 0.0
        self._last_progress = time.monotonic()
        self.work: df.WorkArea | None = None
        self.log = logging.getLogger("pertbook.watch.unset")

    # ------------------------------------------------------------------ running

    def run(self) -> int:
        """Watch until stopped (or, with ``once``, until the inbox is cleared)."""
        previous = self._install_signals()
        try:
            self._start()
            while not self._finished():
                self._step()
        except KeyboardInterrupt:
            self._abort()
        finally:
            self._close()
            self._restore_signals(previous)
        return self.exit_code()

    def stop(self) -> None:
        """Ask the watcher to stop after the files in hand (safe from a signal handler)."""
        self.stop_requested = True

    def exit_code(self) -> int:
        """1 if a fault or unplaced files, 2 if any input was invalid, else 0.

        A long-running watcher stopped by a signal reports 0 unless files were left.
        """
        left = bool(self._stuck or self._inflight or self._isolate)
        if self.once and not self._healthy:
            left = True
        if left or (self.once and self.counts["fault"]):
            return 1
        if self.once and self.counts["invalid"]:
            return 2
        return 0

    def _install_signals(self):
        if threading.current_thread() is not threading.main_thread():
            return None
        previous = {}
        for name in ("SIGINT", "SIGTERM", "SIGBREAK"):
            sig = getattr(signal, name, None)
            if sig is not None:
                previous[sig] = signal.signal(sig, self._on_signal)
        return previous

    def _restore_signals(self, previous) -> None:
        for sig, handler in (previous or {}).items():
            signal.signal(sig, handler)

    def _on_signal(self, signum, frame) -> None:
        self._signals += 1
        if self._signals > 1:
            raise KeyboardInterrupt
        self.stop_requested = True

    # ------------------------------------------------------------------ start / stop

    def _start(self) -> None:
        root = self.layout.root
        if not root.parent.is_dir():  # an unmounted share: do not build a local look-alike
            raise FileNotFoundError(errno.ENOENT, "the folder's parent is not there "
                                    "(is the share mounted?)", str(root.parent))
        root.mkdir(exist_ok=True)
        self.layout.work.mkdir(parents=True, exist_ok=True)
        self.log = make_logger(self.log_path, echo=self.echo)
        for _, path in self.layout.shared():
            try:
                path.mkdir(parents=True, exist_ok=True)
            except OSError:
                pass  # reported (and retried) by the first poll
        self.work = df.WorkArea(self.layout)
        mode = "once" if self.once else f"every {self.interval:g} s"
        self.log.info(
            "watching %s (%s, %d worker%s)", root, mode, self.workers,
            "" if self.workers == 1 else "s",
        )
        self._recover()
        self._next_recover = time.monotonic() + self.recover_every
        if self.workers > 0:
            self._pool = self._make_pool()
        else:
            self._pool = _Inline()

    def _make_pool(self):
        return cf.ProcessPoolExecutor(
            max_workers=self.workers,
            initializer=_worker_init,
            initargs=(os.getpid(), self.workers > 1),
        )

    def _close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
        if self.work is not None:
            try:
                if not self.work.close():
                    self.log.warning(
                        "files left in %s; the next watcher to start puts them back", self.work.dir
                    )
            except OSError as exc:
                self.log.warning("could not tidy the working folder: %s", exc)
        c = self.counts
        self.log.info(
            "stopped: %d converted, %d invalid, %d faults", c["converted"], c["invalid"],
            c["fault"],
        )
        close_logger(self.log)

    def _abort(self) -> None:
        """Second Ctrl+C: stop the workers now and put the files in hand back."""
        self.log.warning("stopping now; files in hand go back to the inbox")
        pool, self._pool = self._pool, None
        if isinstance(pool, cf.ProcessPoolExecutor):
            for proc in list((getattr(pool, "_processes", None) or {}).values()):
                _kill_worker(proc)  # workers ignore SIGTERM
            pool.shutdown(wait=True, cancel_futures=True)
        jobs = list(self._inflight.values()) + list(self._isolate) + self._stuck
        self._inflight.clear()
        self._isolate.clear()
        self._stuck = []
        for job in jobs:
            try:
                df.settle(job.dir, self.layout)
            except OSError as exc:
                self.log.error("%s: could not put back (%s); it stays in %s",
                               job.name, exc, job.dir)
                self._stuck.append(job)

    def _finished(self) -> bool:
        busy = bool(self._inflight or self._isolate)
        if self.stop_requested:
            if not self._stop_announced:
                self._stop_announced = True
                n = len(self._inflight) + len(self._isolate)
                self.log.info("stopping%s", f" after the {n} file(s) in hand" if n else "")
            return not busy
        if not self.once:
            return False
        waiting = self._waiting or self._stuck or not self._healthy
        if self._scans >= 2 and not busy and not self._ready and not waiting:
            return True
        if not busy and waiting and time.monotonic() - self._last_progress > self.once_wait:
            left = sorted(self._waiting) + [j.name for j in self._stuck]
            self.log.warning("giving up for this run; left for the next: %s",
                             ", ".join(left) or "(folder unavailable)")
            return True
        return False

    # ------------------------------------------------------------------ main loop

    def _step(self) -> None:
        if time.monotonic() >= self._next_poll:
            self._poll()
        self._fill()
        timeout = min(max(self._next_poll - time.monotonic(), 0.0), 0.25)
        if self._inflight:
            done, _ = cf.wait(list(self._inflight), timeout=timeout,
                              return_when=cf.FIRST_COMPLETED)
            for future in done:
                self._collect(future)
        elif timeout > 0 and not (self._ready and self._can_claim()):
            time.sleep(timeout)

    def _poll(self) -> None:
        try:
            self._check_folders()
            self.work.heartbeat()
        except OSError as exc:
            self._trouble("the drop folder cannot be used", exc)
            return
        if time.monotonic() >= self._next_recover:
            self._next_recover = time.monotonic() + self.recover_every
            self._recover()
        if not self._retry_stuck():
            return  # logged; backing off
        if not self.stop_requested:
            try:
                self._scan()
            except OSError as exc:
                self._trouble("the inbox cannot be read", exc)
                return
        self._recovered()
        self._next_poll = time.monotonic() + self.interval

    def _check_folders(self) -> None:
        """Raise OSError unless every part is a usable folder; recreate deleted parts.

        Parts are recreated only while the working folder is there: if it is gone too,
        the share itself is probably unavailable and nothing is created locally.
        """
        if not self.layout.work.is_dir():
            raise OSError(errno.ENOENT, "working folder missing (share unavailable?)",
                          str(self.layout.work))
        if not self.work.dir.is_dir():
            self.work.dir.mkdir()
        for key, path in self.layout.shared():
            if path.is_dir():
                continue
            if os.path.lexists(path):
                raise NotADirectoryError(errno.ENOTDIR, f"the {key} is not a folder", str(path))
            path.mkdir()
            self.log.warning("recreated the missing %s folder %s", key, path)

    def _scan(self) -> None:
        """Note each candidate's size and time; queue those unchanged since the last scan."""
        current: dict[str, tuple[int, int]] = {}
        present: set[str] = set()
        with os.scandir(self.layout.inbox) as entries:
            for entry in entries:
                present.add(entry.name)
                try:
                    if entry.is_dir(follow_symlinks=False):
                        continue
                    hidden = df.is_hidden(entry)
                    kind = df.classify(entry.name, hidden=hidden)
                    if kind == df.TAKE and entry.is_symlink():
                        kind = df.OTHER
                    if kind == df.SKIP:
                        continue
                    if kind == df.OTHER:
                        if entry.name not in self._told_other:
                            self._told_other.add(entry.name)
                            self.log.info("%s: ignored (not a spreadsheet pertbook reads: %s)",
                                          entry.name, ", ".join(df.ACCEPTED_SUFFIXES))
                        continue
                    st = entry.stat(follow_symlinks=False)
                except FileNotFoundError:
                    continue
                current[entry.name] = (st.st_size, st.st_mtime_ns)
        self._told_other &= present
        queued = set(self._ready)
        ready = [n for n, sig in current.items() if self._seen.get(n) == sig and n not in queued]
        self._ready.extend(sorted(ready))
        self._waiting = {n for n in current if n not in ready and n not in queued}
        self._seen = current
        self._scans += 1

    def _can_claim(self) -> bool:
        return (self._healthy and not self.stop_requested and not self._stuck
                and not self._isolate and self._isolated is None)

    def _fill(self) -> None:
        """Claim ready files and hand them to workers, up to one per worker."""
        if getattr(self._pool, "_broken", False):  # collect the failed futures first
            if self._inflight:
                return
            self._replace_pool()
        if self._isolate and not self._inflight and not self.stop_requested:
            job = self._isolate.popleft()
            self._isolated = job
            self._submit(job)
            return
        capacity = max(self.workers, 1)
        while self._ready and self._can_claim() and len(self._inflight) < capacity:
            name = self._ready.popleft()
            try:
                job = self._claim(name)
            except OSError as exc:
                self._trouble(f"{name}: could not take it from the inbox", exc)
                return
            if job is not None:
                self._last_progress = time.monotonic()
                self._submit(job)

    def _claim(self, name: str) -> Job | None:
        src = self.layout.inbox / name
        self._seen.pop(name, None)
        if not df.can_open(src):
            if os.path.lexists(src):
                self._waiting.add(name)  # held open by its writer; try at a later poll
            return None
        job_dir = self.work.new_job_dir()
        try:
            os.rename(src, job_dir / name)
        except (FileNotFoundError, PermissionError):
            os.rmdir(job_dir)  # taken by another watcher, or locked by its writer
            return None
        except OSError:
            df.remove_tree(job_dir)
            raise
        return Job(job_dir, name)

    def _submit(self, job: Job) -> None:
        try:
            future = self._pool.submit(run_conversion, self.convert_fn, job.dir, job.name,
                                       self.options)
        except BrokenProcessPool:  # broke since the check: run this one alone later
            if self._isolated is job:
                self._isolated = None
            self._isolate.appendleft(job)
            return
        self._inflight[future] = job

    def _collect(self, future: cf.Future) -> None:
        job = self._inflight.pop(future)
        try:
            kind, payload = future.result()
        except BrokenProcessPool:
            self._worker_died(job)
            return
        except Exception:  # noqa: BLE001 - e.g. a result that cannot be unpickled
            kind, payload = "fault", traceback.format_exc()
        if self._isolated is job:
            self._isolated = None
        self._finish(job, kind, payload)

    def _worker_died(self, job: Job) -> None:
        if self._isolated is job:  # it ran alone, so it is the one that kills the worker
            self._isolated = None
            self._replace_pool()
            text = ("The conversion process stopped abruptly on this file twice "
                    "(for example it ran out of memory).")
            self._finish(job, "fault", text)
            return
        self.log.warning("%s: a conversion process stopped abruptly; retrying it alone", job.name)
        self._isolate.append(job)
        if not self._inflight:
            self._replace_pool()

    def _replace_pool(self) -> None:
        if isinstance(self._pool, cf.ProcessPoolExecutor):
            self._pool.shutdown(wait=False, cancel_futures=True)
            self._pool = self._make_pool()

    # ------------------------------------------------------------------ outcomes

    def _finish(self, job: Job, kind: str, payload) -> None:
        seconds = time.monotonic() - job.started
        try:
            plan = self._plan(job, kind, payload)
        except OSError as exc:
            self._put_back(job, f"{job.name}: could not write its results", exc)
            return
        except Exception:  # noqa: BLE001 - the report writer failed: a plain note instead
            text = traceback.format_exc()
            (job.dir / df.PROBLEMS_TXT).write_text(text, encoding="utf-8")
            stem, suffix = df.split_name(job.name)
            s = df.unique_stem(self.layout.failed, stem, [suffix, ".problems.txt"])
            plan = "fault", [[df.PROBLEMS_TXT, "failed", s, ".problems.txt"],
                             [job.name, "failed", s, suffix]], text.strip().splitlines()[-1]
        if plan is None:
            return
        outcome, items, note = plan
        try:
            df.write_plan(job.dir, outcome, items)
        except OSError as exc:
            self._put_back(job, f"{job.name}: could not write its results", exc)
            return
        self._settle(job, seconds, note)

    def _plan(self, job: Job, kind: str, payload):
        """``(outcome, items, note)`` for a finished conversion, or None if put back."""
        stem, suffix = df.split_name(job.name)
        jdir = job.dir
        has_json = (jdir / df.RESULT_JSON).exists()
        if kind == "oserror":
            code, text = payload
            if code in STORAGE_ERRNOS or not self._job_dir_writable(job):
                self._put_back(job, f"{job.name}: storage trouble while converting",
                               OSError(code, os.strerror(code) if code else text.splitlines()[-1]))
                return None
            kind, payload = "fault", text
        if kind == "done":
            result = payload
            ok = bool(getattr(result, "ok", False))
            if ok and (jdir / df.RESULT_XLSX).exists():
                out_stem = df.unique_stem(
                    self.layout.outbox, stem,
                    [".analysis.xlsx"] + ([".analysis.json"] if has_json else []),
                )
                items = []
                if has_json:
                    items.append([df.RESULT_JSON, "outbox", out_stem, ".analysis.json"])
                items.append([df.RESULT_XLSX, "outbox", out_stem, ".analysis.xlsx"])
                arch_stem = df.unique_stem(self.layout.archive, stem, [suffix])
                items.append([job.name, "archive", arch_stem, suffix])
                self._name_input_in_json(job, self.layout.archive / f"{arch_stem}{suffix}")
                figures = headline_text(getattr(result, "headline", {}) or {})
                warnings = [p for p in getattr(result, "problems", []) if p.severity != "error"]
                if warnings:
                    figures = f"{figures} ({len(warnings)} warnings)".strip()
                return "converted", items, figures
            if ok:
                kind, payload = "fault", "The converter reported success but wrote no workbook."
            else:
                problems = list(getattr(result, "problems", []) or [])
                write_problems_text(jdir / df.PROBLEMS_TXT, job.name, problems)
                write_problems_xlsx(jdir / df.PROBLEMS_XLSX, job.name, problems)
                errors = [p for p in problems if p.severity == "error"]
                first = str(errors[0] if errors else problems[0]) if problems else "no problems"
                note = f"{len(errors)} error{'' if len(errors) == 1 else 's'}; first: {first}"
                return "invalid", self._failed_items(job, has_json), note
        text = str(payload)
        summary = text.strip().splitlines()[-1] if text.strip() else "unknown fault"
        problems = [fault_problem(summary)]
        write_problems_text(jdir / df.PROBLEMS_TXT, job.name, problems, text)
        write_problems_xlsx(jdir / df.PROBLEMS_XLSX, job.name, problems, text)
        return "fault", self._failed_items(job, has_json), summary

    def _failed_items(self, job: Job, has_json: bool) -> list[list[str]]:
        stem, suffix = df.split_name(job.name)
        suffixes = [suffix, ".problems.txt", ".problems.xlsx"]
        if has_json:
            suffixes.append(".problems.json")
        s = df.unique_stem(self.layout.failed, stem, suffixes)
        items = []
        if has_json:
            items.append([df.RESULT_JSON, "failed", s, ".problems.json"])
        items.append([df.PROBLEMS_TXT, "failed", s, ".problems.txt"])
        items.append([df.PROBLEMS_XLSX, "failed", s, ".problems.xlsx"])
        items.append([job.name, "failed", s, suffix])  # the input last: its report is there
        if has_json:
            self._name_input_in_json(job, self.layout.failed / f"{s}{suffix}")
        return items

    def _name_input_in_json(self, job: Job, final: Path) -> None:
        """Point the JSON's input file at where the input will be, not the working folder."""
        path = job.dir / df.RESULT_JSON
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return
        entry = data.get("input") if isinstance(data, dict) else None
        if not isinstance(entry, dict) or not isinstance(entry.get("file"), str):
            return
        entry["file"] = final.relative_to(self.layout.root).as_posix() \
            if _under(final, self.layout.root) else str(final)
        tmp = job.dir / ".pb-json.tmp"
        tmp.write_text(json.dumps(data, indent=2, allow_nan=False), encoding="utf-8")
        os.replace(tmp, path)

    def _job_dir_writable(self, job: Job) -> bool:
        probe = job.dir / ".pb-probe"
        try:
            probe.write_bytes(b"probe")
            probe.unlink()
        except OSError:
            return False
        return True

    def _settle(self, job: Job, seconds: float | None, note: str = "") -> None:
        try:
            settled = df.settle(job.dir, self.layout)
        except OSError as exc:
            if job not in self._stuck:
                self._stuck.append(job)
            self._trouble(f"{job.name}: its files cannot be placed yet (kept in {job.dir})", exc)
            return
        if job in self._stuck:
            self._stuck.remove(job)
        self._last_progress = time.monotonic()
        self._record(job, settled, seconds, note)

    def _record(self, job: Job, settled: df.Settled, seconds: float | None, note: str) -> None:
        outcome = settled.outcome
        if outcome in self.counts:
            self.counts[outcome] += 1
        if outcome in ("returned", "empty"):
            if outcome == "returned":
                self.log.info("%s\treturned to the inbox%s", job.name,
                              " (left by a stopped watcher)" if job.adopted else "")
            return
        main = settled.placed.get(df.RESULT_XLSX) or settled.placed.get(job.name)
        where = main.relative_to(self.layout.root) if main and _under(main, self.layout.root) \
            else main
        secs = f"{seconds:.2f} s" if seconds is not None else "recovered"
        parts = [job.name, outcome, secs, f"-> {where}"]
        if note:
            parts.append(note)
        level = logging.INFO if outcome == "converted" else logging.WARNING
        self.log.log(level, "\t".join(str(p) for p in parts))

    def _put_back(self, job: Job, what: str, exc: OSError) -> None:
        """Storage trouble before a plan existed: the input goes back to the inbox."""
        self._trouble(what, exc)
        try:
            (job.dir / df.PLAN).unlink(missing_ok=True)
            settled = df.settle(job.dir, self.layout)
        except OSError as again:
            self.log.error("%s: cannot be put back yet (%s); it stays in %s",
                           job.name, again, job.dir)
            if job not in self._stuck:
                self._stuck.append(job)
            return
        self._record(job, settled, None, "")

    def _retry_stuck(self) -> bool:
        """Try again to place the files of stuck jobs; False if some still cannot be."""
        for job in list(self._stuck):
            self._settle(job, None, "placed after a retry")
            if job in self._stuck:
                return False
        return True

    def _recover(self) -> None:
        """Settle the jobs left by watchers that stopped without finishing them."""
        try:
            adopted = self.work.adopt_abandoned(self.stale_after)
        except OSError as exc:
            self.log.error("could not look for files left by a stopped watcher: %s", exc)
            return
        for path in adopted:
            job = Job(path, df.input_name(path) or path.name, adopted=True)
            self._settle(job, None, "finished after a stopped watcher")

    # ------------------------------------------------------------------ trouble

    def _trouble(self, what: str, exc: BaseException) -> None:
        delay = min(self.max_backoff, self.interval * (2 ** self._trouble_level))
        self._trouble_level = min(self._trouble_level + 1, 30)
        self._healthy = False
        self._next_poll = time.monotonic() + delay
        self.log.error("%s: %s; retrying in %.3g s", what, _describe(exc), delay)

    def _recovered(self) -> None:
        if not self._healthy:
            self.log.info("the drop folder is usable again; carrying on")
        self._healthy = True
        self._trouble_level = 0


def _under(path: Path, root: Path) -> bool:
    try:
        path.relative_to(root)
    except ValueError:
        return False
    return True


def _describe(exc: BaseException) -> str:
    if isinstance(exc, OSError):
        words = exc.strerror or str(exc)
        where = f" ({exc.filename})" if exc.filename else ""
        if exc.errno in FULL_ERRNOS:
            words = "the disk is full"
        return f"{words}{where}"
    return str(exc)


# --------------------------------------------------------------------------- command line


def _number_or_text(text: str) -> float | str:
    try:
        return float(text)
    except ValueError:
        return text


def _has_option(parser: argparse.ArgumentParser, flag: str) -> bool:
    return flag in parser._option_string_actions  # noqa: SLF001 - argparse has no public way


def add_convert_arguments(parser: argparse.ArgumentParser) -> None:
    """The conversion options a watcher passes on (skipped where the parser has them)."""
    specs = [
        ("--due", dict(type=_number_or_text, help="due date (ISO date) or duration")),
        ("--json", dict(action="store_true", help="also write <stem>.analysis.json")),
        ("--iterations", dict(type=int, help="Monte Carlo iterations")),
        ("--seed", dict(type=int, help="random seed")),
        ("--distribution", dict(choices=DISTRIBUTIONS, help="duration distribution")),
        ("--correlation", dict(type=float, help="correlation between durations (0 to 1)")),
        ("--paths", dict(type=int, help="number of near-critical paths to list")),
    ]
    for flag, kwargs in specs:
        if not _has_option(parser, flag):
            parser.add_argument(flag, default=None if flag != "--json" else False, **kwargs)


def add_watch_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments of ``pertbook watch``: FOLDER, the watcher's own options, convert options."""
    parser.add_argument("folder", metavar="FOLDER", help="the drop folder (created if missing)")
    parser.add_argument("--interval", type=float, default=5.0,
                        help="seconds between polls (default 5)")
    parser.add_argument("--once", action="store_true",
                        help="process what is in the inbox, then exit (for cron / scheduled tasks)")
    parser.add_argument("--workers", type=int, default=None,
                        help="conversions in parallel (default: number of CPUs; 0: in-process)")
    for part in ("inbox", "outbox", "archive", "failed"):
        parser.add_argument(f"--{part}", default=part, metavar="NAME",
                            help=f"name of the {part} folder inside FOLDER (default {part})")
    parser.add_argument("--log", default=None, metavar="FILE",
                        help="log file (default FOLDER/pertbook.log; 'none' for no file)")
    parser.add_argument("--once-wait", type=float, default=60.0, metavar="SECONDS",
                        help="with --once, how long to wait for files still being written")
    parser.add_argument("--max-backoff", type=float, default=60.0, metavar="SECONDS",
                        help="longest wait between retries when a folder cannot be used")
    parser.add_argument("--quiet", action="store_true", help="log to the file only")
    add_convert_arguments(parser)


def options_from_args(args: argparse.Namespace) -> ConvertOptions:
    """ConvertOptions from parsed arguments (only those present are used)."""
    opts = ConvertOptions()
    for name in ("due", "iterations", "seed", "distribution", "correlation", "paths",
                 "start_date"):
        value = getattr(args, name, None)
        if value is not None:
            setattr(opts, name, value)
    opts.json = bool(getattr(args, "json", False))
    confidence = getattr(args, "confidence", None)
    if confidence is not None:
        opts.confidence = tuple(confidence) if not isinstance(confidence, float) else (confidence,)
    if getattr(args, "no_simulation", False):
        opts.simulate = False
    return opts


def watcher_from_args(args: argparse.Namespace, convert_fn: ConvertFn = convert) -> Watcher:
    log = getattr(args, "log", None)
    log_path: str | None = "" if log is None else (None if log.lower() == "none" else log)
    names = {part: getattr(args, part) for part in ("inbox", "outbox", "archive", "failed")}
    return Watcher(
        args.folder,
        options_from_args(args),
        convert_fn=convert_fn,
        names=names,
        interval=args.interval,
        workers=args.workers,
        once=args.once,
        once_wait=args.once_wait,
        log_path=log_path,
        echo=not getattr(args, "quiet", False),
        max_backoff=args.max_backoff,
    )


def run_watch(args: argparse.Namespace) -> int:
    """Run ``pertbook watch`` from parsed arguments; returns the exit code."""
    try:
        return watcher_from_args(args).run()
    except OSError as exc:
        print(f"pertbook watch: {_describe(exc)}", file=sys.stderr)
        return 1


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="pertbook watch",
        description="Convert every spreadsheet dropped into FOLDER/inbox.",
    )
    add_watch_arguments(parser)
    return run_watch(parser.parse_args(argv))


if __name__ == "__main__":
    raise SystemExit(main())
