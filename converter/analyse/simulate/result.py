"""What a simulation run gives: :class:`SimulationResult`, and the counts it is built from."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from converter.analyse.simulate.budget import sensitivity_std_error

#: Percentile keys reported in :attr:`SimulationResult.percentiles`.
PERCENTILE_KEYS: tuple[float, ...] = (
    0.01,
    0.05,
    0.1,
    0.2,
    0.3,
    0.4,
    0.5,
    0.6,
    0.7,
    0.8,
    0.9,
    0.95,
    0.99,
)


@dataclass
class SimulationResult:
    """Outcome of a simulation run (arrays indexed by activity)."""

    iterations: int
    seed: int
    distribution: str
    correlation: float
    durations: np.ndarray
    mean: float
    sd: float
    std_error_mean: float
    p_meet_due: float | None
    p_meet_due_std_error: float | None
    percentiles: dict[float, float]
    merge_bias: float
    criticality: np.ndarray
    sensitivity: np.ndarray
    target_p: dict[int, float] = field(default_factory=dict)
    independent: SimulationResult | None = None
    #: Iterations the sensitivities come from: the first ones of the run (all of them
    #: unless the run's samples did not fit the memory budget, see :mod:`.budget`).
    sensitivity_iterations: int = 0
    #: The memory budget the run was kept within, in MB (0: not recorded).
    memory_budget_mb: int = 0
    #: The named risks' ranking (:class:`.risk_runs.RiskRanking`; None: no risks).
    risks: Any = None
    #: The traced iterations (:class:`.trace.TracedIteration`), recomputed from their
    #: random numbers; empty when none were asked for.
    trace: list = field(default_factory=list)

    def __post_init__(self) -> None:
        if not self.sensitivity_iterations:
            self.sensitivity_iterations = self.iterations

    @property
    def sensitivity_std_error(self) -> float:
        """Standard error of a sensitivity near 0: sqrt(1.06 / (K - 3)) for K
        :attr:`sensitivity_iterations`, ``(1 - rho^2)`` times that for a sensitivity rho
        (:func:`.budget.sensitivity_std_error`)."""
        return sensitivity_std_error(self.sensitivity_iterations)

    def percentile(self, q: float) -> float:
        """Project duration at probability ``q`` (numpy's default linear method)."""
        return float(np.percentile(self.durations, 100.0 * q))

    def p_finish_by(self, t: float) -> float:
        """Share of iterations whose project duration is at most ``t``."""
        return float(np.count_nonzero(self.durations <= t)) / self.durations.size


class Counts:
    """Critical counts per activity and target hits, summed over chunks."""

    def __init__(self, n: int, targets: dict[int, float]):
        self.critical = np.zeros(n, dtype=np.int64)
        self.hits = {i: 0 for i in targets}

    def add(self, crit: np.ndarray, hits: dict[int, int]) -> None:
        self.critical += crit
        for i, h in hits.items():
            self.hits[i] += h


def summarise(
    project: np.ndarray,
    counts: Counts,
    sensitivity: np.ndarray,
    *,
    iterations,
    seed,
    distribution,
    correlation,
    due,
    pert_mean,
    sensitivity_iterations: int = 0,
    memory_budget_mb: int = 0,
) -> SimulationResult:
    """The result of a run from its project durations, counts and sensitivities."""
    y = project
    count = y.size
    mean = float(y.mean())
    sd = float(y.std(ddof=1))
    p_due = se_due = None
    if due is not None:
        p_due = float(np.count_nonzero(y <= float(due))) / count
        se_due = math.sqrt(p_due * (1.0 - p_due) / count)
    values = np.percentile(y, [100.0 * q for q in PERCENTILE_KEYS])
    return SimulationResult(
        iterations=iterations,
        seed=seed,
        distribution=distribution,
        correlation=float(correlation),
        durations=y,
        mean=mean,
        sd=sd,
        std_error_mean=sd / math.sqrt(count),
        p_meet_due=p_due,
        p_meet_due_std_error=se_due,
        percentiles={q: float(v) for q, v in zip(PERCENTILE_KEYS, values, strict=True)},
        merge_bias=mean - float(pert_mean),
        criticality=counts.critical / count,
        sensitivity=sensitivity,
        target_p={i: h / count for i, h in counts.hits.items()},
        sensitivity_iterations=sensitivity_iterations,
        memory_budget_mb=memory_budget_mb,
    )
