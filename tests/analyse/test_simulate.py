"""Tests for the simulation: samplers, Monte Carlo statistics, criticality, sensitivity.

External references, named beside each check: scipy.stats (beta, triang, uniform, norm,
kstest, spearmanr, rankdata), scipy.integrate, numpy (percentile, var), the PERT
formulas of Malcolm, Roseboom, Clark & Fazar (1959, Operations Research 7(5)), Clark
(1961, Operations Research 9(2)) for the greatest of two normals, MacCrimmon & Ryavec
(1964, Operations Research 12(1)) for merge bias, Fieller, Hartley & Pearson (1957,
Biometrika 44) for the sampling spread of Spearman's rho, and the precedence
diagramming link rules (Moder, Phillips & Davis 1983, from memory of that text).
"""

from __future__ import annotations

import math
import multiprocessing
import os

import numpy as np
import pytest
from scipy import integrate, stats

from converter.analyse import simulate as sim
from converter.analyse.network import build_network, schedule
from converter.analyse.simulate import inputs, workers
from converter.model import FF, FS, SF, SS

# --------------------------------------------------------------------------- helpers


def chain(n: int):
    return build_network(n, list(range(n - 1)), list(range(1, n)))


def parallel(k: int):
    """Start milestone 0, k branches 1..k, finish milestone k+1."""
    branches = list(range(1, k + 1))
    return build_network(k + 2, [0] * k + branches, branches + [k + 1] * k)


def te(o, m, p):
    """PERT expected time (O + 4M + P) / 6 (Malcolm et al. 1959)."""
    return (np.asarray(o) + 4 * np.asarray(m) + np.asarray(p)) / 6.0


def within(value, expected, se, k=4.0):
    return abs(value - expected) <= k * se


def spearman_z_se(count):
    """Standard error of atanh(Spearman rho): sqrt(1.06 / (N - 3)) (Fieller et al. 1957)."""
    return math.sqrt(1.06 / (count - 3))


# --------------------------------------------------------------------------- samplers

ESTIMATES = [(2.0, 3.0, 9.0), (1.0, 1.0, 4.0), (3.0, 7.0, 7.5), (0.0, 5.0, 10.0), (4.0, 4.2, 30.0)]


@pytest.mark.parametrize("o,m,p", ESTIMATES)
def test_pert_sampler_matches_scipy_beta(o, m, p):
    # scipy.stats.beta with alpha = 1 + 4(M-O)/(P-O), beta = 1 + 4(P-M)/(P-O) on [O, P]
    # (the PERT-beta of Malcolm et al. 1959); Kolmogorov-Smirnov at n = 200,000.
    x = sim.sample_durations(np.random.default_rng(11), [o], [m], [p], "pert", 200_000)[0]
    a, b = 1 + 4 * (m - o) / (p - o), 1 + 4 * (p - m) / (p - o)
    assert stats.kstest(x, stats.beta(a, b, loc=o, scale=p - o).cdf).pvalue > 0.001
    assert x.min() >= o and x.max() <= p


@pytest.mark.parametrize("a,b", [(1.3, 4.7), (4.9, 1.1), (3.0, 3.0), (1.0, 5.0), (5.0, 1.0)])
def test_pert_inverse_sampler_matches_scipy(a, b):
    # scipy.stats.beta; Kolmogorov-Smirnov over 4 rows x 50,000 draws (rows drawn together)
    r = (a - 1.0) / 4.0  # the PERT-beta on [0, 1] with M = r has these shapes
    x = sim.sample_durations(
        np.random.default_rng(5), [0.0] * 4, [r] * 4, [1.0] * 4, "pert", 50_000
    )
    assert stats.kstest(x.reshape(-1), stats.beta(a, b).cdf).pvalue > 0.001


def test_pert_inverse_sampler_few_draws_per_row():
    # many rows of 3 draws; scipy.stats.beta by KS
    n = 60_000
    x = sim.sample_durations(np.random.default_rng(6), [0.0] * n, [0.15] * n, [1.0] * n, "pert", 3)
    assert stats.kstest(x.reshape(-1), stats.beta(1.6, 4.4).cdf).pvalue > 0.001


@pytest.mark.parametrize("o,m,p", ESTIMATES)
def test_triangular_sampler_matches_scipy(o, m, p):
    # scipy.stats.triang(c = (M - O)/(P - O), loc = O, scale = P - O), KS at n = 200,000
    x = sim.sample_durations(np.random.default_rng(12), [o], [m], [p], "triangular", 200_000)[0]
    dist = stats.triang((m - o) / (p - o), loc=o, scale=p - o)
    assert stats.kstest(x, dist.cdf).pvalue > 0.001


@pytest.mark.parametrize("o,m,p", ESTIMATES)
def test_uniform_sampler_matches_scipy(o, m, p):
    # scipy.stats.uniform(loc = O, scale = P - O), KS at n = 200,000
    x = sim.sample_durations(np.random.default_rng(13), [o], [m], [p], "uniform", 200_000)[0]
    assert stats.kstest(x, stats.uniform(o, p - o).cdf).pvalue > 0.001


def test_mixed_kinds_and_constants():
    rng = np.random.default_rng(3)
    # activity 0 has M midway: the PERT-beta is Beta(3, 3)
    o, m, p = [1.0, 2.0, 5.0, 3.0], [2.5, 2.0, 5.0, 4.0], [4.0, 6.0, 5.0, 9.0]
    kinds = ["pert", "uniform", "triangular", "triangular"]
    x = sim.sample_durations(rng, o, m, p, kinds, 100_000)
    assert np.all(x[2] == 5.0)  # O = P: the constant
    assert stats.kstest(x[1], stats.uniform(2.0, 4.0).cdf).pvalue > 0.001  # scipy.stats
    assert stats.kstest(x[3], stats.triang(1 / 6, loc=3.0, scale=6.0).cdf).pvalue > 0.001
    assert stats.kstest(x[0], stats.beta(3.0, 3.0, loc=1.0, scale=3.0).cdf).pvalue > 0.001


# --------------------------------------------------------------------------- serial chain

SKEWED = ([1.0, 2.0, 0.5, 3.0, 1.0], [2.0, 3.0, 1.0, 3.5, 1.5], [12.0, 9.0, 8.0, 4.0, 11.0])


def test_serial_chain_mean_and_variance():
    o, m, p = (np.array(v) for v in SKEWED)
    r = sim.simulate(chain(5), o, m, p, iterations=40_000, seed=1)
    # mean: sum of expected times (O + 4M + P)/6 (Malcolm et al. 1959), within 4 SE
    assert within(r.mean, te(o, m, p).sum(), r.std_error_mean)
    assert r.std_error_mean == pytest.approx(r.sd / math.sqrt(40_000))
    assert r.sd == pytest.approx(np.std(r.durations, ddof=1))  # numpy, ddof = 1
    # variance: sum of PERT-beta variances (mu - a)(b - mu)/7 (checked against scipy above);
    # the standard error of a sample variance is sqrt((m4 - s^4) / N) (large-sample theory)
    mu = te(o, m, p)
    beta_var = ((mu - o) * (p - mu) / 7.0).sum()
    classic = (((p - o) / 6.0) ** 2).sum()  # Malcolm et al. 1959 ((b - a)/6)^2
    y = r.durations
    s2 = y.var(ddof=1)
    se = math.sqrt((np.mean((y - y.mean()) ** 4) - s2**2) / y.size)
    assert within(s2, beta_var, se)
    assert abs(s2 - classic) > 6 * se  # the classic sum is off for skewed activities
    assert math.isnan(r.merge_bias)  # no PERT mean given


def test_serial_chain_has_no_merge_bias_and_full_criticality():
    o, m, p = (np.array(v) for v in SKEWED)
    pert_mean = schedule(chain(5), te(o, m, p)).finish
    r = sim.simulate(chain(5), o, m, p, iterations=20_000, seed=2, pert_mean=pert_mean)
    assert within(r.merge_bias, 0.0, r.std_error_mean)  # no merge: mean = PERT mean
    assert np.all(r.criticality == 1.0)  # every activity of a chain is always critical


# --------------------------------------------------------------------------- merging paths


def test_max_of_two_normals_matches_clark():
    # Clark (1961): for two iid N(mu, sigma^2), E[max] = mu + sigma / sqrt(pi) and
    # Var[max] = (1 - 1/pi) sigma^2. Normal draws fed through the same passes.
    mu, sigma, count = 50.0, 4.0, 200_000
    rng = np.random.default_rng(21)
    d = np.zeros((4, count))
    d[1:3] = rng.normal(mu, sigma, size=(2, count))
    r = sim.simulate_durations(parallel(2), d)
    assert within(r.mean, mu + sigma / math.sqrt(math.pi), r.std_error_mean)
    y = r.durations
    s2 = y.var(ddof=1)
    se = math.sqrt((np.mean((y - y.mean()) ** 4) - s2**2) / y.size)
    assert within(s2, (1 - 1 / math.pi) * sigma**2, se)
    np.testing.assert_array_equal(y, np.maximum(d[1], d[2]))  # numpy maximum


def test_max_of_two_symmetric_pert_betas():
    # A symmetric PERT-beta is bounded, so Clark's normal formula is only close. The exact
    # mean of the max of two iid draws is the integral of x d(F^2) (scipy.integrate.quad
    # with scipy.stats.beta); Clark's value with the beta's own sd is about 0.3 % off.
    o, m, p = 10.0, 20.0, 30.0
    dist = stats.beta(3.0, 3.0, loc=o, scale=p - o)
    exact = integrate.quad(lambda x: x * 2 * dist.cdf(x) * dist.pdf(x), o, p)[0]
    r = sim.simulate(
        parallel(2), [0, o, o, 0], [0, m, m, 0], [0, p, p, 0], iterations=100_000, seed=4
    )
    assert within(r.mean, exact, r.std_error_mean)
    clark = m + dist.std() / math.sqrt(math.pi)
    assert abs(clark - exact) < 0.01 * exact  # close, not equal


def test_merge_bias_positive():
    # MacCrimmon & Ryavec (1964): where parallel paths merge, the expected project length
    # exceeds the PERT (expected-times) critical path length.
    net = parallel(4)
    o, m, p = [0, 4, 4, 3, 4, 0], [0, 6, 6, 6, 5, 0], [0, 12, 10, 11, 9, 0]
    pert_mean = schedule(net, te(o, m, p)).finish
    r = sim.simulate(net, o, m, p, iterations=20_000, seed=5, pert_mean=pert_mean)
    assert r.merge_bias > 4 * r.std_error_mean
    assert r.merge_bias == pytest.approx(r.mean - pert_mean)


# --------------------------------------------------------------------------- criticality


def test_criticality_of_identical_parallel_branches():
    # k exchangeable branches: each is the longest with probability 1/k; a binomial share
    # of N iterations has standard error sqrt(p (1 - p) / N).
    k, count = 4, 20_000
    o, m, p = [0] + [2.0] * k + [0], [0] + [5.0] * k + [0], [0] + [9.0] * k + [0]
    r = sim.simulate(parallel(k), o, m, p, iterations=count, seed=6)
    se = math.sqrt((1 / k) * (1 - 1 / k) / count)
    for share in r.criticality[1 : k + 1]:
        assert within(share, 1 / k, se)
    assert r.criticality[0] == 1.0 and r.criticality[k + 1] == 1.0
    assert r.criticality[1 : k + 1].sum() == pytest.approx(1.0)  # ties have probability 0


def test_criticality_of_fixed_durations_matches_cpm():
    # With O = M = P every iteration is the deterministic schedule: criticality is 1 on
    # the CPM critical activities and 0 elsewhere (network.schedule).
    rng = np.random.default_rng(8)
    net = random_typed_network(rng, 30)
    d = rng.integers(0, 9, 30).astype(float)
    r = sim.simulate(net, d, d, d, iterations=50, seed=1)
    np.testing.assert_array_equal(r.criticality, schedule(net, d).critical.astype(float))
    assert np.all(np.isnan(r.sensitivity))  # constant durations: rank correlation undefined


# --------------------------------------------------------------------------- sensitivity


def test_sensitivity_matches_scipy_spearmanr():
    rng = np.random.default_rng(9)
    net = random_typed_network(rng, 25, typed=False)
    o = rng.uniform(1, 4, 25)
    m = o + rng.uniform(0, 3, 25)
    p = m + rng.uniform(0.5, 6, 25)
    o[7] = m[7] = p[7] = 3.0  # a constant activity: nan
    kw = dict(iterations=6_000, seed=3)
    r = sim.simulate(net, o, m, p, **kw)
    samples = sim.draw_samples(o, m, p, **kw)
    for i in range(25):
        expected = stats.spearmanr(samples[i], r.durations).statistic if i != 7 else math.nan
        assert r.sensitivity[i] == pytest.approx(expected, abs=1e-9, nan_ok=True)


def test_sensitivity_with_ties_matches_scipy():
    # Ties on both sides: integer durations, and a fixed path that often sets the finish.
    rng = np.random.default_rng(10)
    count = 3_000
    d = np.zeros((4, count), dtype=np.float32)
    d[1] = rng.integers(1, 6, count)  # branch 1: small integers (many ties)
    d[2] = 4.0 + rng.integers(0, 2, count)  # branch 2: two values
    d[0] = rng.random(count).astype(np.float32)
    d[3] = rng.integers(0, 3, count)
    r = sim.simulate_durations(parallel(2), d)
    for i in range(4):
        expected = stats.spearmanr(d[i], r.durations).statistic  # average ranks for ties
        assert r.sensitivity[i] == pytest.approx(expected, abs=1e-9)
    # the float64 path (argsort) as well
    r64 = sim.simulate_durations(parallel(2), d.astype(float))
    np.testing.assert_allclose(r64.sensitivity, r.sensitivity, atol=1e-12)


def test_sensitivity_of_a_chain_orders_by_spread():
    # In a chain the widest activity drives the total most (rank correlation, scipy).
    o, m, p = [1.0, 1.0, 1.0], [2.0, 2.0, 2.0], [3.0, 6.0, 20.0]
    r = sim.simulate(chain(3), o, m, p, iterations=5_000, seed=7)
    assert r.sensitivity[0] < r.sensitivity[1] < r.sensitivity[2]


# --------------------------------------------------------------------------- correlation


def test_induced_rank_correlation():
    o = np.array([1.0, 2.0, 1.0, 3.0, 2.0, 1.0])
    m, p = o + 2.0, o + 7.0
    groups = ["a", "a", "a", "b", "b", None]
    rho, count = 0.6, 20_000
    x = sim.draw_samples(o, m, p, groups=groups, correlation=rho, iterations=count, seed=12)
    se = spearman_z_se(count)  # Fieller, Hartley & Pearson (1957)
    for i, j in [(0, 1), (0, 2), (1, 2), (3, 4)]:
        r = stats.spearmanr(x[i], x[j]).statistic  # scipy
        assert within(math.atanh(r), math.atanh(rho), se)
    for i, j in [(0, 3), (1, 4), (2, 5), (4, 5)]:
        assert within(math.atanh(stats.spearmanr(x[i], x[j]).statistic), 0.0, se)
    # the re-ordering keeps each activity's draws: same sorted values as the independent run
    x0 = sim.draw_samples(o, m, p, groups=groups, correlation=0.0, iterations=count, seed=12)
    np.testing.assert_array_equal(np.sort(x, axis=1), np.sort(x0, axis=1))


def test_correlation_with_more_group_members_than_draws():
    # 6 members, 4 draws: the scores' own correlation matrix is singular (no correction)
    x = np.random.default_rng(3).random((6, 4))
    y = sim.induce_rank_correlation(np.random.default_rng(4), x, 0.5)
    np.testing.assert_array_equal(np.sort(y, axis=1), np.sort(x, axis=1))


def test_full_correlation_gives_equal_ranks():
    x = sim.induce_rank_correlation(
        np.random.default_rng(1), np.random.default_rng(2).random((3, 500)), 1.0
    )
    assert stats.spearmanr(x[0], x[1]).statistic == pytest.approx(1.0)
    assert stats.spearmanr(x[0], x[2]).statistic == pytest.approx(1.0)


def test_correlated_run_carries_the_independent_run():
    net = parallel(3)
    o, m, p = [0, 2, 2, 2, 0], [0, 5, 5, 5, 0], [0, 12, 12, 12, 0]
    groups = [None, "g", "g", "g", None]
    kw = dict(iterations=20_000, seed=14, groups=groups)
    r = sim.simulate(net, o, m, p, correlation=0.8, **kw)
    plain = sim.simulate(net, o, m, p, **kw)
    assert r.correlation == 0.8 and r.independent is not None
    assert r.independent.correlation == 0.0 and r.independent.independent is None
    np.testing.assert_array_equal(r.independent.durations, plain.durations)  # same seed
    # correlated branches move together, so their maximum is smaller on average
    assert r.mean < r.independent.mean - 4 * r.std_error_mean
    assert plain.independent is None
    seen = []
    sim.simulate(net, o, m, p, correlation=0.8, progress=lambda d, t: seen.append((d, t)), **kw)
    assert seen[-1] == (40_000, 40_000) and all(a[0] < b[0] for a, b in zip(seen, seen[1:]))


# --------------------------------------------------------------------------- reproducibility


def test_same_seed_same_numbers_other_seed_other_numbers():
    net = parallel(3)
    o, m, p = [0, 1, 2, 1, 0], [0, 3, 3, 4, 0], [0, 8, 6, 9, 0]
    a = sim.simulate(net, o, m, p, iterations=2_000, seed=99)
    b = sim.simulate(net, o, m, p, iterations=2_000, seed=99)
    c = sim.simulate(net, o, m, p, iterations=2_000, seed=100)
    np.testing.assert_array_equal(a.durations, b.durations)
    np.testing.assert_array_equal(a.criticality, b.criticality)
    np.testing.assert_array_equal(a.sensitivity, b.sensitivity)
    assert not np.array_equal(a.durations, c.durations)
    assert a.seed == 99 and c.seed == 100


def test_worker_processes_give_the_same_numbers(monkeypatch):
    monkeypatch.setattr(inputs, "_CHUNK_ELEMENTS", 20 * 300)  # several chunks
    rng = np.random.default_rng(15)
    net = random_typed_network(rng, 20)
    o = rng.uniform(1, 4, 20)
    m, p = o + 1.0, o + rng.uniform(1.5, 6, 20)
    groups = ["g" if i % 2 else None for i in range(20)]
    kw = dict(iterations=2_000, seed=5, groups=groups, correlation=0.5, targets={3: 6.0})
    one = sim.simulate(net, o, m, p, workers=1, **kw)
    two = sim.simulate(net, o, m, p, workers=2, **kw)
    for run_a, run_b in ((one, two), (one.independent, two.independent)):
        np.testing.assert_array_equal(run_a.durations, run_b.durations)
        np.testing.assert_array_equal(run_a.criticality, run_b.criticality)
        np.testing.assert_array_equal(run_a.sensitivity, run_b.sensitivity)
        assert run_a.target_p == run_b.target_p
    assert workers._worker_job is None  # the job went to the workers, not into the parent


def test_worker_count_follows_the_argument_not_the_environment(monkeypatch):
    # The drop folder's workers set OMP_NUM_THREADS=1; the count must not read it back.
    # Usable cores from os.sched_getaffinity (Python's os module); fork where multiprocessing
    # lists it.
    monkeypatch.setenv("OMP_NUM_THREADS", "1")
    fork = "fork" in multiprocessing.get_all_start_methods()
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    big = workers.PARALLEL_ELEMENTS
    auto = min(workers.MAX_AUTO_WORKERS, cores) if fork else 1
    assert workers.worker_count(None, big, 100) == auto
    assert workers.worker_count(None, big - 1, 100) == 1  # small runs stay in this process
    assert workers.worker_count(3, 10, 100) == (3 if fork else 1)
    assert workers.worker_count(3, 10, 2) == (2 if fork else 1)  # no more than the chunks
    assert workers.worker_count(1, big, 100) == 1


def test_simulate_equals_draw_samples_then_simulate_durations():
    rng = np.random.default_rng(16)
    net = random_typed_network(rng, 15)
    o = rng.uniform(1, 4, 15)
    m, p = o + 0.5, o + 4.0
    kw = dict(iterations=1_500, seed=8, distributions=["uniform", None, "triangular"] * 5)
    r = sim.simulate(net, o, m, p, **kw)
    again = sim.simulate_durations(net, sim.draw_samples(o, m, p, **kw))
    np.testing.assert_array_equal(r.durations, again.durations)
    np.testing.assert_array_equal(r.criticality, again.criticality)
    assert r.distribution == "mixed"


# --------------------------------------------------------------------------- typed links


def test_typed_links_give_direct_computation():
    # PDM rules (Moder et al. 1983): SS lag L: ES_s >= ES_p + L; FF lag L: EF_s >= EF_p + L;
    # SF lag L: EF_s >= ES_p + L; FS lag L: ES_s >= EF_p + L; ES >= 0.
    # 0 -SS 2-> 1 -FF 1-> 2, 0 -SF 9-> 3, 3 -FS -1-> 4
    net = build_network(5, [0, 1, 0, 3], [1, 2, 3, 4], [SS, FF, SF, FS], [2.0, 1.0, 9.0, -1.0])
    o, m, p = [1.0, 2.0, 1.0, 0.5, 2.0], [3.0, 4.0, 2.0, 1.0, 3.0], [8.0, 9.0, 7.0, 6.0, 5.0]
    kw = dict(iterations=3_000, seed=17)
    d = sim.draw_samples(o, m, p, **kw).astype(float)
    r = sim.simulate(net, o, m, p, **kw)
    ef0 = d[0]
    ef1 = 2.0 + d[1]  # SS: starts 2 after 0 starts
    ef2 = np.maximum(d[2], ef1 + 1.0)  # FF: finishes >= 1 after 1 finishes
    ef3 = np.maximum(d[3], 9.0)  # SF: finishes >= 9 after 0 starts
    ef4 = np.maximum(0.0, ef3 - 1.0) + d[4]  # FS with a lead of 1
    direct = np.max([ef0, ef1, ef2, ef3, ef4], axis=0)
    np.testing.assert_allclose(r.durations, direct, rtol=0, atol=1e-12)
    assert r.target_p == {}


def random_typed_network(rng, n, typed=True):
    count = int(rng.integers(0, 3 * n + 1))
    a, b = rng.integers(0, n, count), rng.integers(0, n, count)
    keep = a != b
    pred, succ = np.minimum(a, b)[keep], np.maximum(a, b)[keep]
    key = np.unique(pred * n + succ)
    pred, succ = key // n, key % n
    kind = rng.integers(0, 4, pred.size) if typed else np.full(pred.size, FS)
    lag = np.where(rng.random(pred.size) < 0.3, rng.integers(-3, 4, pred.size), 0).astype(float)
    return build_network(n, pred, succ, kind, lag)


# --------------------------------------------------------------------------- statistics


def test_due_percentiles_and_targets():
    o, m, p = [1.0, 2.0, 1.0], [3.0, 4.0, 2.0], [9.0, 8.0, 6.0]
    count = 10_000
    r = sim.simulate(
        chain(3), o, m, p, iterations=count, seed=19, due=11.0, targets={0: 3.5, 1: 8.0}
    )
    y = r.durations
    p_due = np.mean(y <= 11.0)
    assert r.p_meet_due == pytest.approx(p_due)
    assert r.p_meet_due_std_error == pytest.approx(math.sqrt(p_due * (1 - p_due) / count))
    assert r.p_finish_by(11.0) == pytest.approx(p_due)
    for q in (0.05, 0.1, 0.2, 0.5, 0.8, 0.9, 0.95):
        assert r.percentiles[q] == pytest.approx(np.percentile(y, 100 * q))  # numpy linear
    assert r.percentile(0.37) == pytest.approx(np.percentile(y, 37.0))
    d = sim.draw_samples(o, m, p, iterations=count, seed=19).astype(float)
    assert r.target_p[0] == pytest.approx(np.mean(d[0] <= 3.5))  # EF of the first = d0
    assert r.target_p[1] == pytest.approx(np.mean(d[0] + d[1] <= 8.0))
    assert r.iterations == count and r.distribution == "pert" and r.correlation == 0.0
    assert sim.simulate(chain(3), o, m, p, iterations=50, seed=1).p_meet_due is None


def test_bad_arguments_raise():
    net = chain(2)
    with pytest.raises(ValueError):
        sim.simulate(net, [3.0, 1.0], [2.0, 2.0], [4.0, 3.0])  # O > M
    with pytest.raises(ValueError):
        sim.simulate(net, [1.0, 1.0], [2.0, 2.0], [4.0, 3.0], distribution="lognormal")
    with pytest.raises(ValueError):
        sim.simulate(net, [1.0, 1.0], [2.0, 2.0], [4.0, 3.0], correlation=1.5)
    with pytest.raises(ValueError):
        sim.simulate(net, [1.0], [2.0], [4.0])
    with pytest.raises(ValueError):
        sim.simulate(net, [1.0, 1.0], [2.0, 2.0], [4.0, 3.0], iterations=1)


def test_convert_options_choose_the_simulation_workers(monkeypatch):
    # ConvertOptions.simulation_workers reaches simulate(workers=...); None leaves the choice
    # to the simulation (common practice: an explicit argument, no environment variable).
    from pathlib import Path

    from converter.analyse.analysis import analyse
    from converter.analyse.simulate import runs
    from converter.api import ConvertOptions, load

    seen = []
    real = runs.simulate

    def spy(*args, **kwargs):
        seen.append(kwargs.get("workers", "absent"))
        return real(*args, **kwargs)

    monkeypatch.setattr(runs, "simulate", spy)
    sample = Path(__file__).resolve().parents[2] / "samples" / "boiler-shutdown.csv"
    for workers_option in (1, None):
        options = ConvertOptions(iterations=200, simulation_workers=workers_option)
        schedule, _ = load(sample, options)
        assert analyse(schedule, options).simulation is not None
    assert seen == [1, None]
