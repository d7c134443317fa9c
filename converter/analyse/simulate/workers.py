"""Worker processes for large simulation runs, and the memory they share.

A large run forks a pool of workers. The run's job (inputs, sample store, result
arrays) is handed to each worker as the pool initializer's argument: with the ``fork``
start method it reaches the child by the fork itself (nothing is pickled), and the big
arrays live in shared anonymous memory (:func:`mapped`), so the workers write the
samples and project durations the parent then reads. Tasks name a module-level
function and its arguments; the worker calls it with its job first. The numbers do
not depend on the number of workers (every chunk has its own random streams).
"""

from __future__ import annotations

import mmap
import multiprocessing
import os
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from typing import Any

import numpy as np

#: A run of this many samples (activities x iterations) or more shares its chunks among
#: worker processes when the caller leaves the worker count to the simulation.
PARALLEL_ELEMENTS = 20_000_000

#: The most workers chosen automatically (more gave no gain on the runs measured).
MAX_AUTO_WORKERS = 4

# The job of the pool this worker process belongs to, set by the pool initializer in
# the worker (never in the parent): a worker serves one run only.
_worker_job: Any = None


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the platform tells it)."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def worker_count(workers: int | None, samples: int, chunks: int) -> int:
    """Processes to run ``chunks`` chunks of a run of ``samples`` samples with.

    ``workers`` as the caller asked; None chooses: 1 below :data:`PARALLEL_ELEMENTS`
    samples, else one per usable core up to :data:`MAX_AUTO_WORKERS`. Always 1 where
    ``fork`` is not available or this process is itself a daemonic worker; never more
    than there are chunks.
    """
    if workers is None:
        if samples < PARALLEL_ELEMENTS:
            return 1
        workers = min(MAX_AUTO_WORKERS, usable_cores())
    workers = max(1, int(workers))
    if workers > 1 and (
        "fork" not in multiprocessing.get_all_start_methods()
        or multiprocessing.current_process().daemon
    ):
        return 1
    return min(workers, chunks)


def mapped(shape: tuple[int, ...], dtype, shared: bool = False) -> np.ndarray:
    """A zeroed array in anonymous memory, shared with forked workers if ``shared``.

    The pages are mapped up front (MAP_POPULATE where the platform has it): one
    call instead of a page fault per 4 KB page, several times faster on first use
    for the large sample store and work matrices. The mapping lives as long as the
    array (numpy keeps it as the array's base).
    """
    count = int(np.prod(shape))
    size = max(1, count * np.dtype(dtype).itemsize)
    flags = mmap.MAP_SHARED if shared else mmap.MAP_PRIVATE
    populate = getattr(mmap, "MAP_POPULATE", 0)
    anonymous = getattr(mmap, "MAP_ANONYMOUS", getattr(mmap, "MAP_ANON", 0))
    try:
        mem = mmap.mmap(-1, size, flags=flags | anonymous | populate)
    except (OSError, ValueError, TypeError):
        if not shared:
            return np.zeros(shape, dtype=dtype)
        mem = mmap.mmap(-1, size)
    return np.frombuffer(mem, dtype=dtype, count=count).reshape(shape)


def _keep_freed_memory() -> None:
    """Keep freed memory in the worker: many short-lived numpy temporaries otherwise
    cost a page fault per page each time (glibc mallopt; ignored elsewhere)."""
    try:
        import ctypes

        libc = ctypes.CDLL("libc.so.6")
        m_trim_threshold, m_top_pad, m_mmap_threshold = -1, -2, -3
        libc.mallopt(m_trim_threshold, 1 << 30)
        libc.mallopt(m_top_pad, 64 << 20)
        libc.mallopt(m_mmap_threshold, 32 << 20)  # glibc's largest allowed value
    except (OSError, AttributeError):
        pass


def _worker_start(job: Any) -> None:
    """Pool initializer: take the run's job (handed over by the fork) and tune malloc."""
    global _worker_job
    _worker_job = job
    _keep_freed_memory()


def _call(task: tuple[Callable[..., Any], tuple]) -> Any:
    function, args = task
    return function(_worker_job, *args)


@contextmanager
def pool(count: int, job: Any) -> Iterator[Any]:
    """A pool of ``count`` forked workers serving ``job`` (closed on leaving)."""
    context = multiprocessing.get_context("fork")
    with context.Pool(count, _worker_start, (job,)) as workers:
        yield workers


def map_unordered(workers, function: Callable[..., Any], tasks: Iterable[tuple]) -> Iterator:
    """``function(job, *args)`` for each ``args`` of ``tasks``, in the workers of the pool;
    results in the order they finish. ``function`` must be a module-level function."""
    return workers.imap_unordered(_call, [(function, tuple(args)) for args in tasks])
