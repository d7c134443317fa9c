"""Traced iterations: chosen iterations of a run, recomputed from their random numbers.

Every duration of an iteration is F^-1(u) of one uniform u (:mod:`.sampling`), and the
uniforms of chunk ``j`` come from that chunk's own streams (:func:`chunk_uniforms`).
So any iteration can be drawn again after the run without keeping its numbers: the
chunk's uniforms are drawn again (and re-ordered by the same Iman-Conover step for a
correlated run), and the iteration's column is taken.

For each traced iteration the trace keeps the uniform of every activity, the duration
the simulation used (the tabulated quantile, rounded to single precision like every
sample) and the exact quantile (scipy: ``betaincinv`` for the PERT-beta, the closed
forms for the triangular and the uniform), the exact schedule's early start and finish
(the forward pass of :func:`converter.analyse.network.schedule`, the one the Activities
sheet mirrors) and the finish the simulation recorded. The exact and the recorded
finish differ by at most :attr:`TracedIteration.allowed`: the table's accuracy
(:data:`.inverse.ACCURACY` times P - O) plus the single-precision rounding of each
duration, summed along the longest path by that spread (over all activities where a
link is other than finish-to-start).

Named risks (:mod:`.trace_risks`): each risk's occurrence and impact uniforms are drawn
again from the risks' own streams, one :class:`Draw` each in :attr:`TracedIteration.draws`;
the delays of the risks that occurred are added into the traced durations as the run
added them, and the bound grows by each delay's own rounding (single-precision impacts,
and for a percentage impact the spread of the duration it scales).

Start floors and a project in flight need nothing of their own here: the run's network
carries the floors (Not before, the status date, actual starts) and its estimates the
remaining work (finished activities fixed, in progress the time worked plus the
remaining estimate), and the trace runs on both. The bound ignores the floors (a floor
is exact, and the early start's MAX moves no more than its largest argument).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
from scipy import special

from converter.analyse.network import Network, schedule
from converter.analyse.pert import pert_beta_parameters
from converter.analyse.simulate.correlation import induce_rank_correlation
from converter.analyse.simulate.inputs import Inputs
from converter.analyse.simulate.inverse import ACCURACY, triangular_quantile, uniform_quantile
from converter.analyse.simulate.risks import RiskDraws
from converter.analyse.simulate.sampling import (
    PERT,
    TRIANGULAR,
    draw_uniforms,
    durations_from_uniforms,
)
from converter.analyse.simulate.trace_risks import (
    IMPACT,
    OCCURRENCE,
    delay_spread,
    exact_delays,
    risk_uniforms,
    simulated_with_delays,
    traced_risks,
)
from converter.model import FS

#: The iterations traced when nothing else is asked: nearest the simulated P50, P80 and
#: P90, and the longest (the quantile 1).
DEFAULT_TRACE: tuple[float, ...] = (0.5, 0.8, 0.9, 1.0)

#: Above this many activities only each traced iteration's critical activities are traced.
FULL_TRACE_LIMIT = 2_000


def stream(seed: int, kind: int, chunk: int) -> np.random.Generator:
    """The random stream ``kind`` (0 uniforms, 1 correlation scores) of chunk ``chunk``."""
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(kind, chunk)))


def chunk_uniforms(
    inp: Inputs, j: int, size: int, correlation: float = 0.0, out: np.ndarray | None = None
) -> np.ndarray:
    """The ``(n, size)`` uniforms of chunk ``j`` (into ``out`` if given); with
    ``correlation`` re-ordered within each group by Iman-Conover (the chunk's own
    second stream)."""
    u = draw_uniforms(stream(inp.seed, 0, j), inp.n, size, out)
    if correlation > 0.0:
        rng = stream(inp.seed, 1, j)
        for rows in inp.groups:
            u[rows] = induce_rank_correlation(rng, u[rows], correlation)
    return u


@dataclass
class Draw:
    """One further random draw of a traced iteration (a block of rows on the Trace sheet).

    A named risk's draws: ``kind`` ``"occurrence"`` (``value`` 1 if it occurred, else 0)
    or ``"impact"`` (``value`` the exact impact F^-1(u)); ``risk`` its register index.
    """

    label: str
    uniform: float
    value: float
    risk: int = -1
    kind: str = ""


@dataclass
class TracedIteration:
    """One traced iteration (arrays indexed by activity)."""

    #: 0-based index of the iteration in the run (the sheets show it counted from 1).
    iteration: int
    #: The quantile it stands for (1.0: the longest iteration).
    quantile: float
    #: The simulated figure it stands for: the percentile, or the longest finish.
    figure: float
    #: The project finish the simulation recorded for the iteration.
    recorded: float
    uniforms: np.ndarray
    #: The durations the simulation used (tabulated quantile, single precision).
    sampled: np.ndarray
    #: The exact quantiles F^-1(u) (what the Trace sheet's formulas compute).
    durations: np.ndarray
    early_start: np.ndarray
    early_finish: np.ndarray
    #: The exact project finish of the iteration (largest early finish).
    finish: float
    #: On the iteration's critical path (total float zero).
    critical: np.ndarray
    #: Bound on |finish - recorded| (see the module docstring).
    allowed: float
    draws: list[Draw] = field(default_factory=list)
    #: Each activity's delay from the named risks (exact; included in ``durations``),
    #: None without a register.
    delays: np.ndarray | None = None

    @property
    def label(self) -> str:
        """``"P80"``, or ``"longest"`` for the quantile 1."""
        return "longest" if self.quantile >= 1.0 else f"P{self.quantile * 100:g}"


def chosen_iterations(project: np.ndarray, quantiles) -> list[tuple[float, float, int]]:
    """(quantile, figure, iteration) per quantile: the iteration whose finish is nearest
    the percentile (numpy's default, as :meth:`SimulationResult.percentile`); the first
    such iteration in the run on a tie; quantile 1 is the longest iteration.

    Examples
    --------
    >>> chosen_iterations(np.array([3.0, 9.0, 5.0, 7.0]), (0.5, 1.0))
    [(0.5, 6.0, 2), (1.0, 9.0, 1)]
    """
    out = []
    for q in quantiles:
        figure = float(np.percentile(project, 100.0 * q))
        out.append((float(q), figure, int(np.argmin(np.abs(project - figure)))))
    return out


def exact_durations(inp: Inputs, u: np.ndarray) -> np.ndarray:
    """F^-1(u) per activity, exactly: scipy's ``betaincinv`` for the PERT-beta, the
    closed forms for the triangular and the uniform; O = P is the constant."""
    o, m, p = inp.o, inp.m, inp.p
    beta = special.betaincinv(*pert_beta_parameters(o, m, p), u)
    out = np.where(
        inp.codes == PERT,
        o + (p - o) * beta,
        np.where(
            inp.codes == TRIANGULAR, triangular_quantile(o, m, p, u), uniform_quantile(o, p, u)
        ),
    )
    return np.where(o == p, o, out)


def trace_iterations(
    net: Network,
    inp: Inputs,
    project: np.ndarray,
    correlation: float,
    quantiles,
    risks: RiskDraws | None = None,
) -> list[TracedIteration]:
    """The traced iterations of a finished run (see the module docstring).

    Parameters
    ----------
    net : Network
        The run's network.
    inp : Inputs
        The run's inputs (seed, chunks, estimates).
    project : numpy.ndarray
        The project finish of every iteration of the run (the correlated run's when
        there are two).
    correlation : float
        The rank correlation the run applied (0: none).
    quantiles : sequence of float
        The quantiles to trace (1: the longest iteration).
    risks : RiskDraws, optional
        The named risks' draws of the run (their delays are in the traced durations).

    Returns
    -------
    list of TracedIteration
        In the order of ``quantiles``.
    """
    chosen = chosen_iterations(project, quantiles)
    drawn = risk_uniforms(risks, [k for *_, k in chosen]) if risks is not None else None
    out = []
    for t, (q, figure, k) in enumerate(chosen):
        j = k // inp.chunk
        a, b = inp.chunks()[j]
        u = chunk_uniforms(inp, j, b - a, correlation)[:, k - a]
        sampled = durations_from_uniforms(u[:, None], inp.o, inp.m, inp.p, inp.codes, inp.table)
        sampled = sampled[:, 0].astype(np.float32).astype(float)
        exact = exact_durations(inp, u)
        spread = ACCURACY * (inp.p - inp.o) + np.abs(exact) * 2.0**-23
        draws, delays = [], None
        if drawn is not None:
            hits = traced_risks(risks, drawn.occurrence[:, t], drawn.impact[:, t])
            draws = _risk_draws(risks, hits)
            delays = exact_delays(risks, hits, exact)
            spread = spread + delay_spread(risks, hits, spread, sampled)
            sampled = simulated_with_delays(risks, sampled, k)
            exact = exact + delays
        cpm = schedule(net, exact)
        out.append(
            TracedIteration(
                iteration=k,
                quantile=q,
                figure=figure,
                recorded=float(project[k]),
                uniforms=u,
                sampled=sampled,
                durations=exact,
                early_start=cpm.es,
                early_finish=cpm.ef,
                finish=float(cpm.finish),
                critical=np.asarray(cpm.critical, dtype=bool),
                allowed=_allowed(net, spread),
                draws=draws,
                delays=delays,
            )
        )
    return out


def _allowed(net: Network, spread: np.ndarray) -> float:
    """Bound on a finish's error from per-activity errors ``spread``: every path's error is
    at most the sum of its spreads: the longest path by spread (floors left out) when all
    links are finish-to-start, else the sum over all activities."""
    plain = bool((net.kind == FS).all()) if net.link_count else True
    if not plain:
        return float(spread.sum())
    return float(schedule(replace(net, floor=None), spread).finish)


def _risk_draws(risks: RiskDraws, hits: list[tuple]) -> list[Draw]:
    """Two :class:`Draw` per risk: its occurrence and its impact."""
    out = []
    for k, u, occurred, v, impact in hits:
        rid = risks.ids[k]
        out.append(Draw(f"{rid} occurrence", u, float(occurred), k, OCCURRENCE))
        out.append(Draw(f"{rid} impact", v, impact, k, IMPACT))
    return out
