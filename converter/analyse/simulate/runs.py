"""Monte Carlo schedule simulation over the array network.

Every iteration draws one duration per activity, runs the forward and backward
passes and records the project duration, which activities were critical (total
float ~ 0) and whether each targeted activity finished by its target. This is
the simulation approach to PERT networks of Van Slyke (1963), "Monte Carlo
methods and the PERT problem", *Operations Research* 11(5), with the
criticality index (share of iterations in which an activity is critical) of
that paper.

Iterations are handled a chunk at a time: the samples of a chunk form an
``(n, c)`` matrix and both passes run on its columns a block at a time (no Python
loop per iteration). The sampled durations are rounded to float32 (about 7
significant digits) and kept as such for the rank correlation of each activity with
the project duration (:mod:`.ranks`); the passes use exactly those rounded values,
so a sensitivity can be recomputed from :func:`draw_samples`.

Memory stays within a budget (:mod:`.budget`, default 1 GB): the project durations
of every iteration and the criticality counts are always kept whole; the samples of
the first ``K`` iterations only when all ``N`` do not fit, and the sensitivities then
come from those ``K`` (:attr:`SimulationResult.sensitivity_iterations`). A run within
the budget is exactly the unlimited one.

The samplers are in :mod:`.sampling`; activities sharing a correlation group get rank
correlation ``correlation`` by Iman & Conover (:mod:`.correlation`), applied to each
chunk of iterations; large runs share the chunks among processes (:mod:`.workers`).

Randomness: chunk ``j`` draws its uniforms (one per activity and iteration, in one
call, :func:`.sampling.draw_uniforms`) from
``np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(0, j)))`` and its
correlation scores from ``spawn_key=(1, j)``, numpy's scheme for independent
streams; each duration is F^-1(u) of its uniform (:mod:`.sampling`), so an iteration
is recomputed from its uniforms alone (:func:`chunk_uniforms`). A seed therefore gives
the same numbers on every run, whatever the number of worker processes, and the
uncorrelated comparison run has exactly the same per-activity samples as the
correlated one, only in another order.
"""

from __future__ import annotations

import errno
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from converter.analyse.network import Network, critical_tolerances
from converter.analyse.passes import backward_into, forward_into, pass_plan
from converter.analyse.simulate import workers as processes
from converter.analyse.simulate.budget import (
    MemoryPlan,
    SimulationMemoryError,
    pass_columns,
    plan_memory,
)
from converter.analyse.simulate.inputs import Inputs, check_correlation, prepare
from converter.analyse.simulate.ranks import RANK_ROWS, centred_ranks, spearman_block
from converter.analyse.simulate.result import (
    PERCENTILE_KEYS,
    Counts,
    SimulationResult,
    summarise,
)
from converter.analyse.simulate.risk_runs import TOP_RISKS, RiskDraws, RiskRanking, rank_risks
from converter.analyse.simulate.sampling import durations_from_uniforms
from converter.analyse.simulate.trace import chunk_uniforms, trace_iterations
from converter.model import DEFAULT_ITERATIONS, DEFAULT_SEED, DISTRIBUTIONS

__all__ = ["PERCENTILE_KEYS", "SimulationResult", "draw_samples", "simulate"]


def _sample_chunk(
    inp: Inputs, j: int, size: int, out: np.ndarray | None = None, correlation: float = 0.0
) -> np.ndarray:
    if out is None or not out.flags.c_contiguous:
        u = chunk_uniforms(inp, j, size, correlation)
    else:
        u = chunk_uniforms(inp, j, size, correlation, out=out)  # durations in place
    return durations_from_uniforms(u, inp.o, inp.m, inp.p, inp.codes, inp.table, out)


def draw_samples(
    optimistic,
    most_likely,
    pessimistic,
    *,
    distribution: str = "pert",
    distributions: Sequence[str | None] | None = None,
    groups: Sequence[str | None] | None = None,
    correlation: float = 0.0,
    iterations: int = DEFAULT_ITERATIONS,
    seed: int = DEFAULT_SEED,
) -> np.ndarray:
    """The ``(n, iterations)`` float32 durations :func:`simulate` uses for these inputs."""
    inp = prepare(
        optimistic, most_likely, pessimistic, distribution, distributions, groups, iterations, seed
    )
    check_correlation(correlation)
    store = np.empty((inp.n, inp.iterations), dtype=np.float32)
    for j, (a, b) in enumerate(inp.chunks()):
        store[:, a:b] = _sample_chunk(inp, j, b - a, correlation=float(correlation))
    return store


# --------------------------------------------------------------------------- passes


class _Passes:
    """Both passes on a chunk of iterations and the counts taken from them."""

    def __init__(self, net: Network, targets: dict[int, float] | None):
        self.n = net.n
        self.plan = pass_plan(net)
        self.targets = {int(i): float(t) for i, t in (targets or {}).items()}
        for i in self.targets:
            if not 0 <= i < net.n:
                raise ValueError(f"target activity index {i} out of range")
        self._samples: np.ndarray | None = None
        self._work: tuple[np.ndarray, ...] | None = None
        self.watch: Callable | None = None  # watch(critical flags, first column) per block

    def samples(self, cols: int) -> np.ndarray:
        """A reused ``(n, cols)`` matrix for the durations of a chunk."""
        if self._samples is None or self._samples.shape[1] != cols:
            self._samples = None  # the old one goes first
            self._samples = processes.mapped((self.n, cols), float)
        return self._samples

    def work(self, cols: int) -> tuple[np.ndarray, ...]:
        """Reused early times, late times and flags for ``cols`` iterations (or more)."""
        if self._work is None or self._work[0].shape[1] < cols:
            n = self.n
            self._work = None
            self._work = (
                processes.mapped((2 * n, cols), float),
                processes.mapped((2 * n, cols), float),
                processes.mapped((n, cols), bool),
            )
        return tuple(w[:, :cols] for w in self._work)

    def run(self, d: np.ndarray) -> tuple[np.ndarray, np.ndarray, dict[int, int]]:
        """Project finish per column, critical counts per activity, target hits.

        The columns are independent, so the passes take a block of
        :func:`.budget.pass_columns` of them at a time (the same numbers as all at once).
        """
        n, cols = d.shape
        nonneg = bool(d.min() >= 0.0) if d.size else True
        block = pass_columns(n, cols)
        finish = np.empty(cols)
        critical = np.zeros(n, dtype=np.int64)
        hits = dict.fromkeys(self.targets, 0)
        for c0 in range(0, cols, block):
            c1 = min(cols, c0 + block)
            critical += self._block(d[:, c0:c1], nonneg, finish[c0:c1], hits)
            if self.watch is not None:  # e.g. which risks hit a critical activity
                self.watch(self._work[2][:, : c1 - c0], c0)
        return finish, critical, hits

    def _block(
        self, d: np.ndarray, nonneg: bool, finish: np.ndarray, hits: dict[int, int]
    ) -> np.ndarray:
        """Both passes on the columns of ``d``: their finish into ``finish``, target hits
        added to ``hits``; returns the critical count per activity."""
        n, cols = d.shape
        x, y, crit = self.work(cols)
        forward_into(self.plan, d, x, nonneg)
        finish[...] = x[n:].max(axis=0) if n else 0.0
        backward_into(self.plan, d, finish, y, nonneg)
        tf = y[:n]
        tf -= x[:n]
        np.less_equal(tf, critical_tolerances(finish), out=crit)
        for i, t in self.targets.items():
            hits[i] += int(np.count_nonzero(x[n + i] <= t))
        return crit.sum(axis=1)


# --------------------------------------------------------------------------- runs


@dataclass
class _Job:
    """What a run's chunks need; handed to the worker processes of a parallel run."""

    inp: Inputs
    passes: _Passes
    store: np.ndarray  # (n, sample) float32 samples of the first ``sample`` iterations
    project: np.ndarray  # (iterations,) project durations of the current run
    centred: np.ndarray  # (sample,) centred ranks of ``project[:sample]`` for the rank step
    correlation: float
    risks: RiskDraws | None = None  # named risks' draws, added to each chunk's durations
    ranking: RiskRanking | None = None  # the risks' ranking, after the last run

    @property
    def sample(self) -> int:
        return self.store.shape[1]


def _round_to_single(d: np.ndarray) -> None:
    """Round ``d`` in place to float32 values, as a float32 store would (a row block at
    a time)."""
    step = max(1, 1_000_000 // max(d.shape[1], 1))
    for r0 in range(0, d.shape[0], step):
        d[r0 : r0 + step] = d[r0 : r0 + step].astype(np.float32)


def _chunk(job: _Job, j: int, correlate: bool) -> tuple[int, np.ndarray, dict[int, int]]:
    """Sample chunk ``j`` (for the correlated run, from its re-ordered uniforms), run the
    passes.

    The chunk's samples are rounded to float32 and, for the iterations kept
    (:attr:`_Job.sample`), stored. The correlated run draws the chunk's uniforms again
    (the same numbers from the chunk's own stream) and re-orders them within each group.
    """
    a, b = job.inp.chunks()[j]
    kept = max(0, min(b, job.sample) - a)  # the chunk's leading iterations in the store
    d = job.passes.samples(b - a)
    _sample_chunk(job.inp, j, b - a, out=d, correlation=job.correlation if correlate else 0.0)
    _round_to_single(d)  # the passes use the values a float32 store holds
    job.store[:, a : a + kept] = d[:, :kept]
    if job.risks is not None:  # the named risks' delays, and what to watch in the passes
        job.risks.before_passes(job.passes, d, a, b)
    finish, crit, hits = job.passes.run(d)
    job.project[a:b] = finish
    return b - a, crit, hits


def _ranked(job: _Job, r0: int, r1: int, syy: float) -> tuple[int, np.ndarray]:
    """Sensitivity of activities ``r0`` to ``r1``: ``r0`` and their rank correlations."""
    out = np.empty(r1 - r0)
    for a in range(r0, r1, RANK_ROWS):
        b = min(r1, a + RANK_ROWS)
        out[a - r0 : b - r0] = spearman_block(job.store[a:b], job.centred, syy)
    return r0, out


def _rank_project(job: _Job) -> float:
    """Centred ranks of the kept iterations' project durations into ``job.centred``."""
    return centred_ranks(job.project[: job.sample], out=job.centred)[1]


def _run_serial(job: _Job, correlate: bool, tick) -> tuple[Counts, np.ndarray]:
    counts = Counts(job.inp.n, job.passes.targets)
    for j in range(len(job.inp.chunks())):
        done, crit, hits = _chunk(job, j, correlate)
        counts.add(crit, hits)
        tick(done)
    return counts, _ranked(job, 0, job.inp.n, _rank_project(job))[1]


def _run_parallel(workers, job: _Job, correlate: bool, tick) -> tuple[Counts, np.ndarray]:
    counts = Counts(job.inp.n, job.passes.targets)
    tasks = [(j, correlate) for j in range(len(job.inp.chunks()))]
    for done, crit, hits in processes.map_unordered(workers, _chunk, tasks):
        counts.add(crit, hits)
        tick(done)
    syy = _rank_project(job)
    n = job.inp.n
    step = max(RANK_ROWS, -(-n // (8 * RANK_ROWS)) * RANK_ROWS)
    sensitivity = np.empty(n)
    ranges = [(r0, min(n, r0 + step), syy) for r0 in range(0, n, step)]
    for r0, values in processes.map_unordered(workers, _ranked, ranges):
        sensitivity[r0 : r0 + values.size] = values
    return counts, sensitivity


def _run_name(inp: Inputs, default: str) -> str:
    kinds = set(inp.codes[inp.o < inp.p].tolist())
    if len(kinds) > 1:
        return "mixed"
    return DISTRIBUTIONS[kinds.pop()] if kinds else default


def _both_runs(job: _Job, runs: tuple[bool, ...], count: int, tick) -> list[tuple]:
    """(project durations, counts, sensitivity) of each run, in ``count`` processes."""
    results = []
    if count > 1:
        with processes.pool(count, job) as workers:
            for correlate in runs:
                counts, sens = _run_parallel(workers, job, correlate, tick)
                results.append((_durations(job, correlate == runs[-1]), counts, sens))
            job.ranking = rank_risks(job, workers, runs[-1]) if job.risks else None
    else:
        for correlate in runs:
            counts, sens = _run_serial(job, correlate, tick)
            results.append((_durations(job, correlate == runs[-1]), counts, sens))
        job.ranking = rank_risks(job, None, runs[-1]) if job.risks else None
    return results


def _durations(job: _Job, last: bool) -> np.ndarray:
    """The run's project durations: the job's own array after the last run, else a copy."""
    return job.project if last else job.project.copy()


def simulate(
    net: Network,
    optimistic,
    most_likely,
    pessimistic,
    *,
    distribution: str = "pert",
    distributions: Sequence[str | None] | None = None,
    groups: Sequence[str | None] | None = None,
    correlation: float = 0.0,
    iterations: int = DEFAULT_ITERATIONS,
    seed: int = DEFAULT_SEED,
    due: float | None = None,
    targets: dict[int, float] | None = None,
    pert_mean: float = math.nan,
    progress: Callable[[int, int], None] | None = None,
    workers: int | None = None,
    memory_mb: int | None = None,
    risks: RiskDraws | None = None,
    trace: Sequence[float] = (),
) -> SimulationResult:
    """Monte Carlo simulation of the network's project duration (see module docstring).

    Parameters
    ----------
    net : Network
        The network, from :func:`converter.analyse.network.build_network`.
    optimistic, most_likely, pessimistic : array_like
        Three-point estimates per activity (O <= M <= P).
    distribution : str
        ``"pert"``, ``"triangular"`` or ``"uniform"``, for activities without their own.
    distributions : sequence of str or None, optional
        One distribution per activity (None: ``distribution``).
    groups : sequence of str or None, optional
        Correlation group per activity (None: in no group).
    correlation : float
        Rank correlation within each group, in [0, 1].
    iterations, seed : int
        Number of iterations (>= 2) and the random seed.
    due : float, optional
        Due date as an offset: the result gives the share of iterations meeting it.
    targets : dict of int to float, optional
        Activity index -> target offset: the share of iterations it finishes by then.
    pert_mean : float
        The analytic project mean, for the merge bias (nan: not given).
    progress : callable, optional
        ``progress(done, total)`` after each chunk; ``total`` counts the iterations of
        both runs when there are two.
    workers : int, optional
        Processes to share the run (1: this process only). None chooses: from 20 million
        samples one per usable core up to 4, else 1. More than 1 needs the ``fork`` start
        method and a process that is not itself a daemonic worker (else 1 is used). The
        numbers do not depend on it. Fewer are used where the memory budget needs it.
    memory_mb : int, optional
        Memory budget of the run in MB (None: :data:`.budget.DEFAULT_MEMORY_MB`); see
        :mod:`.budget` for what it bounds and how.
    risks : RiskDraws, optional
        Named risks' draws (:mod:`.risks`); the result's ``risks`` ranks them.
    trace : sequence of float
        Quantiles whose nearest iterations are traced (1: the longest iteration), see
        :mod:`.trace`; the result's ``trace`` (of the correlated run when there are two).

    Returns
    -------
    SimulationResult
        With ``correlation > 0`` and at least one group of two or more varying
        activities, its ``independent`` is the same run (same samples, same seed)
        without the correlation. Its ``sensitivity_iterations`` tells how many (first)
        iterations the sensitivities come from.

    Raises
    ------
    SimulationMemoryError
        The run cannot fit the budget (nor can it run in the memory the machine has);
        it names the largest iteration count that fits.

    References
    ----------
    Van Slyke (1963), "Monte Carlo methods and the PERT problem", *Operations Research*
    11(5), 839-860.

    Examples
    --------
    Two parallel activities between two milestones; the longer one is usually critical:

    >>> from converter.analyse.network import build_network
    >>> net = build_network(4, [0, 0, 1, 2], [1, 2, 3, 3])
    >>> r = simulate(net, [0, 2, 4, 0], [0, 3, 6, 0], [0, 9, 8, 0], iterations=2000, seed=1)
    >>> float(r.criticality[0]), bool(r.criticality[2] > 0.8), r.mean > 6.0
    (1.0, True, True)
    """
    inp = prepare(
        optimistic, most_likely, pessimistic, distribution, distributions, groups, iterations, seed
    )
    check_correlation(correlation)
    if inp.n != net.n:
        raise ValueError("one estimate per network activity is needed")
    correlated = float(correlation) > 0.0 and bool(inp.groups)
    total = (2 if correlated else 1) * inp.iterations
    done = [0]

    def tick(count: int) -> None:
        done[0] += count
        if progress is not None:
            progress(done[0], total)

    count = processes.worker_count(workers, inp.n * inp.iterations, len(inp.chunks()))
    group = max((g.size for g in inp.groups), default=0) if correlated else 0
    named = risks.count if risks is not None else 0  # the risks' arrays count in the plan
    plan = plan_memory(
        inp.n,
        inp.iterations,
        count,
        inp.chunk,
        group,
        1 + correlated,
        memory_mb,
        named,
        min(named, TOP_RISKS),
    )
    try:
        results, ranking = _run(net, inp, plan, targets, float(correlation), tick, risks)
    except (MemoryError, OSError) as exc:
        if isinstance(exc, OSError) and exc.errno != errno.ENOMEM:
            raise
        raise _out_of_memory(inp, plan) from None
    common = dict(
        iterations=inp.iterations,
        seed=inp.seed,
        due=due,
        pert_mean=pert_mean,
        distribution=_run_name(inp, distribution),
        sensitivity_iterations=plan.sample,
        memory_budget_mb=plan.budget >> 20,
    )
    first = summarise(*results[0], correlation=0.0, **common)
    result = first
    if correlated:
        result = summarise(*results[1], correlation=correlation, **common)
        result.independent = first
    result.risks = ranking
    rho = float(correlation) if correlated else 0.0
    result.trace = trace_iterations(net, inp, result.durations, rho, trace, risks) if trace else []
    return result


def _run(net, inp: Inputs, plan: MemoryPlan, targets, correlation: float, tick, risks) -> tuple:
    """Both runs (the correlated one only when there are groups to correlate)."""
    shared = plan.workers > 1
    store = processes.mapped((inp.n, plan.sample), np.float32, shared)
    project = processes.mapped((inp.iterations,), float, shared)
    centred = processes.mapped((plan.sample,), float, shared)
    job = _Job(inp, _Passes(net, targets), store, project, centred, correlation, risks)
    correlated = correlation > 0.0 and bool(inp.groups)
    return _both_runs(job, (False, True)[: 1 + correlated], plan.workers, tick), job.ranking


def _out_of_memory(inp: Inputs, plan: MemoryPlan) -> SimulationMemoryError:
    """The error for a run the machine had no memory for, though the budget allowed it."""
    mb = plan.budget >> 20
    return SimulationMemoryError(
        f"the machine ran out of memory for the simulation of {inp.n:,} activities x "
        f"{inp.iterations:,} iterations (its budget is {mb:,} MB; less is free)",
        largest_iterations=0,
        needed_mb=-(-plan.needed // (1 << 20)),
        budget_mb=mb,
    )
