"""PERT three-point formulas and normal probabilities against outside references."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from converter.analyse import pert
from converter.analyse.simulate import inverse, trace


class TestExpectedTime:
    def test_hand_worked(self):
        # (2 + 4*5 + 14) / 6 = 36 / 6 = 6; ((14 - 2) / 6)^2 = 4 (worked by hand)
        assert pert.expected_time(2, 5, 14) == pytest.approx(6.0)
        assert pert.variance(2, 14) == pytest.approx(4.0)
        # (1 + 4*1 + 1) / 6 = 1, variance 0: a fixed duration
        assert pert.expected_time(1, 1, 1) == 1.0
        assert pert.variance(1, 1) == 0.0

    @pytest.mark.parametrize(
        "a,m,b",
        [
            (1, 2, 6),
            (0, 3, 4),
            (2.5, 7, 30),
            (5, 5, 9),
            (3, 8, 8),
            (2.0, 3.0, 9.0),
            (4.0, 4.2, 30.0),
        ],
    )
    def test_pert_beta_moments(self, a, m, b):
        # scipy.stats.beta with the shapes the simulation samples with has mean
        # (a + 4m + b)/6 (Malcolm et al. 1959) and variance (mu - a)(b - mu)/7 (Vose 2008,
        # the PERT distribution; from memory), computed by scipy from alpha and beta alone.
        alpha, beta = pert.pert_beta_parameters(a, m, b)
        dist = stats.beta(alpha, beta, loc=a, scale=b - a)
        mu = float(pert.expected_time(a, m, b))
        assert dist.mean() == pytest.approx(mu, rel=1e-12)
        assert dist.var() == pytest.approx((mu - a) * (b - mu) / 7.0, rel=1e-12)

    def test_the_sampler_uses_these_shapes(self):
        # one home for the PERT-beta shapes: the sampler's quantile table and the trace's
        # exact quantiles import this function
        assert inverse.pert_beta_parameters is pert.pert_beta_parameters
        assert trace.pert_beta_parameters is pert.pert_beta_parameters

    def test_fixed_duration_shapes(self):
        # O = M = P: both shapes 1 (no division by zero; the sampler returns the constant)
        alpha, beta = pert.pert_beta_parameters([4.0], [4.0], [4.0])
        assert alpha.tolist() == [1.0] and beta.tolist() == [1.0]

    def test_vectorised(self):
        o, m, p = np.array([1, 2.0]), np.array([2, 4.0]), np.array([9, 6.0])
        np.testing.assert_allclose(pert.expected_time(o, m, p), [(1 + 8 + 9) / 6, 4.0])
        np.testing.assert_allclose(pert.variance(o, p), [(8 / 6) ** 2, (4 / 6) ** 2])


class TestNormal:
    # Four-decimal z-table values as printed in statistics textbooks (e.g. Rosner,
    # Fundamentals of Biostatistics, Appendix Table 3).
    @pytest.mark.parametrize("z,phi", [(0.5, 0.6915), (1.5, 0.9332), (2.0, 0.9772)])
    def test_textbook_table(self, z, phi):
        assert round(pert.p_meet(10 + z * 2, 10, 2), 4) == phi

    # Abramowitz & Stegun, Handbook of Mathematical Functions, Table 26.1 (from memory).
    @pytest.mark.parametrize("z,phi", [(1.0, 0.8413447), (3.0, 0.9986501)])
    def test_abramowitz_stegun(self, z, phi):
        assert pert.p_meet(z, 0, 1) == pytest.approx(phi, abs=5e-8)

    # Quantiles of the standard normal, textbook tables: 80/90/95/99% -> 0.8416, 1.2816,
    # 1.6449, 2.3263.
    @pytest.mark.parametrize("c,z", [(0.8, 0.8416), (0.9, 1.2816), (0.95, 1.6449), (0.99, 2.3263)])
    def test_quantiles(self, c, z):
        assert round(pert.duration_at(c, 0.0, 1.0), 4) == z

    def test_rule_of_thumb_99(self):
        # Common practice (no source): z for 99% is "about 2.33".
        assert pert.duration_at(0.99, 0, 1) == pytest.approx(2.33, abs=0.005)

    def test_against_scipy(self):
        rng = np.random.default_rng(7)
        for due, mean, sd in rng.uniform([0, 0, 0.1], [100, 100, 20], size=(50, 3)):
            assert pert.p_meet(due, mean, sd) == pytest.approx(stats.norm.cdf(due, mean, sd))
            assert pert.z_score(due, mean, sd) == pytest.approx((due - mean) / sd)
        assert pert.duration_at(0.5, 40, 3) == pytest.approx(40.0)

    def test_zero_spread(self):
        # With sd 0 the duration is certain: P is 1 when due >= mean, else 0.
        assert pert.p_meet(10, 10, 0) == 1.0
        assert pert.p_meet(9.99, 10, 0) == 0.0
        assert pert.z_score(12, 10, 0) is None
        assert pert.duration_at(0.9, 10, 0) == 10.0

    def test_monotone(self):
        ps = [pert.p_meet(d, 20, 3) for d in range(10, 31)]
        assert all(b >= a for a, b in zip(ps, ps[1:]))
        assert not math.isnan(sum(ps))
