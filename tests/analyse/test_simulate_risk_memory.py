"""The simulation's memory budget counts the named risks' per-iteration arrays.

External references, named beside each check: numpy's own ``nbytes`` of the arrays the
run allocates (the byte count must equal it), and the README's "Limits" text on the
simulation's memory (a run that does not fit keeps the sensitivities of the first K
iterations, K >= 1,000, or is refused naming the largest iteration count that fits).
"""

from __future__ import annotations

import numpy as np
import pytest

from converter.analyse import simulate as sim
from converter.analyse.network import build_network
from converter.analyse.simulate import budget, inputs
from converter.analyse.simulate.risk_runs import TOP_RISKS
from converter.analyse.simulate.risks import draw_risks
from converter.model import Activity, Risk, Schedule, Settings

N_ACTS = 20


def chain_network(n: int):
    """Two parallel chains of ``n / 2`` activities each."""
    half = n // 2
    pred = [i for i in range(half - 1)] + [half + i for i in range(half - 1)]
    succ = [i + 1 for i in range(half - 1)] + [half + i + 1 for i in range(half - 1)]
    return build_network(n, pred, succ)


def register(count: int, n: int = N_ACTS) -> list[Risk]:
    """``count`` invented risks, each hitting one or two activities."""
    return [
        Risk(f"R{k}", "", 0.1 + 0.02 * (k % 5), 1.0, 2.0, 4.0, (f"A{k % n}", f"A{(k + 7) % n}"))
        for k in range(count)
    ]


def draws_for(count: int, iterations: int):
    index = {f"A{i}": i for i in range(N_ACTS)}
    return draw_risks(register(count), index, distribution="pert", iterations=iterations, seed=5)


def run(iterations: int, risks=None, mb: int = 64):
    o = np.linspace(1.0, 3.0, N_ACTS)
    return sim.simulate(
        chain_network(N_ACTS), o, o + 1.0, o + 4.0, iterations=iterations, seed=2,
        workers=1, memory_mb=mb, risks=risks,
    )  # fmt: skip


def test_risk_bytes_equal_the_arrays_allocated():
    # numpy's nbytes of what draw_risks allocates and of the ranking's (top x N) arrays,
    # built as risk_runs.rank_risks builds them (np.repeat of the finishes, the critical
    # flags of the top risks); 25 risks, so the ranking takes 20 of them
    iterations, count = 3_000, 25
    draws = draws_for(count, iterations)
    result = run(iterations, draws)
    top = result.risks.top
    assert len(top) == min(count, TOP_RISKS) == 20
    allocated = draws.occurred.nbytes + draws.impact.nbytes + draws.critical.nbytes
    without = np.repeat(np.asarray(result.durations)[None, :], len(top), axis=0)
    ranked = without.nbytes + draws.critical[top].nbytes
    assert budget.risk_bytes(count, len(top), iterations) == allocated + ranked
    assert budget.risk_bytes(count, 0, iterations) == allocated
    # the run's estimate grows by exactly these bytes (part of the fixed need)
    cols = inputs.chunk_size(N_ACTS, iterations)
    plain = budget.run_bytes(N_ACTS, iterations, iterations, 1, cols)
    with_risks = budget.run_bytes(N_ACTS, iterations, iterations, 1, cols, 0, 1, count, 20)
    assert with_risks - plain == allocated + ranked


def test_a_large_register_cuts_the_sensitivities_then_is_refused():
    # README "Limits": within the budget every iteration's samples are kept; when they do
    # not all fit, the sensitivities come from the first K (K >= 1,000); when not even
    # that fits, the run is refused naming the largest iteration count that fits
    iterations, mb = 20_000, 64
    assert run(iterations, mb=mb).sensitivity_iterations == iterations  # no risks: all kept
    cut = run(iterations, draws_for(30, iterations), mb=mb)
    assert 1_000 <= cut.sensitivity_iterations < iterations
    assert cut.memory_budget_mb == mb and len(cut.durations) == iterations  # all iterations
    large = draws_for(100, iterations)
    with pytest.raises(sim.SimulationMemoryError) as caught:
        run(iterations, large, mb=mb)
    largest = budget.largest_iterations(N_ACTS, memory_mb=mb, risks=100, ranked=TOP_RISKS)
    assert 2 <= largest < iterations
    assert caught.value.largest_iterations == largest
    assert f"at most {largest:,} iterations fit" in str(caught.value)
    assert "100 named risks" in str(caught.value)
    # the count named fits, one more does not (in one process, as the refusal assumes)
    fits = budget.plan_memory(
        N_ACTS, largest, 1, inputs.chunk_size(N_ACTS, largest), memory_mb=mb, risks=100,
        ranked=TOP_RISKS,
    )  # fmt: skip
    assert fits.sample >= 1_000
    with pytest.raises(sim.SimulationMemoryError):
        budget.plan_memory(
            N_ACTS, largest + 1, 1, inputs.chunk_size(N_ACTS, largest + 1), memory_mb=mb,
            risks=100, ranked=TOP_RISKS,
        )  # fmt: skip


def test_the_up_front_check_counts_the_register():
    # check/convert refuse before any draw: the schedule's register counts too
    acts = [Activity(f"A{i}", "", 1.0, 2.0, 5.0, row=i + 2) for i in range(N_ACTS)]
    settings = Settings(iterations=20_000, sources={"iterations": "settings sheet (Settings!B7)"})
    plain = Schedule(acts, [], settings, "plan.xlsx", "", "Activities")
    assert budget.memory_problem(plain, memory_mb=64) is None
    risky = Schedule(acts, [], settings, "plan.xlsx", "", "Activities", risks=register(100))
    problem = budget.memory_problem(risky, memory_mb=64)
    largest = budget.largest_iterations(N_ACTS, memory_mb=64, risks=100, ranked=TOP_RISKS)
    assert problem is not None and (problem.code, problem.cell) == ("simulation-memory", "B7")
    assert f"{largest:,}" in problem.fix
