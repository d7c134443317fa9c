"""Ranking the named risks of a run: occurrence, delay, sensitivity, and their deltas.

For every risk: the share of iterations it occurred in, its mean delay to the project
finish when it occurred (the mean finish of the iterations it occurred in minus that of
the others), and its sensitivity: Spearman's rank correlation of its sampled impact (0
when it did not occur) with the project finish (:func:`.ranks.spearman_rows`).

For the :data:`TOP_RISKS` risks of highest sensitivity, the finish without that risk
with common random numbers: every other draw (durations, other risks) is the run's own,
so the difference is the risk's own effect, not sampling noise. Only the iterations the
risk occurred in change; only those get a new forward pass (with that risk's delay taken
out), and of those only the ones in which an activity it hits was critical: elsewhere
every path through its activities has float, and taking the delay off cannot move the
finish (it stays exactly the run's). The P50, P80 and mean of that finish give the
risk's deltas.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from converter.analyse.passes import forward_into
from converter.analyse.simulate import workers as processes
from converter.analyse.simulate.budget import pass_columns
from converter.analyse.simulate.ranks import spearman_rows
from converter.analyse.simulate.risks import RiskDraws, add_delays, risk_delays

__all__ = ["TOP_RISKS", "RiskDraws", "RiskRanking", "add_delays", "rank_risks"]

#: Risks whose deltas are computed (those of highest sensitivity).
TOP_RISKS = 20


@dataclass
class RiskRanking:
    """Per risk (in register order): what it did to the finish; deltas nan outside the top."""

    ids: list[str]
    occurred: np.ndarray  # share of iterations it occurred in
    mean_delay: np.ndarray  # mean finish when it occurred minus when not (nan: always/never)
    sensitivity: np.ndarray  # Spearman rho of impact with finish (nan: constant impact)
    top: list[int]  # the risks with deltas, by sensitivity, highest first
    delta_mean: np.ndarray
    delta_p50: np.ndarray
    delta_p80: np.ndarray

    @property
    def by_p80(self) -> list[int]:
        """The ``top`` risks by P80 delta, largest first (ties by sensitivity)."""
        return sorted(self.top, key=lambda k: -self.delta_p80[k])


def top_risks(sensitivity: np.ndarray, count: int = TOP_RISKS) -> list[int]:
    """The ``count`` risks of highest sensitivity (nan last; ties in register order).

    Examples
    --------
    >>> top_risks(np.array([0.1, np.nan, 0.5, 0.1]), 3)
    [2, 0, 3]
    """
    key = np.where(np.isnan(sensitivity), -np.inf, sensitivity)
    return [int(k) for k in np.argsort(-key, kind="stable")[:count]]


def _finishes_without(job, d: np.ndarray, wanted: list[tuple], out: list[np.ndarray]) -> None:
    """Project finishes of ``d``'s columns with one risk's delay taken off each.

    ``wanted`` holds, per risk, (its rows, its columns, its delay there, its position in
    ``out``). All risks' columns go through the forward pass together, a block of
    :func:`.budget.pass_columns` at a time (the passes' fixed cost per call is shared),
    in the passes' own work memory.
    """
    n, cols = d.shape
    owner = np.concatenate([np.full(c.size, t) for t, (_, c, _, _) in enumerate(wanted)])
    where = np.concatenate([c for _, c, _, _ in wanted])
    first = np.concatenate([[0], np.cumsum([c.size for _, c, _, _ in wanted])])
    block = pass_columns(n, cols)
    for c0 in range(0, where.size, block):
        c1 = min(where.size, c0 + block)
        x, y, _ = job.passes.work(c1 - c0)
        dd = y[:n]  # the late times' rows are free in a forward pass
        np.take(d, where[c0:c1], axis=1, out=dd)
        for t in np.unique(owner[c0:c1]):
            rows, _, delay, _ = wanted[t]
            lo, hi = max(c0, first[t]), min(c1, first[t + 1])
            dd[rows, lo - c0 : hi - c0] -= delay[:, lo - first[t] : hi - first[t]]
        forward_into(job.passes.plan, dd, x, bool(dd.min() >= 0.0) if dd.size else True)
        finish = x[n:].max(axis=0) if n else np.zeros(c1 - c0)
        for t in np.unique(owner[c0:c1]):
            lo, hi = max(c0, first[t]), min(c1, first[t + 1])
            out[wanted[t][3]][lo - first[t] : hi - first[t]] = finish[lo - c0 : hi - c0]


def _final_durations(job, j: int, correlate: bool) -> np.ndarray:
    """Chunk ``j``'s sampled durations as the run's last pass saw them (before the risks):
    from the sample store where kept (it then holds the last run's), else drawn again from
    the chunk's own streams (and correlated again, for a correlated run)."""
    from converter.analyse.simulate import runs

    a, b = job.inp.chunks()[j]
    d = job.passes.samples(b - a)
    if max(0, min(b, job.sample) - a) == b - a:
        d[...] = job.store[:, a:b]
        return d
    runs._sample_chunk(job.inp, j, b - a, out=d, correlation=job.correlation if correlate else 0.0)
    runs._round_to_single(d)
    return d


def removal_chunk(job, j: int, top: list[int], correlate: bool) -> tuple[int, list]:
    """Chunk ``j``'s finishes without each of ``top``, for the iterations it occurred in."""
    a, b = job.inp.chunks()[j]
    draws: RiskDraws = job.risks
    d = _final_durations(job, j, correlate)
    cols = [np.flatnonzero(draws.critical[k, a:b]) for k in top]
    delays = [risk_delays(draws, d, a, b, k)[:, c] for k, c in zip(top, cols, strict=True)]
    add_delays(draws, d, a, b)
    finishes = [np.empty(c.size) for c in cols]
    wanted = [(draws.rows[k], cols[t], delays[t], t) for t, k in enumerate(top) if cols[t].size]
    if wanted:
        _finishes_without(job, d, wanted, finishes)
    return a, finishes


def rank_risks(job, workers, correlate: bool) -> RiskRanking:
    """The ranking of ``job.risks`` against the run's project finishes ``job.project``."""
    draws: RiskDraws = job.risks
    project = np.asarray(job.project)
    occurred = draws.occurred
    share = occurred.mean(axis=1)
    mean_delay = np.full(draws.count, np.nan)
    for k in range(draws.count):
        hit = occurred[k]
        if hit.any() and not hit.all():
            mean_delay[k] = project[hit].mean() - project[~hit].mean()
    sensitivity = spearman_rows(draws.impact, project)
    top = top_risks(sensitivity)
    without = np.repeat(project[None, :], len(top), axis=0)
    watched = draws.critical[top]
    tasks = [
        (j, top, correlate)
        for j, (a, b) in enumerate(job.inp.chunks())
        if watched[:, a:b].any()  # a chunk where no removal can move the finish: skipped
    ]
    if workers is not None:
        found = processes.map_unordered(workers, removal_chunk, tasks)
    else:
        found = (removal_chunk(job, *task) for task in tasks)
    for a, finishes in found:
        for t, k in enumerate(top):
            cols = np.flatnonzero(draws.critical[k, a : a + job.inp.chunk])
            without[t, a + cols] = finishes[t]
    deltas = np.full((3, draws.count), np.nan)
    for t, k in enumerate(top):
        mean = project.mean() - without[t].mean()
        p50, p80 = np.percentile(project, [50, 80]) - np.percentile(without[t], [50, 80])
        deltas[:, k] = (mean, p50, p80)
    return RiskRanking(draws.ids, share, mean_delay, sensitivity, top, *deltas)
