"""The quantile functions of the samplers against scipy.stats' exact ones.

The PERT-beta quantile is tabulated (converter.analyse.simulate.inverse); its stated
accuracy (ACCURACY = 1e-6 on the standardised [0, 1] scale) is checked against
scipy.stats.beta.ppf at many random (r, u), the tails u in [1e-12, 1e-3] and
[1 - 1e-3, 1 - 1e-12] included; the triangular and uniform quantiles against
scipy.stats.triang.ppf and scipy.stats.uniform.ppf.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from converter.analyse.simulate import inverse
from converter.analyse.simulate.sampling import durations_from_uniforms, kind_codes

ROWS, DRAWS = 2_000, 100  # 200,000 random (r, u) pairs per range of u


def _random_r(rng) -> np.ndarray:
    r = rng.random(ROWS)
    r[:7] = [0.0, 1.0, 0.5, 1e-9, 1.0 - 1e-9, 0.01, 0.99]  # the ends and the table's rows
    return r


@pytest.mark.parametrize(
    "where",
    ["whole", "lower tail", "upper tail", "grid rows"],
)
def test_pert_quantile_within_stated_accuracy_of_scipy(where):
    # scipy.stats.beta.ppf(u, 1 + 4r, 1 + 4(1 - r)): the PERT-beta's standardised quantile
    # (shapes of Malcolm et al. 1959)
    rng = np.random.default_rng(["whole", "lower tail", "upper tail", "grid rows"].index(where))
    r = _random_r(rng)
    if where == "grid rows":
        r = np.round(r * inverse.ROWS) / inverse.ROWS
    if where == "lower tail":
        u = 10.0 ** rng.uniform(-12.0, -3.0, (ROWS, DRAWS))
    elif where == "upper tail":
        u = 1.0 - 10.0 ** rng.uniform(-12.0, -3.0, (ROWS, DRAWS))
    else:
        u = rng.random((ROWS, DRAWS))
    approx = inverse.evaluate(inverse.pert_table(r), u)
    exact = stats.beta.ppf(u, 1.0 + 4.0 * r[:, None], 1.0 + 4.0 * (1.0 - r[:, None]))
    assert np.isfinite(exact).all()
    assert np.abs(approx - exact).max() < inverse.ACCURACY


def test_pert_quantile_at_the_ends_and_the_middle():
    # Beta(a, b) quantiles: 0 at u = 0, the median 1/2 of the symmetric Beta(3, 3) at
    # u = 1/2 (symmetry), and scipy.stats.beta.ppf at the nodes next to the ends
    r = np.array([0.0, 0.5, 1.0, 0.3])
    u = np.array([[0.0, 0.5, 1e-15, 1.0 - 1e-15]] * 4)
    approx = inverse.evaluate(inverse.pert_table(r), u)
    exact = stats.beta.ppf(u, 1.0 + 4.0 * r[:, None], 1.0 + 4.0 * (1.0 - r[:, None]))
    assert np.abs(approx - exact).max() < inverse.ACCURACY
    assert approx[1, 1] == pytest.approx(0.5, abs=inverse.ACCURACY)


def test_scaled_durations_against_scipy_for_each_distribution():
    # scipy.stats.beta / triang / uniform .ppf with loc = O, scale = P - O: the durations
    # F^-1(u) the sampler gives, kind by kind, tails included
    rng = np.random.default_rng(9)
    n = 600
    o = rng.uniform(0.0, 10.0, n)
    m = o + rng.uniform(0.0, 10.0, n)
    p = m + rng.uniform(0.1, 20.0, n)
    codes = kind_codes(["pert", "triangular", "uniform"] * (n // 3), n)
    u = np.concatenate(
        [
            rng.random((n, 50)),
            10.0 ** rng.uniform(-12, -3, (n, 25)),
            1 - 10.0 ** rng.uniform(-12, -3, (n, 25)),
        ],
        axis=1,
    )
    x = durations_from_uniforms(u, o, m, p, codes)
    width = (p - o)[:, None]
    r = ((m - o) / (p - o))[:, None]
    exact = np.where(
        codes[:, None] == 0,
        stats.beta.ppf(u, 1 + 4 * r, 1 + 4 * (1 - r), loc=o[:, None], scale=width),
        np.where(
            codes[:, None] == 1,
            stats.triang.ppf(u, r, loc=o[:, None], scale=width),
            stats.uniform.ppf(u, loc=o[:, None], scale=width),
        ),
    )
    assert (np.abs(x - exact) <= inverse.ACCURACY * width + 1e-12 * np.abs(exact)).all()


def test_triangular_and_uniform_quantiles_are_exact():
    # scipy.stats.triang.ppf and scipy.stats.uniform.ppf to rounding
    rng = np.random.default_rng(4)
    u = rng.random(10_000)
    lo, mode, hi = 2.0, 3.5, 9.0
    tri = inverse.triangular_quantile(lo, mode, hi, u)
    assert np.allclose(tri, stats.triang.ppf(u, (mode - lo) / (hi - lo), lo, hi - lo), atol=1e-12)
    uni = inverse.uniform_quantile(lo, hi, u)
    assert np.allclose(uni, stats.uniform.ppf(u, lo, hi - lo), atol=1e-12)
