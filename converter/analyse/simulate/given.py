"""Analysing durations given from outside as a simulation would (same passes, same figures)."""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from converter.analyse.network import Network
from converter.analyse.simulate.inputs import chunk_size
from converter.analyse.simulate.ranks import spearman_rows
from converter.analyse.simulate.result import Counts, SimulationResult, summarise
from converter.analyse.simulate.runs import _Passes

__all__ = ["simulate_durations"]


def simulate_durations(
    net: Network,
    durations: np.ndarray,
    *,
    due: float | None = None,
    targets: dict[int, float] | None = None,
    pert_mean: float = math.nan,
    seed: int = 0,
    distribution: str = "given",
    correlation: float = 0.0,
    progress: Callable[[int, int], None] | None = None,
) -> SimulationResult:
    """Analyse a given ``(n, iterations)`` matrix of durations as a simulation would.

    Feeds samples from any source (e.g. normal draws) through the same passes and
    statistics as :func:`simulate`; ``simulate(...)`` equals
    ``simulate_durations(net, draw_samples(...))`` for the same inputs.
    """
    durations = np.asarray(durations)
    if durations.ndim != 2 or durations.shape[0] != net.n or durations.shape[1] < 2:
        raise ValueError("durations must be (activities, iterations >= 2)")
    iterations = durations.shape[1]
    passes = _Passes(net, targets)
    counts = Counts(net.n, passes.targets)
    project = np.empty(iterations)
    step = chunk_size(net.n, iterations)
    for a in range(0, iterations, step):
        b = min(a + step, iterations)
        finish, crit, hits = passes.run(np.array(durations[:, a:b], dtype=float))
        project[a:b] = finish
        counts.add(crit, hits)
        if progress is not None:
            progress(b, iterations)
    sensitivity = spearman_rows(durations, project)
    return summarise(
        project,
        counts,
        sensitivity,
        iterations=iterations,
        seed=seed,
        distribution=distribution,
        correlation=correlation,
        due=due,
        pert_mean=pert_mean,
    )
