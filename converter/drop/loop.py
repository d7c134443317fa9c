"""The polling loop: scan the inbox, claim, hand to workers, collect, back off.

Lifecycle of one input (the parts that do each step):

1. ``inbox.InboxScan``: seen with the same size and modification time at two polls, and
   readable: it is complete;
2. here: claimed by renaming it into a job folder of this watcher's private working
   folder (``folder.WorkArea``; only one watcher can win the rename);
3. ``worker``: converted in a worker process, outputs written inside the job folder;
4. ``plan``: what happens to it, decided from the worker's report;
   ``results``: the plan written, then carried out: the result into ``outbox/`` and the
   input into ``archive/``, or the input with its problems report into ``failed/``.
   Nothing is ever overwritten.

Folders are polled, not watched: change notifications do not arrive reliably from
network shares. When a folder cannot be written the watcher logs it, leaves the input
where it was, and retries with exponential back-off (``health.Health``).

The loop itself never waits on a file: nothing but a regular file is opened (``inbox``,
``folder.open_check``), and a stop is bounded: after the first Ctrl+C or SIGTERM the files
in hand get ``stop_wait`` seconds to finish, then the workers are stopped and the files go
back to the inbox (with ``workers=0`` an alarm interrupts the conversion in this process).
"""

from __future__ import annotations

import concurrent.futures as cf
import errno
import os
import signal
import stat
import threading
import time
import traceback
from collections import deque
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path

from converter.api import ConvertOptions, convert, kind_of, process_umask
from converter.drop import folder as df
from converter.drop.folder import Job
from converter.drop.health import Health, close_logger, new_logger, open_log
from converter.drop.inbox import BUSY, GONE, InboxScan, open_check
from converter.drop.plan import WORKER_DIED, Report
from converter.drop.results import Results
from converter.drop.worker import ConvertFn, InlinePool, WorkerPool, run_conversion, worker_options

SIGNALS = ("SIGINT", "SIGTERM", "SIGBREAK")
LONGEST_WAIT = 0.25  # seconds the loop waits for a result before looking at the clock


class Watcher:
    """Polls a drop folder and converts what arrives. ``run()`` returns an exit code.

    ``convert_fn`` is ``converter.api.convert`` or anything with its signature (tests
    inject faults through it; with ``workers > 0`` it must be picklable, i.e. a
    module-level function). ``log_path=""`` logs to ``FOLDER/pertbook.log``, ``None`` to
    no file.
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
        stop_wait: float = 60.0,
    ) -> None:
        self.layout = df.Layout.under(folder, **(names or {}))
        self.workers = (os.cpu_count() or 1) if workers is None else max(int(workers), 0)
        self.options = worker_options(options, self.workers)
        self.convert_fn = convert_fn
        self.interval = max(float(interval), 0.01)
        self.once = once
        self.once_wait = once_wait
        self.stale_after = stale_after
        self.recover_every = recover_every
        self.stop_wait = max(float(stop_wait), 0.0)
        if log_path == "":
            log_path = self.layout.root / "pertbook.log"
        self.log_path = Path(log_path) if log_path else None
        self.echo = echo

        self.log = new_logger()
        self.health = Health(self.interval, max_backoff, self.log)
        self.results = Results(self.layout, self.log, self.health)
        self.inbox = InboxScan(self.layout.inbox, self.log)
        self.stop_requested = False
        self._stop_announced = False
        self._signals = 0
        self._pool: WorkerPool | InlinePool | None = None
        self._inflight: dict[cf.Future, Job] = {}
        self._isolate: deque[Job] = deque()  # jobs to rerun alone after a worker died
        self._isolated: Job | None = None
        self._next_recover = 0.0
        self._stop_deadline: float | None = None
        self._converting_here = False  # a conversion runs in this process (workers=0)
        self.work: df.WorkArea | None = None

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
            _disarm_alarm()
            self._close()
            _restore_signals(previous)
        return self.exit_code()

    def stop(self) -> None:
        """Ask the watcher to stop after the files in hand, waiting for them at most
        ``stop_wait`` seconds (safe from a signal handler)."""
        self.stop_requested = True
        if self._stop_deadline is None:
            self._stop_deadline = time.monotonic() + self.stop_wait

    @property
    def counts(self) -> dict[str, int]:
        """Files converted, invalid and faulty so far."""
        return self.results.counts

    def exit_code(self) -> int:
        """1 if a fault or unplaced files, 2 if any input was invalid, else 0.

        A long-running watcher stopped by a signal reports 0 unless files were left.
        """
        left = bool(self.results.stuck or self._inflight or self._isolate)
        if self.once and not self.health.healthy:
            left = True
        if left or (self.once and self.counts["fault"]):
            return 1
        if self.once and self.counts["invalid"]:
            return 2
        return 0

    def _install_signals(self) -> dict | None:
        if threading.current_thread() is not threading.main_thread():
            return None
        previous = {}
        for name in SIGNALS:
            sig = getattr(signal, name, None)
            if sig is not None:
                previous[sig] = signal.signal(sig, self._on_signal)
        if hasattr(signal, "setitimer"):
            previous[signal.SIGALRM] = signal.signal(signal.SIGALRM, self._on_alarm)
        return previous

    def _on_signal(self, signum, frame) -> None:
        """First Ctrl+C or SIGTERM: finish what is in hand, within ``stop_wait`` seconds.
        Second: stop at once."""
        self._signals += 1
        if self._signals > 1:
            raise KeyboardInterrupt
        self.stop()
        if self._converting_here and hasattr(signal, "setitimer"):
            # the conversion runs in this very thread: only an alarm can end it in time
            signal.setitimer(signal.ITIMER_REAL, max(self.stop_wait, 0.001))

    def _on_alarm(self, signum, frame) -> None:
        """The stop's time is up while a conversion runs in this process: end it."""
        if self._converting_here:
            self.log.warning("the file in hand did not finish within %g s", self.stop_wait)
            raise KeyboardInterrupt

    # ------------------------------------------------------------------ start / stop

    def _start(self) -> None:
        process_umask()  # read once before any worker starts: outputs get the user's mode
        root = self.layout.root
        if not root.parent.is_dir():  # an unmounted share: do not build a local look-alike
            raise FileNotFoundError(
                errno.ENOENT,
                "the folder's parent is not there (is the share mounted?)",
                str(root.parent),
            )
        root.mkdir(exist_ok=True)
        self.layout.work.mkdir(parents=True, exist_ok=True)
        open_log(self.log, self.log_path, echo=self.echo)
        for _, path in self.layout.shared():
            try:
                path.mkdir(parents=True, exist_ok=True)
            except OSError:
                pass  # reported (and retried) by the first poll
        self.work = df.WorkArea(self.layout)
        mode = "once" if self.once else f"every {self.interval:g} s"
        self.log.info(
            "watching %s (%s, %d worker%s)",
            root,
            mode,
            self.workers,
            "" if self.workers == 1 else "s",
        )
        self.results.recover(self.work, self.stale_after)
        self._next_recover = time.monotonic() + self.recover_every
        self._pool = WorkerPool(self.workers) if self.workers > 0 else InlinePool()

    def _close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True)
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
            "stopped: %d converted, %d invalid, %d faults",
            c["converted"],
            c["invalid"],
            c["fault"],
        )
        close_logger(self.log)

    def _abort(self) -> None:
        """Second Ctrl+C: stop the workers now and put the files in hand back."""
        self.log.warning("stopping now; files in hand go back to the inbox")
        pool, self._pool = self._pool, None
        if pool is not None:
            pool.kill()
            pool.shutdown(wait=True)
        jobs = list(self._inflight.values()) + list(self._isolate)
        self._inflight.clear()
        self._isolate.clear()
        self.results.settle_now(jobs)

    def _return_isolated(self) -> None:
        """Stopping: the files waiting to be retried alone go back to the inbox."""
        while self._isolate:
            job = self._isolate.popleft()
            try:
                df.settle(job.dir, self.layout)
            except OSError as exc:
                self.log.error(
                    "%s: could not put back (%s); it stays in %s", job.name, exc, job.dir
                )
                self.results.stuck.append(job)
                continue
            self.log.info("%s\treturned to the inbox (to be retried at the next start)", job.name)

    def _finished(self) -> bool:
        busy = bool(self._inflight or self._isolate)
        if self.stop_requested:
            if not self._stop_announced:
                self._stop_announced = True
                n = len(self._inflight) + len(self._isolate)
                self.log.info("stopping%s", f" after the {n} file(s) in hand" if n else "")
            if self._isolate and not self._inflight:  # never started again while stopping
                self._return_isolated()
                busy = bool(self._isolate)
            deadline = self._stop_deadline
            running = any(not future.done() for future in self._inflight)
            if running and deadline is not None and time.monotonic() > deadline:
                self.log.warning("the files in hand did not finish within %g s", self.stop_wait)
                self._abort()
                return True
            return not busy
        if not self.once:
            return False
        waiting = self.inbox.waiting or self.results.stuck or not self.health.healthy
        if self.inbox.scans >= 2 and not busy and not self.inbox.ready and not waiting:
            return True
        quiet = time.monotonic() - self.health.last_progress
        if not busy and waiting and quiet > self.once_wait:
            left = sorted(self.inbox.waiting) + [j.name for j in self.results.stuck]
            self.log.warning(
                "giving up for this run; left for the next: %s",
                ", ".join(left) or "(folder unavailable)",
            )
            return True
        return False

    # ------------------------------------------------------------------ one turn

    def _step(self) -> None:
        if time.monotonic() >= self.health.next_poll:
            self._poll()
        self._fill()
        timeout = min(max(self.health.next_poll - time.monotonic(), 0.0), LONGEST_WAIT)
        if self._inflight:
            done, _ = cf.wait(list(self._inflight), timeout=timeout, return_when=cf.FIRST_COMPLETED)
            for future in done:
                self._collect(future)
        elif timeout > 0 and not (self.inbox.ready and self._can_claim()):
            time.sleep(timeout)

    def _poll(self) -> None:
        try:
            self._check_folders()
            self.work.heartbeat()
        except OSError as exc:
            self.health.trouble("the drop folder cannot be used", exc)
            return
        if time.monotonic() >= self._next_recover:
            self._next_recover = time.monotonic() + self.recover_every
            self.results.recover(self.work, self.stale_after)
        if not self.results.retry_stuck():
            return  # logged; backing off
        if not self.stop_requested:
            try:
                self.inbox.scan()
            except OSError as exc:
                self.health.trouble("the inbox cannot be read", exc)
                return
        self.health.recovered()

    def _check_folders(self) -> None:
        """Raise OSError unless every part is a usable folder; recreate deleted parts.

        Parts are recreated only while the working folder is there: if it is gone too,
        the share itself is probably unavailable and nothing is created locally.
        """
        if not self.layout.work.is_dir():
            raise OSError(
                errno.ENOENT, "working folder missing (share unavailable?)", str(self.layout.work)
            )
        if not self.work.dir.is_dir():
            self.work.dir.mkdir()
        for key, path in self.layout.shared():
            if path.is_dir():
                continue
            if os.path.lexists(path):
                raise NotADirectoryError(errno.ENOTDIR, f"the {key} is not a folder", str(path))
            path.mkdir()
            self.log.warning("recreated the missing %s folder %s", key, path)

    # ------------------------------------------------------------------ claim, submit, collect

    def _can_claim(self) -> bool:
        return (
            self.health.healthy
            and not self.stop_requested
            and not self.results.stuck
            and not self._isolate
            and self._isolated is None
        )

    def _fill(self) -> None:
        """Claim ready files and hand them to workers, up to one per worker."""
        if self._pool.broken:  # collect the failed futures first, then a new pool
            if self._inflight:
                return
            self._replace_pool()
        if self._isolate and not self._inflight and not self.stop_requested:
            job = self._isolate.popleft()
            self._isolated = job
            self._submit(job)
            return
        capacity = max(self.workers, 1)
        while self.inbox.ready and self._can_claim() and len(self._inflight) < capacity:
            name = self.inbox.ready.popleft()
            try:
                job = self._claim(name)
            except OSError as exc:
                self.health.trouble(f"{name}: could not take it from the inbox", exc)
                return
            if job is not None:
                self.health.progressed()
                self._submit(job)

    def _claim(self, name: str) -> Job | None:
        """Rename ``name`` from the inbox into a new job folder; None if another watcher
        took it first, its writer still holds it, or it is not a regular file."""
        src = self.layout.inbox / name
        self.inbox.taken(name)
        why = open_check(src)
        if why == BUSY:
            self.inbox.hold(name)  # held open by its writer; try at a later poll
            return None
        if why is not None:
            if why != GONE:
                self.inbox.refuse(name, why)
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
        mode = os.lstat(job_dir / name).st_mode
        if not stat.S_ISREG(mode):  # swapped since the check: back where it was, untouched
            df.settle(job_dir, self.layout)
            self.inbox.refuse(name, kind_of(mode))
            return None
        return Job(job_dir, name)

    def _submit(self, job: Job) -> None:
        self._converting_here = isinstance(self._pool, InlinePool)
        try:
            future = self._pool.submit(
                run_conversion, self.convert_fn, job.dir, job.name, self.options
            )
        except BrokenProcessPool:  # broke since the check: run this one alone later
            if self._isolated is job:
                self._isolated = None
            self._isolate.appendleft(job)
            return
        except KeyboardInterrupt:  # stopped before the job was handed over
            self._isolate.append(job)  # _abort puts it back in the inbox
            raise
        finally:
            self._converting_here = False
        self._inflight[future] = job

    def _collect(self, future: cf.Future) -> None:
        job = self._inflight[future]
        try:
            report = future.result()  # an interrupted inline conversion raises here
        except BrokenProcessPool:
            self._inflight.pop(future)
            self._pool.broken = True
            self._worker_died(job)
            return
        except Exception:  # noqa: BLE001 - e.g. a result that cannot be unpickled
            report = Report("fault", text=traceback.format_exc())
        self._inflight.pop(future)
        if self._isolated is job:
            self._isolated = None
        self.results.finish(job, report)

    def _worker_died(self, job: Job) -> None:
        if self._isolated is job:  # it ran alone, so it is the one that kills the worker
            self._isolated = None
            self._replace_pool()
            self.results.finish(job, Report("fault", text=WORKER_DIED))
            return
        self.log.warning("%s: a conversion process stopped abruptly; retrying it alone", job.name)
        self._isolate.append(job)
        if not self._inflight:
            self._replace_pool()

    def _replace_pool(self) -> None:
        if isinstance(self._pool, WorkerPool):
            self._pool.shutdown(wait=False)
            self._pool = WorkerPool(self.workers)


def _disarm_alarm() -> None:
    if hasattr(signal, "setitimer") and threading.current_thread() is threading.main_thread():
        signal.setitimer(signal.ITIMER_REAL, 0)


def _restore_signals(previous: dict | None) -> None:
    for sig, handler in (previous or {}).items():
        signal.signal(sig, handler)
