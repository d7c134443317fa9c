"""The simulation's memory budget: what a run needs and how it is kept within the budget.

What grows with the iteration count ``N`` for ``n`` activities:

* the project duration of every iteration (8 bytes each; a correlated run keeps those of
  both runs), kept whole: the mean, standard deviation, percentiles, finish
  probabilities and histogram are exact;
* the sampled durations kept for the sensitivity (Spearman's rho of each activity with
  the project duration): ``4 n`` bytes per kept iteration, plus the rank work of
  :mod:`.ranks` (about ``20 x 16 + 168`` bytes per kept iteration per process);
* with ``r`` named risks, their draws (:class:`.risks.RiskDraws`): occurrence flags
  (bool), impacts (float32) and critical-hit flags (bool), :data:`RISK_BYTES` = 6 bytes
  per risk per iteration; and for the ``t = min(r, 20)`` risks ranked
  (:func:`.risk_runs.rank_risks`) the finishes without each (float64) and its
  critical-hit flags (bool), :data:`RANKED_BYTES` = 9 bytes per ranked risk per
  iteration. These are kept whole (part of the fixed need, whatever is sampled).

The work of one chunk of iterations (samples, both passes, correlation) does not grow
with ``N``; each worker process has its own, and its own heap and copies of the parent's
pages (48 MB allowed). The criticality counts and target hits are
counts per activity, summed chunk by chunk.

When every iteration's samples fit the budget the run is exactly the unlimited one
(same seed, same numbers). Otherwise the sensitivities come from the first ``K``
iterations only (``K`` as large as fits; :attr:`MemoryPlan.sample`); all other figures
still use every iteration. Spearman's rho from ``K`` pairs has a sampling standard
error of about ``sqrt(1.06 / (K - 3))`` on the Fisher ``atanh`` scale (Fieller, Hartley
& Pearson 1957), which is the standard error of rho itself near 0 and
``(1 - rho^2)`` times it elsewhere (:func:`sensitivity_std_error`). Where not even
:data:`MIN_SENSITIVITY_ITERATIONS` kept iterations, or one chunk, fit, the run is
refused up front (:class:`SimulationMemoryError`, :func:`memory_problem`) with the
largest iteration count that fits.

The figures here are estimates of the peak resident memory of the run, upper bounds
measured against ``ru_maxrss`` (``tests/benchmarks/bench_simulate.py --memory``); the
interpreter and the rest of the analysis come on top.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from converter.analyse.simulate.inputs import chunk_size
from converter.analyse.simulate.inverse import CELLS
from converter.model import ERROR, Problem
from converter.options import DEFAULT_SIMULATION_MEMORY_MB, MIN_SIMULATION_MEMORY_MB

#: The default budget of a simulation run, in MB (2**20 bytes).
DEFAULT_MEMORY_MB = DEFAULT_SIMULATION_MEMORY_MB

#: The smallest budget accepted, in MB.
MIN_MEMORY_MB = MIN_SIMULATION_MEMORY_MB

#: Sensitivities are computed from at least this many iterations (or all, if fewer):
#: standard error about 0.033 at rho = 0.
MIN_SENSITIVITY_ITERATIONS = 1000

_MB = 1 << 20
_FIXED = 24 * _MB  # small arrays, allocator slack
_WORKER = 48 * _MB  # a worker process's own: its heap, pages of the parent it copies on write
_PASS_ELEMENTS = 625_000  # activities x iterations in one block of the passes
_RANK_ROWS = 16  # activities ranked together (ranks.RANK_ROWS)
_PER_ITERATION = 8  # one project duration per iteration and run (float64)
_TRANSIENT = 16  # summary and percentile copies of the project durations
_RANK_TEMPS = 20  # per ranked row and kept iteration: sort keys, ranks (measured 14)
_RANK_FIXED = 8 + 144 + 16  # centred ranks; rankdata (measured 120) or one row's tie runs;
# the ramp of ranks

#: Bytes per named risk per iteration: ``RiskDraws.occurred`` (bool), ``.impact``
#: (float32) and ``.critical`` (bool), each ``(r, N)``.
RISK_BYTES = 1 + 4 + 1

#: Bytes per ranked risk per iteration in :func:`.risk_runs.rank_risks`: the finishes
#: without the risk (float64) and its critical-hit flags (bool), each ``(t, N)``.
RANKED_BYTES = 8 + 1


class SimulationMemoryError(ValueError):
    """A simulation that cannot run within its memory budget.

    ``largest_iterations`` is the largest iteration count that fits (0: none does, the
    schedule itself is too large for the budget); ``needed_mb`` what the run would need.
    """

    def __init__(self, message: str, *, largest_iterations: int, needed_mb: int, budget_mb: int):
        super().__init__(message)
        self.largest_iterations = largest_iterations
        self.needed_mb = needed_mb
        self.budget_mb = budget_mb


@dataclass(frozen=True)
class MemoryPlan:
    """How a run fits its budget: worker processes and iterations kept for sensitivity."""

    iterations: int
    sample: int  # the first ``sample`` iterations give the sensitivities
    workers: int
    budget: int  # bytes
    needed: int  # bytes, estimated

    @property
    def sampled(self) -> bool:
        """True when the sensitivities come from fewer iterations than the run has."""
        return self.sample < self.iterations


#: The PERT-beta quantile table's bytes per activity (:func:`.inverse.pert_table`).
TABLE_BYTES = CELLS * 16


def pass_columns(n: int, cols: int) -> int:
    """Iterations handled together by the passes within a chunk of ``cols`` iterations."""
    return min(cols, max(1024, _PASS_ELEMENTS // max(n, 1)))


def chunk_bytes(n: int, cols: int, group: int = 0) -> int:
    """Work memory of one process running chunks of ``cols`` iterations.

    The samples (8 bytes per element, drawn as uniforms and turned into durations in
    place; 4 more while rounded to single precision), the passes' early and late times,
    flags and temporaries (41 + 15 bytes per element of a pass block; measured at most
    44 in all, on a network whose activities all run in parallel), and for correlated
    groups about 64 bytes per element of the largest group.
    """
    cols_pass = pass_columns(n, cols)
    return 12 * n * cols + 56 * n * cols_pass + 64 * group * cols


def risk_bytes(risks: int, ranked: int, iterations: int) -> int:
    """Bytes of the named risks' per-iteration arrays (see the module docstring).

    Examples
    --------
    30 risks, 20 of them ranked, 1 million iterations, in MB:

    >>> round(risk_bytes(30, 20, 1_000_000) / 2**20, 1)
    343.3
    """
    return (RISK_BYTES * risks + RANKED_BYTES * ranked) * iterations


def run_bytes(
    n: int,
    iterations: int,
    sample: int,
    workers: int,
    cols: int,
    group: int = 0,
    runs: int = 1,
    risks: int = 0,
    ranked: int = 0,
) -> int:
    """Estimated peak memory of a run (bytes), see the module docstring.

    Parameters
    ----------
    n, iterations : int
        Activities and iterations.
    sample : int
        Iterations whose samples are kept for the sensitivities.
    workers : int
        Processes running chunks (and ranking).
    cols : int
        Iterations per chunk.
    group : int
        Members of the largest correlation group (0: no correlation).
    runs : int
        2 for a correlated run (with its independent comparison), else 1.
    risks, ranked : int
        Named risks, and those of them ranked (:func:`risk_bytes`).

    Examples
    --------
    120 activities x 10 million iterations, every sample kept, in GB:

    >>> round(run_bytes(120, 10_000_000, 10_000_000, 1, 20_833) / 2**30, 1)
    9.3
    """
    rows = min(_RANK_ROWS, max(n, 1))
    streamed = (_PER_ITERATION * runs + _TRANSIENT) * iterations
    kept = 4 * n * sample + _RANK_FIXED * sample + workers * _RANK_TEMPS * rows * sample
    processes = workers * _WORKER if workers > 1 else 0
    table = TABLE_BYTES * n  # the PERT-beta quantile table, shared by the workers
    fixed = _FIXED + table + processes + risk_bytes(risks, ranked, iterations)
    return fixed + workers * chunk_bytes(n, cols, group) + streamed + kept


def _largest_sample(n, iterations, workers, cols, extra, budget) -> int:
    """The most iterations whose samples fit ``budget`` with all others (0: none).

    ``extra`` is ``(group, runs, risks, ranked)`` as :func:`run_bytes` takes them.
    """
    base = run_bytes(n, iterations, 0, workers, cols, *extra)
    per = run_bytes(n, iterations, 1, workers, cols, *extra) - base
    return max(0, min(iterations, (budget - base) // per))


def largest_iterations(
    n: int,
    group: int = 0,
    runs: int = 1,
    memory_mb: int | None = None,
    risks: int = 0,
    ranked: int = 0,
) -> int:
    """The largest iteration count a run of ``n`` activities can have within the budget.

    In one process, the sensitivities from :data:`MIN_SENSITIVITY_ITERATIONS` iterations
    (or all, if fewer); ``risks`` named risks, ``ranked`` of them ranked
    (:func:`risk_bytes`). 0 when not even 2 iterations fit.

    Examples
    --------
    >>> largest_iterations(120, memory_mb=200)
    4920524
    >>> largest_iterations(120, memory_mb=200, risks=30, ranked=20)
    307532
    """
    budget = budget_bytes(memory_mb)

    def fits(count: int) -> bool:
        keep = min(count, MIN_SENSITIVITY_ITERATIONS)
        cols = chunk_size(n, count)
        return run_bytes(n, count, keep, 1, cols, group, runs, risks, ranked) <= budget

    if not fits(2):
        return 0
    lo, hi = 2, budget // (_PER_ITERATION * runs + _TRANSIENT) + 2
    while lo < hi:  # the need grows with the count: the largest that fits
        mid = (lo + hi + 1) // 2
        lo, hi = (mid, hi) if fits(mid) else (lo, mid - 1)
    return lo


def budget_bytes(memory_mb: int | None) -> int:
    """The budget in bytes (``None``: :data:`DEFAULT_MEMORY_MB`); at least :data:`MIN_MEMORY_MB`."""
    mb = DEFAULT_MEMORY_MB if memory_mb is None else int(memory_mb)
    if mb < MIN_MEMORY_MB:
        raise ValueError(f"the simulation memory budget must be at least {MIN_MEMORY_MB} MB")
    return mb * _MB


def plan_memory(
    n: int,
    iterations: int,
    workers: int,
    cols: int,
    group: int = 0,
    runs: int = 1,
    memory_mb: int | None = None,
    risks: int = 0,
    ranked: int = 0,
) -> MemoryPlan:
    """Worker processes and kept iterations for a run within the budget.

    Every iteration is kept when that fits with ``workers`` processes or fewer (the
    most that fit are used). Otherwise the workers' chunk work may take at most half
    of the budget and the kept iterations are as many as then fit (fewer workers if
    that keeps more than twice as many). Raises :class:`SimulationMemoryError` when
    fewer than ``min(iterations, MIN_SENSITIVITY_ITERATIONS)`` fit in one process.
    ``risks`` named risks (``ranked`` of them ranked) take their arrays' bytes
    (:func:`risk_bytes`) off the budget before any samples are kept.

    Examples
    --------
    >>> plan = plan_memory(120, 10_000_000, 2, 20_833)
    >>> plan.sampled, plan.workers, plan.sample
    (True, 2, 448312)
    >>> plan_memory(120, 10_000, 2, 20_833).sampled
    False

    A register of 30 risks (20 ranked) takes room from the kept samples; over 10 million
    iterations it cannot run at all (the largest count that fits is named):

    >>> plan_memory(120, 1_000_000, 2, 20_833).sample
    616014
    >>> plan_memory(120, 1_000_000, 2, 20_833, risks=30, ranked=20).sample
    336511
    >>> try:
    ...     plan_memory(120, 10_000_000, 2, 20_833, risks=30, ranked=20)
    ... except SimulationMemoryError as exc:
    ...     print(exc.largest_iterations, exc.needed_mb)
    2557602 3750
    """
    budget = budget_bytes(memory_mb)
    args, extra = (n, iterations), (group, runs, risks, ranked)
    for count in range(max(1, workers), 0, -1):
        needed = run_bytes(*args, iterations, count, cols, *extra)
        if needed <= budget:
            return MemoryPlan(iterations, iterations, count, budget, needed)
    count = max(1, workers)
    while count > 1 and count * chunk_bytes(n, cols, group) > budget // 2:
        count -= 1
    sample = _largest_sample(*args, count, cols, extra, budget)
    single = _largest_sample(*args, 1, cols, extra, budget)
    if single > 2 * sample:
        count, sample = 1, single
    if sample < min(iterations, MIN_SENSITIVITY_ITERATIONS):
        largest = largest_iterations(n, group, runs, memory_mb, risks, ranked)
        need = run_bytes(*args, min(iterations, MIN_SENSITIVITY_ITERATIONS), 1, cols, *extra)
        needed_mb = -(-need // _MB)
        raise SimulationMemoryError(
            refusal_text(n, iterations, largest, needed_mb, budget // _MB, risks),
            largest_iterations=largest,
            needed_mb=needed_mb,
            budget_mb=budget // _MB,
        )
    needed = run_bytes(*args, sample, count, cols, *extra)
    return MemoryPlan(iterations, int(sample), count, budget, needed)


def refusal_text(
    n: int, iterations: int, largest: int, needed_mb: int, budget_mb: int, risks: int = 0
) -> str:
    """Why a run was refused, and the largest iteration count that fits."""
    what = f"{n:,} activities" + (f" and {risks:,} named risks" if risks else "")
    head = (
        f"the simulation of {what} x {iterations:,} iterations needs about "
        f"{needed_mb:,} MB, more than its memory budget of {budget_mb:,} MB"
    )
    if largest >= 2:
        return f"{head}; at most {largest:,} iterations fit"
    return f"{head}; no iteration count fits this many activities"


def sensitivity_std_error(sample: int, rho: float = 0.0) -> float:
    """Standard error of a Spearman rho from ``sample`` pairs (nan below 4 pairs).

    ``(1 - rho^2) sqrt(1.06 / (K - 3))``: the variance 1.06 / (K - 3) of atanh(rho)
    of Fieller, Hartley & Pearson (1957), carried back to rho by the delta method.

    References
    ----------
    Fieller, Hartley & Pearson (1957), "Tests for rank correlation coefficients. I",
    *Biometrika* 44(3/4), 470-481.

    Examples
    --------
    >>> round(sensitivity_std_error(100_003), 5)
    0.00326
    """
    if sample < 4:
        return math.nan
    return (1.0 - rho * rho) * math.sqrt(1.06 / (sample - 3))


def memory_problem(schedule, memory_mb: int | None = None) -> Problem | None:
    """An error naming the iterations setting when the schedule's simulation cannot fit.

    ``schedule`` is a validated :class:`converter.model.Schedule`; ``None`` when it fits
    (possibly with sensitivities from part of the iterations). Its risk register's
    arrays count (every risk: an upper bound of those the run draws).
    """
    from converter.analyse.simulate.risk_runs import TOP_RISKS  # it imports this module

    s = schedule.settings
    risks = len(schedule.risks)
    n, iterations = len(schedule.activities), int(s.iterations)
    members: dict[str, int] = {}
    for a in schedule.activities:
        if a.group is not None and a.optimistic < a.pessimistic:
            members[str(a.group)] = members.get(str(a.group), 0) + 1
    group = max((v for v in members.values() if v > 1), default=0)
    correlated = float(s.correlation) > 0.0 and group > 0
    try:
        plan_memory(
            n,
            iterations,
            1,
            chunk_size(n, iterations),
            group if correlated else 0,
            2 if correlated else 1,
            memory_mb,
            risks,
            min(risks, TOP_RISKS),
        )
    except SimulationMemoryError as exc:
        return refusal_problem(exc, s.source_of("iterations"))
    return None


def refusal_problem(exc: SimulationMemoryError, source: str = "default") -> Problem:
    """The :class:`~converter.model.Problem` (error) for a refused run.

    ``source`` is where the iteration count came from (``Settings.source_of``): a
    settings-sheet cell is named as the problem's place.
    """
    sheet = cell = None
    if source.startswith("settings sheet (") and "!" in source:
        sheet, cell = source[len("settings sheet (") : -1].rsplit("!", 1)
    if exc.largest_iterations >= 2:
        where = "--iterations" if source == "command line" else "Iterations"
        fix = (
            f"Set {where} to {exc.largest_iterations:,} or fewer, or raise the simulation "
            f"memory budget (now {exc.budget_mb:,} MB) to about {exc.needed_mb:,} MB."
        )
    else:
        fix = (
            f"Raise the simulation memory budget to about {exc.needed_mb:,} MB, or turn "
            "the simulation off (--no-simulation)."
        )
    return Problem(ERROR, "simulation-memory", str(exc), sheet=sheet, cell=cell, fix=fix)
