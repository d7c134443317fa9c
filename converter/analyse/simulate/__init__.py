"""Monte Carlo simulation over the array passes.

Modules: :mod:`.runs` (the runs: chunks, passes, summary), :mod:`.inputs` (validated
inputs, chunk sizes), :mod:`.sampling` (duration distributions), :mod:`.correlation`
(Iman-Conover rank correlation), :mod:`.ranks` (Spearman sensitivity), :mod:`.workers`
(process pool, shared memory).
"""

from converter.analyse.simulate.correlation import induce_rank_correlation
from converter.analyse.simulate.inputs import chunk_size
from converter.analyse.simulate.ranks import centred_ranks, spearman_rows
from converter.analyse.simulate.runs import (
    PERCENTILE_KEYS,
    SimulationResult,
    draw_samples,
    simulate,
    simulate_durations,
)
from converter.analyse.simulate.sampling import beta_cheng, sample_durations

__all__ = [
    "PERCENTILE_KEYS",
    "SimulationResult",
    "beta_cheng",
    "centred_ranks",
    "chunk_size",
    "draw_samples",
    "induce_rank_correlation",
    "sample_durations",
    "simulate",
    "simulate_durations",
    "spearman_rows",
]
