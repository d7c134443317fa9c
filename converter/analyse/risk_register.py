"""The risk register in the analytic view, and the mitigated run.

For a fixed path, a risk that hits k of the path's activities adds k B I, with
B ~ Bernoulli(p) and I its impact: mean k p mu_I and variance
k^2 (p sigma_I^2 + p (1 - p) mu_I^2), the moments of a compound (random-sum) variable
with N ~ Bernoulli(p) terms: E[S] = E[N] E[I], Var[S] = E[N] Var[I] + Var[N] E[I]^2
(Ross, *A First Course in Probability*, 8th ed., 2010, section 7.5, random sums). The
weight k counts each hit activity by its coefficient on the path (+1, or 0 / -1 where
start-to-start or finish-to-finish links skip its duration); a percentage impact weighs
each hit activity by its expected duration (TE without risk), a first-order figure that
leaves out the product of the two variations. The expected durations on the Activities
sheet include their risks' expected delay, so the passes and floats run on them; the path
variances gain the risks' variance terms. A normal approximation of a path with large
discrete risks is rough: the simulation is the figure to trust.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from converter.model import Risk

__all__ = ["RiskView", "compound_moments", "impact_moments", "risk_view"]


def impact_moments(low, likely, high, kind: str = "pert") -> tuple[np.ndarray, np.ndarray]:
    """Mean and variance of the impact distribution over (low, likely, high).

    PERT-beta: mean (L + 4M + H) / 6, variance (mean - L)(H - mean) / 7 (the beta with the
    PERT shapes; Vose, *Risk Analysis: A Quantitative Guide*, 3rd ed., 2008); triangular:
    (L + M + H) / 3 and (L^2 + M^2 + H^2 - LM - LH - MH) / 18; uniform: (L + H) / 2 and
    (H - L)^2 / 12 (Johnson, Kotz & Balakrishnan 1995, vol. 2).

    Examples
    --------
    >>> [float(x) for x in impact_moments(2.0, 5.0, 14.0)]
    [6.0, 4.571428571428571]
    """
    lo, m, hi = (np.asarray(x, dtype=float) for x in (low, likely, high))
    if kind == "triangular":
        mean = (lo + m + hi) / 3.0
        return mean, (lo * lo + m * m + hi * hi - lo * m - lo * hi - m * hi) / 18.0
    if kind == "uniform":
        return (lo + hi) / 2.0, (hi - lo) ** 2 / 12.0
    mean = (lo + 4.0 * m + hi) / 6.0
    return mean, (mean - lo) * (hi - mean) / 7.0


def compound_moments(p, mean, variance) -> tuple[np.ndarray, np.ndarray]:
    """Mean p mu and variance p sigma^2 + p (1 - p) mu^2 of B I, B ~ Bernoulli(p).

    References
    ----------
    Ross, *A First Course in Probability*, 8th ed. (2010), section 7.5 (random sums).

    Examples
    --------
    >>> [float(x) for x in compound_moments(0.5, 2.0, 1.0)]
    [1.0, 1.5]
    """
    p, mean, variance = (np.asarray(x, dtype=float) for x in (p, mean, variance))
    return p * mean, p * variance + p * (1.0 - p) * mean * mean


@dataclass
class RiskView:
    """The register's figures for the analytic view and the sheets."""

    risks: list[Risk]
    impact_mean: np.ndarray  # per risk, time units (a fraction for a percentage impact)
    impact_variance: np.ndarray
    delay_mean: np.ndarray  # p mu: per unit of weight
    delay_variance: np.ndarray  # p sigma^2 + p (1 - p) mu^2: per unit of weight squared
    activity_delay: np.ndarray  # (n,) each activity's expected delay from its risks
    rows: list[list[int]]  # activity indices each risk hits
    path_weights: list[np.ndarray] = field(default_factory=list)  # per path: w per risk
    path_mean: list[float] = field(default_factory=list)  # the risks' mean on each path
    path_variance: list[float] = field(default_factory=list)  # and their variance
    mitigated: object = None  # the mitigated run's SimulationResult (None: no responses)
    #: (levels, unmitigated finish, mitigated finish) at each level, for the chart
    curve: tuple | None = None

    @property
    def any_mitigated(self) -> bool:
        return any(r.mitigated for r in self.risks)


def risk_view(risks: list[Risk], index: dict[str, int], te_base: np.ndarray, kind: str):
    """Moments and expected delays of the register (before the passes).

    Examples
    --------
    >>> r = Risk("R", "", 0.5, 2.0, 2.0, 2.0, ("B",))
    >>> v = risk_view([r], {"A": 0, "B": 1}, np.array([3.0, 4.0]), "pert")
    >>> v.activity_delay.tolist(), float(v.delay_variance[0])
    ([0.0, 1.0], 1.0)
    """
    mean, var = impact_moments(
        [r.low for r in risks], [r.likely for r in risks], [r.high for r in risks], kind
    )
    dmean, dvar = compound_moments([r.probability for r in risks], mean, var)
    rows = [[index[a] for a in r.activities] for r in risks]
    delay = np.zeros(te_base.size)
    for k, r in enumerate(risks):
        scale = te_base[rows[k]] if r.percent else 1.0
        np.add.at(delay, rows[k], dmean[k] * scale)
    return RiskView(risks, mean, var, dmean, dvar, delay, rows)


def add_path_terms(view: RiskView, paths, te_base: np.ndarray) -> None:
    """Each listed path's risk weights and terms; adds the variance term to the path.

    A path's weight for a risk is the sum, over the hit activities on it, of their
    coefficient (times TE without risk for a percentage impact). The path's mean already
    has the risks' mean through TE; its variance gains sum(delay variance x weight^2).
    """
    for path in paths:
        coef = dict(zip(path.activities, path.coefficients, strict=True))
        w = np.zeros(len(view.risks))
        for k, r in enumerate(view.risks):
            for i in view.rows[k]:
                w[k] += coef.get(i, 0) * (te_base[i] if r.percent else 1.0)
        view.path_weights.append(w)
        view.path_mean.append(float(np.dot(view.delay_mean, w)))
        extra = float(np.dot(view.delay_variance, w * w))
        view.path_variance.append(extra)
        path.variance += extra


def simulate_register(simulate, args: tuple, kwargs: dict, schedule, view: RiskView):
    """The run with the register's risks and, where responses are given, the mitigated run.

    Both runs draw from the same streams (common random numbers): the mitigated register
    changes only the probabilities and impacts the same uniforms are turned into. The
    mitigated result goes to ``view.mitigated``; the unmitigated one is returned.
    """
    from converter.analyse.simulate.risks import draw_risks

    s = schedule.settings
    index = schedule.index()
    common = dict(distribution=s.distribution, iterations=s.iterations, seed=s.seed)
    result = simulate(*args, **kwargs, risks=draw_risks(view.risks, index, **common))
    if view.any_mitigated:
        after = [r.after_response() for r in view.risks]
        again = dict(kwargs, trace=())  # the trace follows the unmitigated run
        view.mitigated = simulate(*args, **again, risks=draw_risks(after, index, **common))
        levels = np.arange(1, 100) / 100.0
        view.curve = (
            levels,
            np.percentile(result.durations, 100.0 * levels),
            np.percentile(view.mitigated.durations, 100.0 * levels),
        )
    return result
