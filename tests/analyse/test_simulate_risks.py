"""Named risks in the simulation and the analytic view.

External references, named beside each check: scipy.stats (beta, triang, uniform,
kstest, spearmanr), scipy.integrate (quad) and scipy.signal (fftconvolve) for the
numerical convolution, numpy (percentile), the moments of a random sum (Ross, *A First
Course in Probability*, 8th ed., 2010, section 7.5), and hand-worked serial chains.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, signal, stats

from converter.analyse.network import build_network
from converter.analyse.pert import pert_beta_parameters
from converter.analyse.risk_register import compound_moments, impact_moments, risk_view
from converter.analyse.simulate import simulate
from converter.analyse.simulate.risks import draw_risks, impact_inverse
from converter.model import Risk


def chain(n: int):
    return build_network(n, list(range(n - 1)), list(range(1, n)))


def pert_dist(lo, m, hi):
    a, b = (float(x) for x in pert_beta_parameters(lo, m, hi))
    return stats.beta(a, b, loc=lo, scale=hi - lo)


def draws(risks, n, iterations, seed=7, kind="pert"):
    index = {chr(ord("A") + i): i for i in range(n)}
    return draw_risks(risks, index, distribution=kind, iterations=iterations, seed=seed)


# --------------------------------------------------------------------------- distributions
@pytest.mark.parametrize(
    ("kind", "reference"),
    [
        ("pert", lambda lo, m, hi: pert_dist(lo, m, hi)),
        ("triangular", lambda lo, m, hi: stats.triang((m - lo) / (hi - lo), lo, hi - lo)),
        ("uniform", lambda lo, m, hi: stats.uniform(lo, hi - lo)),
    ],
)
def test_impact_inverse_and_moments_match_scipy(kind, reference):
    lo, m, hi = 1.0, 2.5, 7.0
    dist = reference(lo, m, hi)
    u = np.linspace(0.001, 0.999, 37)
    # scipy.stats: the inverse CDF (ppf) of the same distribution
    assert impact_inverse(u, lo, m, hi, kind) == pytest.approx(dist.ppf(u), abs=1e-9)
    mean, var = impact_moments(lo, m, hi, kind)
    # scipy.stats: mean and variance
    assert (float(mean), float(var)) == pytest.approx((dist.mean(), dist.var()), rel=1e-12)


@pytest.mark.parametrize(("p", "lo", "m", "hi"), [(0.3, 2, 3, 4), (0.05, 0, 1, 10), (1.0, 5, 5, 9)])
def test_compound_bernoulli_moments_against_the_distribution_of_b_times_i(p, lo, m, hi):
    impact = pert_dist(lo, m, hi)
    # the distribution of B*I built numerically: an atom (1 - p) at 0 and p times the
    # impact density (scipy.stats.beta pdf), its moments by scipy.integrate.quad
    first = p * integrate.quad(lambda x: x * impact.pdf(x), lo, hi)[0]
    second = p * integrate.quad(lambda x: x * x * impact.pdf(x), lo, hi)[0]
    mean, var = compound_moments(p, *impact_moments(lo, m, hi))
    assert (float(mean), float(var)) == pytest.approx((first, second - first**2), rel=1e-8)


# --------------------------------------------------------------------------- the mixture
def test_one_risk_on_one_activity_gives_the_mixture_by_numerical_convolution():
    o, m, p = 4.0, 6.0, 11.0  # the activity
    lo, li, hi, prob = 1.0, 2.0, 6.0, 0.35  # the risk
    n_iter = 20_000
    risk = Risk("R", "", prob, lo, li, hi, ("A",))
    net = build_network(1, [], [])
    result = simulate(
        net, [o], [m], [p], iterations=n_iter, seed=11, risks=draws([risk], 1, n_iter)
    )
    duration, impact = pert_dist(o, m, p), pert_dist(lo, li, hi)
    # F_1: the density of duration + impact by numerical convolution (scipy.signal)
    h = 0.001
    x = np.arange(0.0, 20.0, h)
    dens = signal.fftconvolve(duration.pdf(x), impact.pdf(x))[: x.size] * h
    f1 = np.cumsum(dens) * h

    def mixture(t):
        return (1 - prob) * duration.cdf(t) + prob * np.interp(t, x, f1)

    # scipy.stats.kstest: the simulated finish against (1 - p) F_0 + p F_1
    assert stats.kstest(result.durations, mixture).pvalue > 0.001


# --------------------------------------------------------------------------- common random numbers
def test_removing_a_risk_off_the_critical_path_changes_p80_by_exactly_zero():
    # A -> C and B -> C (parallel): B is 1 day, far off the critical path even when hit
    net = build_network(3, [0, 1], [2, 2])
    o, m, p = [10, 1, 1], [12, 1, 1], [15, 1, 1]
    risks = [Risk("ON", "", 0.4, 1, 2, 3, ("A",)), Risk("OFF", "", 0.5, 1, 2, 3, ("B",))]
    r = simulate(net, o, m, p, iterations=3000, seed=5, risks=draws(risks, 3, 3000))
    rank = r.risks
    assert rank.top == [0, 1]  # both ranked (fewer than 20)
    # hand-worked: B never drives C's start, so its removal leaves every finish alone
    assert (rank.delta_p80[1], rank.delta_p50[1], rank.delta_mean[1]) == (0.0, 0.0, 0.0)
    assert rank.delta_p80[0] > 0


def test_p80_delta_on_a_serial_chain_is_the_hand_shift_of_a_fixed_impact():
    net = chain(3)
    o, m, p = [2, 3, 1], [3, 5, 2], [5, 9, 4]
    risks = [Risk("SURE", "", 1.0, 3, 3, 3, ("B",)), Risk("MAYBE", "", 0.3, 2, 2, 2, ("A", "C"))]
    d = draws(risks, 3, 4000)
    r = simulate(net, o, m, p, iterations=4000, seed=2, risks=d)
    rank = r.risks
    # by hand: a serial chain's finish is the sum of durations, so a risk that always
    # occurs with impact 3 shifts every iteration (hence every percentile) by exactly 3
    assert rank.delta_p80[0] == pytest.approx(3.0, abs=1e-9)
    assert rank.delta_p50[0] == pytest.approx(3.0, abs=1e-9)
    # ... and a risk hitting two activities of the chain with impact 2 adds 4 when it
    # occurs: its mean delta is 4 x the share of iterations it occurred in
    share = d.occurred[1].mean()
    assert rank.delta_mean[1] == pytest.approx(4.0 * share, abs=1e-9)
    # mean delay when it occurred: mean finish when it occurred minus when it did not
    # (numpy means), about the 4 added, within sampling error
    hit = d.occurred[1]
    expected = r.durations[hit].mean() - r.durations[~hit].mean()
    assert rank.mean_delay[1] == pytest.approx(expected, abs=1e-9)
    assert abs(rank.mean_delay[1] - 4.0) < 0.2


def test_adding_a_risk_changes_no_other_draw_and_workers_do_not_matter():
    net = chain(3)
    o, m, p = [2, 3, 1], [3, 5, 2], [5, 9, 4]
    one = [Risk("R1", "", 0.3, 1, 2, 4, ("A",))]
    two = [*one, Risk("R2", "", 0.5, 1, 1, 1, ("C",))]
    d1, d2 = draws(one, 3, 500), draws(two, 3, 500)
    assert np.array_equal(d1.impact[0], d2.impact[0])  # R1's draws are its own
    r0 = simulate(net, o, m, p, iterations=500, seed=2)
    r2 = simulate(net, o, m, p, iterations=500, seed=2, risks=d2)
    # the activity draws are unchanged: finish with risks = finish without + delays
    assert np.allclose(r2.durations, r0.durations + d2.impact[0] + d2.impact[1], atol=1e-9)
    rw = simulate(net, o, m, p, iterations=500, seed=2, risks=d2, workers=2)
    assert np.array_equal(rw.durations, r2.durations)
    assert np.array_equal(rw.risks.delta_p80, r2.risks.delta_p80, equal_nan=True)


def test_grouped_risks_occur_in_exactly_the_same_iterations():
    risks = [
        Risk("R1", "", 0.2, 1, 2, 3, ("A",), group="storm"),
        Risk("R2", "", 0.2, 5, 6, 9, ("B",), group="storm"),
        Risk("R3", "", 0.2, 1, 2, 3, ("B",)),
    ]
    d = draws(risks, 2, 5000)
    assert np.array_equal(d.occurred[0], d.occurred[1])  # one draw for the group
    assert not np.array_equal(d.occurred[0], d.occurred[2])  # an ungrouped risk: its own
    assert not np.array_equal(d.impact[0] > 0, d.impact[1] == d.impact[0])


def test_risk_sensitivity_is_scipy_spearman_of_impact_with_finish():
    net = chain(3)
    risks = [Risk("R1", "", 0.3, 1, 2, 4, ("A",)), Risk("R2", "", 0.6, 1, 1, 1, ("C",))]
    d = draws(risks, 3, 2000)
    r = simulate(net, [2, 3, 1], [3, 5, 2], [5, 9, 4], iterations=2000, seed=2, risks=d)
    for k in range(2):
        # scipy.stats.spearmanr of the impact (0 when not occurred) with the finish
        rho = stats.spearmanr(d.impact[k], r.durations).statistic
        assert r.risks.sensitivity[k] == pytest.approx(rho, abs=1e-12)


# --------------------------------------------------------------------------- analytic view
def test_analytic_view_adds_expected_delay_and_k_squared_variance():
    risks = [
        Risk("R", "", 0.25, 2, 2, 2, ("A", "B")),
        Risk("P", "", 0.5, 0.1, 0.1, 0.1, ("B",), percent=True),
    ]
    te = np.array([3.0, 4.0])
    v = risk_view(risks, {"A": 0, "B": 1}, te, "pert")
    # by hand: 0.25 x 2 = 0.5 on A and B; 0.5 x 10% x TE 4 = 0.2 more on B
    assert v.activity_delay.tolist() == pytest.approx([0.5, 0.7])
    # Ross (2010) 7.5: variance p(1 - p) mu^2 for a fixed impact: 0.25 x 0.75 x 4
    assert v.delay_variance[0] == pytest.approx(0.75)


def test_finish_without_a_risk_equals_a_run_without_it_on_a_network():
    # the deltas against brute force: a run whose register simply lacks the risk (its
    # other draws unchanged, by the streams' keys) gives every percentile the same
    net = build_network(6, [0, 0, 1, 2, 3, 4], [1, 2, 3, 4, 5, 5])
    o, m, p = [1, 2, 2, 1, 3, 1], [2, 4, 3, 2, 5, 1], [4, 9, 6, 5, 8, 2]
    index = {c: i for i, c in enumerate("ABCDEF")}
    risks = [
        Risk("R1", "", 0.4, 1, 2, 6, ("B",)),
        Risk("R2", "", 0.3, 0.1, 0.2, 0.5, ("C", "D"), percent=True),
        Risk("R3", "", 0.6, 1, 1, 3, ("E",), group="g"),
        Risk("R4", "", 0.6, 2, 2, 2, ("A",), group="g"),
    ]

    def run(register, workers=1):
        d = draw_risks(register, index, distribution="pert", iterations=3000, seed=9)
        return simulate(net, o, m, p, iterations=3000, seed=9, risks=d, workers=workers)

    full = run(risks)
    for k in range(len(risks)):
        without = run(risks[:k] + risks[k + 1 :])
        # numpy percentiles of the brute-force run
        p50, p80 = np.percentile(full.durations, [50, 80]) - np.percentile(
            without.durations, [50, 80]
        )
        assert full.risks.delta_p80[k] == pytest.approx(p80, abs=1e-9)
        assert full.risks.delta_p50[k] == pytest.approx(p50, abs=1e-9)
        assert full.risks.delta_mean[k] == pytest.approx(full.mean - without.mean, abs=1e-9)
