"""The worker side of the drop folder (``converter.drop.worker``).

Process ids and groups are checked with the standard library (``os.getpgrp``, POSIX
process groups: a worker leads its own, so killing the group stops what it started);
a process is running per ``/proc/<pid>/stat`` (proc(5)). The options a worker gets are a
copy (``dataclasses.replace``), checked against the caller's object.
"""

from __future__ import annotations

import errno
import os
from concurrent.futures.process import BrokenProcessPool

import pytest
from drop_support import ITER, convert_with_faults, running, schedule_csv, wait_for

from converter.api import ConvertOptions
from converter.drop import folder as df
from converter.drop.worker import InlinePool, WorkerPool, run_conversion, worker_options


def pid_and_group() -> tuple[int, int]:
    return os.getpid(), os.getpgrp()


def test_pool_workers_report_their_ids_and_lead_their_own_group():
    pool = WorkerPool(2)
    try:
        seen = {pool.submit(pid_and_group).result(timeout=120) for _ in range(4)}
        for pid, group in seen:
            assert group == pid != os.getpid()
        wait_for(lambda: len(pool.worker_pids()) == 2, "both workers to report")
        workers = pool.worker_pids()
        assert {pid for pid, _ in seen} <= workers
        pool.kill()
        with pytest.raises(BrokenProcessPool):
            pool.submit(pid_and_group).result(timeout=120)
        wait_for(lambda: not any(running(pid) for pid in workers), "the workers to stop")
        # once the pool has reaped them (its own thread joins them) none is listed
        wait_for(lambda: pool.worker_pids() == set(), "the stopped workers to be unlisted")
    finally:
        pool.shutdown(wait=True)


def test_worker_options_are_a_copy_with_one_simulation_process_in_a_pool():
    progress = print
    given = ConvertOptions(iterations=ITER, progress=progress)
    several = worker_options(given, 2)
    assert several.simulation_workers == 1 and several.progress is None
    assert several.iterations == ITER
    assert given.simulation_workers is None and given.progress is progress  # untouched
    assert worker_options(given, 1).simulation_workers is None  # alone: its own choice
    assert worker_options(ConvertOptions(simulation_workers=3), 0).simulation_workers == 3
    # the default budget (1024 MB) shared among the 4 conversions that may run at once
    assert worker_options(None, 4) == ConvertOptions(simulation_workers=1, simulation_memory_mb=256)


def test_each_conversion_gets_its_share_of_the_watchers_memory_budget():
    # the total divided by the conversions that may run at once (the issue: one dropped
    # file must not take most of the watcher's memory); never below the smallest budget
    assert worker_options(ConvertOptions(simulation_memory_mb=3000), 3).simulation_memory_mb == 1000
    assert worker_options(ConvertOptions(simulation_memory_mb=3000), 1).simulation_memory_mb == 3000
    assert (
        worker_options(ConvertOptions(simulation_memory_mb=3000), 0).simulation_memory_mb == 3000
    )  # workers=0: one conversion at a time, in the watcher itself
    assert worker_options(ConvertOptions(simulation_memory_mb=64), 8).simulation_memory_mb == 32


def test_run_conversion_reports_each_kind(tmp_path):
    (tmp_path / "ok.csv").write_bytes(schedule_csv(5))
    (tmp_path / "boom.csv").write_bytes(schedule_csv(5))
    options = ConvertOptions(iterations=ITER)
    done = run_conversion(convert_with_faults, tmp_path, "ok.csv", options)
    assert done.kind == "done" and done.result.ok
    assert (tmp_path / df.RESULT_XLSX).exists()
    fault = run_conversion(convert_with_faults, tmp_path, "boom.csv", options)
    assert fault.kind == "fault" and "RuntimeError: injected fault" in fault.text

    def full(path, options, **kw):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    disk = run_conversion(full, tmp_path, "ok.csv", options)
    assert (disk.kind, disk.errno) == ("oserror", errno.ENOSPC) and "OSError" in disk.text


def test_inline_pool_hands_back_results_and_exceptions():
    pool = InlinePool()
    assert pool.submit(pow, 2, 5).result() == 32
    with pytest.raises(ZeroDivisionError):
        pool.submit(divmod, 1, 0).result()
    assert pool.broken is False
