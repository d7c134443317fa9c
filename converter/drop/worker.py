"""The worker side: converting one claimed file in a process of its own.

Each worker of the pool starts by leading a process group of its own (POSIX), ignoring
Ctrl+C and SIGTERM (the watcher decides when to stop), and telling the watcher its
process id through a queue. A thread in the worker checks twice a second that the watcher
is still there; once orphaned (the watcher was killed outright) the worker stops its whole
group, so no conversion goes on writing into a job folder nobody owns. The watcher stops
its workers the same way on a second Ctrl+C: it kills the process groups whose ids its
workers reported, using only the public API of ``concurrent.futures`` and
``multiprocessing``.
"""

from __future__ import annotations

import concurrent.futures as cf
import dataclasses
import multiprocessing
import os
import signal
import threading
import time
import traceback
from collections.abc import Callable
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path

from converter.api import ConvertOptions
from converter.drop import folder as df
from converter.drop.plan import Report
from converter.options import DEFAULT_SIMULATION_MEMORY_MB, MIN_SIMULATION_MEMORY_MB

ConvertFn = Callable[..., object]

#: Numeric libraries' thread-count variables, set to 1 in each worker of a pool of several.
THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
#: Modules a worker imports at start, so the first file is not slower than the rest.
WARM_UP = (
    "converter.read.sheets",
    "converter.validate.schedule",
    "converter.analyse.analysis",
    "converter.write.workbook",
)
ORPHAN_CHECK_SECONDS = 0.5


def worker_options(options: ConvertOptions | None, workers: int) -> ConvertOptions:
    """The options each conversion gets: a copy, without a progress callback (it would
    cross a process boundary), with one simulation process per conversion when several
    conversions run side by side (they already share out the cores), and its share of the
    watcher's simulation memory budget: the total (``--simulation-memory``, default
    1024 MB) divided by the conversions that may run at once, at least 32 MB, so no one
    dropped file can take most of the watcher's memory.

    Examples
    --------
    >>> worker_options(ConvertOptions(simulation_memory_mb=1000), 4).simulation_memory_mb
    250
    """
    base = options or ConvertOptions()
    sim = 1 if workers > 1 else base.simulation_workers
    total = (
        DEFAULT_SIMULATION_MEMORY_MB
        if base.simulation_memory_mb is None
        else int(base.simulation_memory_mb)
    )
    share = max(MIN_SIMULATION_MEMORY_MB, total // max(workers, 1))
    return dataclasses.replace(
        base, progress=None, simulation_workers=sim, simulation_memory_mb=share
    )


# --------------------------------------------------------------------------- in the worker


def start_worker(parent: int, pids, single_thread: bool) -> None:
    """Pool initializer: own process group, signals left to the watcher, report the pid,
    stop with the watcher, warm up."""
    if hasattr(os, "setpgrp"):
        try:
            os.setpgrp()
        except OSError:
            pass
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if hasattr(signal, "SIGTERM"):
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
    pids.put(os.getpid())
    if single_thread:  # one BLAS thread per process: the pool already uses every core
        for name in THREAD_VARIABLES:
            os.environ.setdefault(name, "1")
    threading.Thread(
        target=_stop_when_orphaned, args=(parent,), daemon=True, name="orphan-check"
    ).start()
    for module in WARM_UP:
        try:
            __import__(module)
        except Exception:  # noqa: BLE001 - warming up only; convert reports real errors
            pass


def _stop_when_orphaned(parent: int) -> None:
    while True:
        time.sleep(ORPHAN_CHECK_SECONDS)
        if os.getppid() != parent or not df.pid_alive(parent):
            kill_own_group()
            os._exit(0)


def kill_own_group() -> None:
    """SIGKILL this process's group, but only if this process leads it."""
    if hasattr(os, "killpg") and os.getpgrp() == os.getpid():
        os.killpg(os.getpid(), signal.SIGKILL)


def run_conversion(
    convert_fn: ConvertFn, job_dir: Path, name: str, options: ConvertOptions
) -> Report:
    """Convert one claimed input into its job folder; never raises.

    An OSError is reported with its errno (the watcher tells storage trouble from a fault);
    any other exception is a fault of the converter, reported with its traceback.
    """
    try:
        result = convert_fn(
            job_dir / name,
            options,
            workbook_path=job_dir / df.RESULT_XLSX,
            json_path=job_dir / df.RESULT_JSON,
        )
        return Report("done", result=result)
    except OSError as exc:
        return Report("oserror", text=traceback.format_exc(), errno=exc.errno)
    except Exception:  # noqa: BLE001 - any other exception is a fault of the converter
        return Report("fault", text=traceback.format_exc())


# --------------------------------------------------------------------------- in the watcher


def kill_group(pid: int) -> None:
    """Stop a worker now, with whatever it started (its process group on POSIX)."""
    try:
        if hasattr(os, "killpg") and os.getpgid(pid) == pid:
            os.killpg(pid, signal.SIGKILL)
        else:
            os.kill(pid, getattr(signal, "SIGKILL", signal.SIGTERM))
    except (OSError, ValueError):
        pass


class WorkerPool:
    """A process pool whose workers report their process ids.

    ``broken`` is set by the watcher once a future says a worker died
    (``BrokenProcessPool``); a broken pool is replaced by a new one.
    """

    def __init__(self, workers: int) -> None:
        context = multiprocessing.get_context()
        self._pids = context.SimpleQueue()
        self._reported: set[int] = set()
        self.broken = False
        self._executor = cf.ProcessPoolExecutor(
            max_workers=workers,
            mp_context=context,
            initializer=start_worker,
            initargs=(os.getpid(), self._pids, workers > 1),
        )

    def submit(self, fn: Callable, *args) -> cf.Future:
        """Schedule ``fn(*args)``; raises BrokenProcessPool (and marks the pool) if broken."""
        try:
            return self._executor.submit(fn, *args)
        except BrokenProcessPool:
            self.broken = True
            raise

    def worker_pids(self) -> set[int]:
        """Ids of this pool's workers still running: reported by them, and children of
        this process (so a reused id of a stranger is never among them)."""
        while not self._pids.empty():
            self._reported.add(self._pids.get())
        children = {child.pid for child in multiprocessing.active_children()}
        return self._reported & children

    def kill(self) -> None:
        """SIGKILL every worker's process group (workers ignore SIGINT and SIGTERM)."""
        for pid in sorted(self.worker_pids()):
            kill_group(pid)

    def shutdown(self, wait: bool = True) -> None:
        """Stop the pool; jobs not yet started are cancelled."""
        self._executor.shutdown(wait=wait, cancel_futures=True)
        self._pids.close()


class InlinePool:
    """Runs each job at once in this process (``workers=0``), with the pool's methods."""

    broken = False

    def submit(self, fn: Callable, *args) -> cf.Future:
        future: cf.Future = cf.Future()
        try:
            future.set_result(fn(*args))
        except BaseException as exc:  # noqa: BLE001 - handed to the caller via the future
            future.set_exception(exc)
        return future

    def kill(self) -> None:
        pass

    def shutdown(self, wait: bool = True) -> None:
        pass
