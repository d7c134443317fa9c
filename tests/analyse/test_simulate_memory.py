"""Tests for the simulation's memory budget (converter.analyse.simulate.budget).

External references, named beside each check: the peak resident set of a child process
(its VmHWM, and its VmRSS before the run, from /proc/self/status, see proc(5)),
scipy.stats.spearmanr, and Fieller, Hartley & Pearson (1957,
Biometrika 44) for the sampling spread of Spearman's rho: var(atanh rho) ~ 1.06 / (K - 3).
"""

from __future__ import annotations

import errno
import json
import multiprocessing
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from converter.analyse import simulate as sim
from converter.analyse.network import build_network
from converter.analyse.simulate import budget, inputs, ranks, runs
from converter.model import Activity, Schedule, Settings

ROOT = Path(__file__).resolve().parents[2]


def layered(n: int, layers: int, seed: int):
    """``layers`` layers of ``n / layers`` activities, each linked to 1-3 of the next layer."""
    rng = np.random.default_rng(seed)
    width = n // layers
    pred, succ = [], []
    for layer in range(layers - 1):
        for j in range(width):
            for k in rng.choice(width, size=rng.integers(1, 4), replace=False):
                pred.append(layer * width + j)
                succ.append((layer + 1) * width + int(k))
    return build_network(n, pred, succ)


def estimates(n: int, seed: int):
    rng = np.random.default_rng(seed)
    o = rng.uniform(1.0, 5.0, n)
    m = o + rng.uniform(0.0, 5.0, n)
    p = m + rng.uniform(0.5, 10.0, n)
    return o, m, p


# --------------------------------------------------------------------------- same numbers


@pytest.mark.parametrize("correlated,iterations,mb", [(False, 60_000, 100), (True, 30_000, 160)])
def test_budget_limited_run_matches_the_unlimited_one(correlated, iterations, mb):
    n = 120
    net = layered(n, 20, seed=1)
    o, m, p = estimates(n, seed=2)
    kw = dict(iterations=iterations, seed=3, workers=1, due=40.0, targets={5: 20.0})
    if correlated:
        kw.update(groups=["a" if i % 3 == 0 else None for i in range(n)], correlation=0.6)
    full = sim.simulate(net, o, m, p, memory_mb=100_000, **kw)
    part = sim.simulate(net, o, m, p, memory_mb=mb, **kw)
    assert full.sensitivity_iterations == iterations
    k = part.sensitivity_iterations
    assert 1_000 <= k < iterations  # the small budget keeps the samples of part of the run
    for a, b in [(full, part)] + ([(full.independent, part.independent)] if correlated else []):
        # every figure taken from the project durations and the counts: exactly the same
        assert np.array_equal(a.durations, b.durations)
        assert np.array_equal(a.criticality, b.criticality)
        assert (a.mean, a.sd, a.p_meet_due, a.percentiles, a.target_p) == (
            b.mean,
            b.sd,
            b.p_meet_due,
            b.percentiles,
            b.target_p,
        )
        # sensitivities: the full run's and the first-K one differ by sampling only; the
        # standard error of rho from K pairs is (1 - rho^2) sqrt(1.06 / (K - 3))
        # (Fieller, Hartley & Pearson 1957); 4.5 of them over 120 activities
        se = (1.0 - a.sensitivity**2) * budget.sensitivity_std_error(k)
        assert np.nanmax(np.abs(a.sensitivity - b.sensitivity) / se) < 4.5
    # the first-K sensitivities are Spearman's rho of the first K iterations: our ranks
    # on draw_samples, and scipy.stats.spearmanr on a few activities
    draws = sim.draw_samples(
        o,
        m,
        p,
        iterations=iterations,
        seed=3,
        groups=kw.get("groups"),
        correlation=kw.get("correlation", 0.0),
    )[:, :k]
    assert np.array_equal(sim.spearman_rows(draws, part.durations[:k]), part.sensitivity)
    for i in (0, 7, 119):
        expected = stats.spearmanr(draws[i], part.durations[:k]).statistic
        assert part.sensitivity[i] == pytest.approx(expected, abs=1e-12)


@pytest.mark.skipif(
    "fork" not in multiprocessing.get_all_start_methods(),
    reason="worker processes need the fork start method",
)
def test_budget_limited_run_in_worker_processes(monkeypatch):
    # small chunks (as in test_simulate's worker test), and no allowance for a worker's
    # interpreter, let two workers fit a small budget;
    # their first-K sensitivities are Spearman's rho of the first K iterations
    # (scipy.stats.spearmanr), the durations those of one process with no limit
    monkeypatch.setattr(inputs, "_CHUNK_ELEMENTS", 120 * 1000)
    monkeypatch.setattr(budget, "_WORKER", 0)  # no allowance for the workers' interpreters
    n, iterations = 120, 60_000
    net = layered(n, 20, seed=15)
    o, m, p = estimates(n, seed=16)
    plan = budget.plan_memory(n, iterations, 2, sim.chunk_size(n, iterations), memory_mb=64)
    assert plan.workers == 2 and plan.sampled
    one = sim.simulate(net, o, m, p, iterations=iterations, seed=17, workers=1, memory_mb=100_000)
    two = sim.simulate(net, o, m, p, iterations=iterations, seed=17, workers=2, memory_mb=64)
    k = two.sensitivity_iterations
    assert k == plan.sample
    assert np.array_equal(one.durations, two.durations)
    assert np.array_equal(one.criticality, two.criticality)
    draws = sim.draw_samples(o, m, p, iterations=iterations, seed=17)[:, :k]
    for i in (0, 50, 119):
        expected = stats.spearmanr(draws[i], two.durations[:k]).statistic
        assert two.sensitivity[i] == pytest.approx(expected, abs=1e-12)


def test_passes_by_blocks_of_columns_give_the_same_numbers(monkeypatch):
    # the columns (iterations) are independent: blocks of 7 columns or all at once agree
    # exactly (common practice: a vectorised computation must not depend on its blocking)
    net = layered(60, 6, seed=4)
    o, m, p = estimates(60, seed=5)
    d = sim.sample_durations(np.random.default_rng(6), o, m, p, "pert", 500)
    whole = runs._Passes(net, {3: 9.0}).run(d.copy())
    monkeypatch.setattr(runs, "pass_columns", lambda n, cols: min(cols, 7))
    blocks = runs._Passes(net, {3: 9.0}).run(d.copy())
    assert np.array_equal(whole[0], blocks[0]) and np.array_equal(whole[1], blocks[1])
    assert whole[2] == blocks[2]


def test_many_tied_values_ranked_row_by_row_match_scipy():
    # more tied sorted neighbours than columns sends the block down the row-by-row path;
    # scipy.stats.spearmanr (average ranks for ties) is the reference, and the block's
    # numbers are the same as each row's on its own
    rng = np.random.default_rng(7)
    x = (10.0 + rng.integers(0, 40, (16, 3_000)) * 0.25).astype(np.float32)
    y = rng.normal(size=3_000)
    y[::5] = y[0]
    centred, syy = ranks.centred_ranks(y)
    assert np.count_nonzero(np.sort(x, axis=1)[:, 1:] == np.sort(x, axis=1)[:, :-1]) > 3_000
    block = ranks.spearman_block(x, centred, syy)
    single = np.concatenate([ranks.spearman_block(x[i : i + 1], centred, syy) for i in range(16)])
    assert np.array_equal(block, single)
    expected = [stats.spearmanr(row, y).statistic for row in x]
    assert np.allclose(block, expected, rtol=0, atol=1e-12)


# --------------------------------------------------------------------------- peak memory

_CHILD = r"""
import json, sys
sys.path.insert(0, {root!r})
from tests.analyse.test_simulate_memory import layered, estimates
from converter.analyse.simulate import simulate
def status(name):
    with open("/proc/self/status") as fh:
        return next(int(line.split()[1]) for line in fh if line.startswith(name + ":"))
net = layered({n}, 10, seed=8)
o, m, p = estimates({n}, seed=9)
before = status("VmRSS")
r = simulate(net, o, m, p, iterations={iterations}, seed=10, workers=1, memory_mb={mb})
print(json.dumps(dict(before_kb=before, peak_kb=status("VmHWM"), kept=r.sensitivity_iterations)))
"""


def test_peak_memory_stays_within_the_budget():
    # 40 activities x 1,000,000 iterations under a 150 MB budget, in a fresh process: its
    # peak resident set less its resident set before the run (the interpreter, numpy, the
    # network) stays within the budget. Kept whole, the samples alone (160 MB) and their
    # rank work would not fit. The peak is the process's VmHWM (proc(5)), not ru_maxrss:
    # Linux carries into ru_maxrss the resident set of the forked copy of this (large)
    # test process from before the exec.
    n, iterations, mb = 40, 1_000_000, 150
    assert budget.run_bytes(n, iterations, iterations, 1, sim.chunk_size(n, iterations)) > (
        2 * mb << 20
    )
    code = _CHILD.format(root=str(ROOT), n=n, iterations=iterations, mb=mb)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        env=env,
        cwd=ROOT,
        timeout=600,
        check=True,
    )
    seen = json.loads(out.stdout.strip().splitlines()[-1])
    assert 1_000 <= seen["kept"] < iterations
    assert (seen["peak_kb"] - seen["before_kb"]) / 1024 <= mb


# --------------------------------------------------------------------------- refusal


def test_refusal_names_the_largest_iteration_count_that_fits():
    n, mb = 2_000, 100
    largest = budget.largest_iterations(n, memory_mb=mb)
    assert largest >= 2

    def plan(count):
        return budget.plan_memory(n, count, 1, sim.chunk_size(n, count), memory_mb=mb)

    assert plan(largest).iterations == largest  # that many fit ...
    with pytest.raises(sim.SimulationMemoryError) as caught:
        plan(largest + 1)  # ... one more does not
    assert caught.value.largest_iterations == largest
    assert f"at most {largest:,} iterations fit" in str(caught.value)
    with pytest.raises(sim.SimulationMemoryError) as caught:
        plan(10_000_000)
    assert caught.value.largest_iterations == largest
    # so many activities that one chunk exceeds the budget: nothing fits
    assert budget.largest_iterations(3_000_000, memory_mb=mb) == 0
    with pytest.raises(sim.SimulationMemoryError, match="no iteration count fits"):
        budget.plan_memory(3_000_000, 1_000, 1, 64, memory_mb=mb)
    with pytest.raises(ValueError):
        budget.budget_bytes(budget.MIN_MEMORY_MB - 1)


def test_simulate_refuses_before_allocating(monkeypatch):
    allocated = []
    real = runs.processes.mapped
    monkeypatch.setattr(
        runs.processes, "mapped", lambda *a, **k: allocated.append(a) or real(*a, **k)
    )
    net = layered(2_000, 10, seed=11)
    o, m, p = estimates(2_000, seed=12)
    with pytest.raises(sim.SimulationMemoryError):
        sim.simulate(net, o, m, p, iterations=10_000_000, workers=1, memory_mb=100)
    assert allocated == []


def _schedule(n: int, iterations: int, source: str) -> Schedule:
    acts = [Activity(f"A{i}", "", 1.0, 2.0, 4.0, row=i + 2) for i in range(n)]
    settings = Settings(iterations=iterations, sources={"iterations": source})
    return Schedule(acts, [], settings, "plan.xlsx", "", "Activities")


def test_memory_problem_names_the_settings_cell():
    # the error is a Problem (exit code 2 through the usual path) at the Iterations cell
    problem = budget.memory_problem(
        _schedule(2_000, 10_000_000, "settings sheet (Settings!B7)"), memory_mb=100
    )
    largest = budget.largest_iterations(2_000, memory_mb=100)
    assert problem is not None and problem.severity == "error"
    assert (problem.code, problem.sheet, problem.cell) == ("simulation-memory", "Settings", "B7")
    assert f"{largest:,}" in problem.message and f"{largest:,}" in problem.fix
    assert budget.memory_problem(_schedule(2_000, largest, "default"), memory_mb=100) is None
    from_cli = budget.memory_problem(_schedule(2_000, 10_000_000, "command line"), memory_mb=100)
    assert from_cli.sheet is None and "--iterations" in from_cli.fix


@pytest.mark.parametrize("fault", [MemoryError(), OSError(errno.ENOMEM, "Cannot allocate")])
def test_running_out_of_memory_is_a_simulation_memory_error(monkeypatch, fault):
    # the machine may have less free memory than the budget: never a bare MemoryError or
    # an OSError that reads like an output-file fault
    def fail(*args, **kwargs):
        raise fault

    monkeypatch.setattr(runs.processes, "mapped", fail)
    net = layered(20, 4, seed=13)
    o, m, p = estimates(20, seed=14)
    with pytest.raises(sim.SimulationMemoryError, match="ran out of memory"):
        sim.simulate(net, o, m, p, iterations=500, workers=1)


def test_convert_options_carry_the_memory_budget(monkeypatch):
    # ConvertOptions.simulation_memory_mb reaches simulate(memory_mb=...)
    from converter.analyse.analysis import analyse
    from converter.api import ConvertOptions, load

    seen = []
    real = runs.simulate

    def spy(*args, **kwargs):
        seen.append(kwargs.get("memory_mb", "absent"))
        return real(*args, **kwargs)

    monkeypatch.setattr(runs, "simulate", spy)
    sample = ROOT / "samples" / "boiler-shutdown.csv"
    for mb in (300, None):
        options = ConvertOptions(iterations=200, simulation_memory_mb=mb)
        schedule, _ = load(sample, options)
        assert analyse(schedule, options).simulation.sensitivity_iterations == 200
    assert seen == [300, None]
