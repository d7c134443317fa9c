"""Named risks in the simulation: their draws, their delays, their ranking.

In each iteration every risk (or risk group) occurs with its probability, one occurrence
draw per risk (or group) per iteration; when it occurs, one impact is drawn and added to
the duration of every activity the risk hits (the same draw for all of them); a
percentage impact scales each hit activity's sampled duration. Both draws invert a
uniform: the risk occurs when ``u < p``, and its impact is ``F^-1(v)`` for the impact's
distribution (PERT-beta, triangular or uniform over low, likely, high).

Random streams: risk ``r``'s occurrence uniforms come from
``np.random.SeedSequence(seed, spawn_key=(2, key))`` with ``key`` a hash of the risk's ID
(of ``"group:" + name`` for a grouped risk: one draw for the group), its impact uniforms
from ``spawn_key=(3, key of the ID)``; a whole run's worth at once. Adding or removing a
risk therefore changes neither the activity durations (streams ``(0, chunk)`` and
``(1, chunk)``) nor any other risk's draws, whatever the chunks and worker processes: the
common random numbers the ranking and the mitigated run compare with.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass
from functools import partial

import numpy as np
from scipy.special import betaincinv

from converter.analyse.pert import pert_beta_parameters
from converter.analyse.simulate.inverse import triangular_quantile, uniform_quantile
from converter.analyse.simulate.sampling import KIND_CODES, PERT, TRIANGULAR
from converter.analyse.simulate.workers import mapped
from converter.model import Risk

__all__ = [
    "RiskDraws",
    "add_delays",
    "draw_risks",
    "impact_inverse",
    "occurrence_key",
    "risk_key",
]

OCCURRENCE_STREAM, IMPACT_STREAM = 2, 3


def risk_key(text: str) -> int:
    """A stable 64-bit stream key for a risk ID (or ``"group:" + name``).

    Examples
    --------
    >>> risk_key("R1") == risk_key("R1") != risk_key("R2")
    True
    """
    return int.from_bytes(hashlib.blake2b(text.encode("utf-8"), digest_size=8).digest(), "big")


def occurrence_key(risk: Risk) -> int:
    """The key of ``risk``'s occurrence stream: its group's (``"group:" + name``) when it
    is grouped, so every risk of a group occurs together; else its own ID's.

    Examples
    --------
    >>> a = Risk("A", "", 0.5, 1.0, 1.0, 1.0, ("X",), group="G")
    >>> b = Risk("B", "", 0.5, 1.0, 1.0, 1.0, ("X",), group="G")
    >>> occurrence_key(a) == occurrence_key(b) != risk_key("A")
    True
    """
    return risk_key(f"group:{risk.group}") if risk.group is not None else risk_key(risk.id)


def uniforms(seed: int, stream: int, key: int, iterations: int) -> np.ndarray:
    """The ``iterations`` uniforms on [0, 1) of one risk's stream (see module docstring)."""
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(stream, key)))
    return rng.random(iterations)


def impact_inverse(u, low: float, likely: float, high: float, kind: str = "pert") -> np.ndarray:
    """The impact distribution's inverse CDF at ``u``.

    PERT-beta: low + (high - low) I^-1(u; alpha, beta), the inverse regularised incomplete
    beta function (scipy.special.betaincinv) with the PERT shapes; triangular with
    c = (likely - low) / (high - low): low + sqrt(u (high - low)(likely - low)) for u <= c,
    else high - sqrt((1 - u)(high - low)(high - likely)); uniform: low + u (high - low).
    low = high is the constant.

    References
    ----------
    Malcolm, Roseboom, Clark & Fazar (1959), *Operations Research* 7(5) (PERT-beta);
    Johnson, Kotz & Balakrishnan, *Continuous Univariate Distributions* (1995), vol. 2,
    ch. 25-26 (beta, triangular and uniform distribution functions).

    Examples
    --------
    >>> impact_inverse([0.0, 0.5, 1.0], 2.0, 3.0, 4.0).tolist()
    [2.0, 3.0, 4.0]
    >>> impact_inverse([0.5], 0.0, 0.0, 4.0, "uniform").tolist()
    [2.0]
    """
    u = np.asarray(u, dtype=float)
    if high <= low:
        return np.full(u.shape, float(low))
    span = high - low
    code = KIND_CODES[kind]
    if code == PERT:
        a, b = (float(x) for x in pert_beta_parameters(low, likely, high))
        return low + span * betaincinv(a, b, u)
    if code == TRIANGULAR:
        return triangular_quantile(low, likely, high, u)
    return uniform_quantile(low, high, u)


@dataclass
class RiskDraws:
    """Every risk's draws for a whole run: what the chunks add to the durations."""

    ids: list[str]
    rows: list[np.ndarray]  # activity indices each risk hits
    percent: np.ndarray  # (r,) bool: impact is a share of the sampled duration
    occurred: np.ndarray  # (r, N) bool
    impact: np.ndarray  # (r, N) float32: the impact drawn, 0 where the risk did not occur
    #: (r, N) bool, shared with worker processes: the risk occurred and an activity it hits
    #: was critical in the last run's passes (elsewhere taking its delay off cannot move
    #: the finish)
    critical: np.ndarray | None = None
    #: The register drawn, the impact distribution and the seed (to draw a traced
    #: iteration's uniforms again, :mod:`.trace_risks`)
    register: tuple[Risk, ...] = ()
    distribution: str = "pert"
    seed: int = 0

    @property
    def count(self) -> int:
        return len(self.ids)

    def before_passes(self, passes, d: np.ndarray, a: int, b: int) -> None:
        """Add the delays to chunk ``a:b``'s durations; have the passes report back which
        risks hit a critical activity."""
        add_delays(self, d, a, b)
        passes.watch = partial(_record_critical, self, a)


def _record_critical(draws: RiskDraws, a: int, crit: np.ndarray, c0: int) -> None:
    """Mark the iterations whose critical activities include one a risk hit."""
    lo, hi = a + c0, a + c0 + crit.shape[1]
    for k in range(draws.count):
        hit = crit[draws.rows[k]].any(axis=0) if draws.rows[k].size else False
        draws.critical[k, lo:hi] = np.logical_and(draws.occurred[k, lo:hi], hit)


def draw_risks(
    risks: Sequence[Risk],
    index: dict[str, int],
    *,
    distribution: str,
    iterations: int,
    seed: int,
) -> RiskDraws:
    """Occurrences and impacts of every risk for ``iterations`` iterations.

    Examples
    --------
    >>> r = Risk("R", "", 0.5, 1.0, 2.0, 3.0, ("A",))
    >>> d = draw_risks([r], {"A": 0}, distribution="pert", iterations=1000, seed=1)
    >>> bool(0.4 < d.occurred.mean() < 0.6), bool((d.impact[~d.occurred] == 0).all())
    (True, True)
    """
    count = len(risks)
    occurred = np.zeros((count, iterations), dtype=bool)
    impact = np.zeros((count, iterations), dtype=np.float32)
    for k, risk in enumerate(risks):
        u = uniforms(seed, OCCURRENCE_STREAM, occurrence_key(risk), iterations)
        occurred[k] = u < risk.probability
        u = uniforms(seed, IMPACT_STREAM, risk_key(risk.id), iterations)
        hit = occurred[k]  # the inverse only where it occurred (betaincinv is costly)
        impact[k, hit] = impact_inverse(u[hit], risk.low, risk.likely, risk.high, distribution)
    return RiskDraws(
        ids=[r.id for r in risks],
        rows=[np.array([index[a] for a in r.activities], dtype=np.intp) for r in risks],
        percent=np.array([r.percent for r in risks], dtype=bool),
        occurred=occurred,
        impact=impact,
        critical=mapped((count, iterations), bool, True),
        register=tuple(risks),
        distribution=distribution,
        seed=seed,
    )


def risk_delays(draws: RiskDraws, d: np.ndarray, a: int, b: int, k: int) -> np.ndarray:
    """Risk ``k``'s delay to each activity it hits in iterations ``a`` to ``b``.

    ``d`` holds the sampled durations of those iterations (before any risk's delay).
    """
    imp = draws.impact[k, a:b].astype(float)
    rows = draws.rows[k]
    if draws.percent[k]:
        return d[rows] * imp
    return np.broadcast_to(imp, (rows.size, b - a))


def add_delays(draws: RiskDraws, d: np.ndarray, a: int, b: int) -> None:
    """Add every risk's delay to the ``(n, b - a)`` sampled durations ``d``, in place.

    Percentage impacts scale the sampled durations (all computed before any is added).

    Examples
    --------
    >>> r = Risk("R", "", 1.0, 0.5, 0.5, 0.5, ("A",), percent=True)
    >>> draws = draw_risks([r], {"A": 0}, distribution="pert", iterations=2, seed=1)
    >>> d = np.array([[2.0, 4.0], [1.0, 1.0]])
    >>> add_delays(draws, d, 0, 2)
    >>> d.tolist()
    [[3.0, 6.0], [1.0, 1.0]]
    """
    delays = [risk_delays(draws, d, a, b, k) for k in range(draws.count) if draws.percent[k]]
    for k in range(draws.count):
        if not draws.percent[k]:
            d[draws.rows[k]] += risk_delays(draws, d, a, b, k)
    for k, delay in zip(np.flatnonzero(draws.percent), delays, strict=True):
        d[draws.rows[k]] += delay
