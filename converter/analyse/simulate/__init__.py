"""Monte Carlo simulation over the array passes.

Modules: :mod:`.runs` (the runs: chunks, passes), :mod:`.given` (durations given from
outside), :mod:`.result` (the result and its summary), :mod:`.budget` (the memory budget),
:mod:`.inputs` (validated inputs, chunk sizes), :mod:`.sampling` (duration distributions),
:mod:`.inverse` (their quantile functions), :mod:`.correlation` (Iman-Conover rank
correlation), :mod:`.ranks` (Spearman sensitivity), :mod:`.workers` (process pool, shared
memory), :mod:`.risks` (named risks' draws), :mod:`.risk_runs` (the risks' ranking),
:mod:`.trace` (the traced iterations).
"""

from converter.analyse.simulate.budget import (
    DEFAULT_MEMORY_MB,
    MemoryPlan,
    SimulationMemoryError,
    memory_problem,
    plan_memory,
    refusal_problem,
    sensitivity_std_error,
)
from converter.analyse.simulate.correlation import induce_rank_correlation
from converter.analyse.simulate.given import simulate_durations
from converter.analyse.simulate.inputs import chunk_size
from converter.analyse.simulate.ranks import centred_ranks, spearman_rows
from converter.analyse.simulate.runs import (
    PERCENTILE_KEYS,
    SimulationResult,
    draw_samples,
    simulate,
)
from converter.analyse.simulate.sampling import durations_from_uniforms, sample_durations

__all__ = [
    "DEFAULT_MEMORY_MB",
    "PERCENTILE_KEYS",
    "MemoryPlan",
    "SimulationMemoryError",
    "SimulationResult",
    "centred_ranks",
    "chunk_size",
    "draw_samples",
    "durations_from_uniforms",
    "induce_rank_correlation",
    "memory_problem",
    "plan_memory",
    "refusal_problem",
    "sample_durations",
    "sensitivity_std_error",
    "simulate",
    "simulate_durations",
    "spearman_rows",
]
