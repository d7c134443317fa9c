"""A validated Schedule -> an Analysis: plain data, no file I/O.

Stages: TE and variance per activity (pert), forward/backward pass and floats
(network), the k longest paths (paths), normal probabilities on the critical path,
Monte Carlo simulation (simulate), calendar dates (calendar), health checks (checks).
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from converter.analyse import pert
from converter.analyse.calendar import Calendar, days_per_unit
from converter.analyse.checks import Check, run_checks
from converter.analyse.network import CpmResult, Network, build_network, driving_push, link_pull
from converter.analyse.network import schedule as run_cpm
from converter.analyse.paths import Path, count_paths, k_longest_paths
from converter.model import Schedule

if TYPE_CHECKING:
    from converter.analyse.simulate.runs import SimulationResult

#: Finish-probability table spans the analytic P1..P99.
TABLE_LOW, TABLE_HIGH = 0.01, 0.99


@dataclass
class PathResult:
    """A near-critical path with its probability of meeting the due date."""

    path: Path
    z: float | None
    p_meet_due: float | None


@dataclass
class TargetResult:
    activity: int
    target: float  # in time units from the start
    target_date: dt.date | None
    mean: float  # the activity's early finish on TE
    variance: float  # along the longest path to it
    p_analytic: float
    p_simulated: float | None


@dataclass
class Analysis:
    schedule: Schedule
    net: Network
    ids: list[str]
    o: np.ndarray
    m: np.ndarray
    p: np.ndarray
    te: np.ndarray
    var: np.ndarray
    cpm: CpmResult
    paths: list[PathResult]
    project_mean: float
    project_variance: float
    due: float | None
    due_date: dt.date | None
    z: float | None
    p_meet_due: float | None
    confidence: dict[float, float]
    calendar: Calendar | None
    simulation: SimulationResult | None
    checks: list[Check]
    targets: list[TargetResult]
    path_count: int
    tied_longest: int  # how many listed paths tie with the longest
    p_all_paths: tuple[float, float] | None  # (lower, upper)
    link_push: np.ndarray = field(default_factory=lambda: np.zeros(0))
    link_pull: np.ndarray = field(default_factory=lambda: np.zeros(0))
    finish_table: list[tuple[float, float, float | None]] = field(default_factory=list)
    confidence_table: list[tuple[float, float, float | None]] = field(default_factory=list)
    histogram: tuple[np.ndarray, np.ndarray] | None = None  # (bin upper edges, counts)
    days_per_unit: float = 1.0  # working days in one schedule unit (health thresholds)

    @property
    def project_sd(self) -> float:
        return math.sqrt(max(self.project_variance, 0.0))

    @property
    def critical_path(self) -> Path:
        return self.paths[0].path

    @property
    def critical_ids(self) -> list[str]:
        return [self.ids[i] for i in self.critical_path.activities]

    @property
    def riskier_paths(self) -> list[int]:
        """Indices of listed paths less likely to meet the due date than the critical one."""
        if self.p_meet_due is None:
            return []
        return [
            k for k, pr in enumerate(self.paths[1:], start=1)
            if pr.p_meet_due is not None and pr.p_meet_due < self.p_meet_due - 1e-12
        ]

    def headline(self) -> dict:
        h = {
            "activities": len(self.ids),
            "expected_duration": round(self.project_mean, 6),
            "sd": round(self.project_sd, 6),
            "critical_path": " > ".join(self.critical_ids),
        }
        if self.due is not None:
            h["due"] = self.due
            h["p_meet_due"] = round(self.p_meet_due, 4)
        if self.simulation is not None:
            h["simulated_mean"] = round(self.simulation.mean, 6)
            if self.simulation.p_meet_due is not None:
                h["simulated_p_meet_due"] = round(self.simulation.p_meet_due, 4)
        h["warnings"] = len(self.schedule.warnings)
        return h


def _due_offset(value, calendar: Calendar | None) -> tuple[float | None, dt.date | None]:
    if value is None:
        return None, None
    if isinstance(value, dt.date):
        assert calendar is not None  # validation guarantees a start date
        return float(calendar.offset_of(value)), value
    due = float(value)
    return due, (calendar.finish_date(due) if calendar else None)


def analyse(schedule: Schedule, options=None) -> Analysis:
    """Run every stage on a validated schedule."""
    s = schedule.settings
    acts = schedule.activities
    ids = [a.id for a in acts]
    index = schedule.index()
    o = np.array([a.optimistic for a in acts], dtype=float)
    m = np.array([a.most_likely for a in acts], dtype=float)
    p = np.array([a.pessimistic for a in acts], dtype=float)
    te = pert.expected_time(o, m, p)
    var = pert.variance(o, p)
    links = schedule.links
    net = build_network(
        len(acts),
        [index[lk.pred] for lk in links],
        [index[lk.succ] for lk in links],
        [lk.code for lk in links],
        [lk.lag for lk in links],
    )
    cpm = run_cpm(net, te)
    calendar = Calendar.from_settings(s) if s.start_date is not None else None
    due, due_date = _due_offset(s.due, calendar)

    found = k_longest_paths(net, te, var, max(1, s.paths))
    path_results = []
    for path in found:
        if due is None:
            path_results.append(PathResult(path, None, None))
        else:
            path_results.append(PathResult(path, pert.z_score(due, path.mean, path.sd),
                                           pert.p_meet(due, path.mean, path.sd)))
    critical = found[0]
    project_mean = float(cpm.finish)
    project_variance = float(critical.variance)
    sd = math.sqrt(project_variance)
    tol = 1e-9 * max(1.0, abs(project_mean))
    tied = sum(1 for pth in found if abs(pth.mean - critical.mean) <= tol)

    z = p_due = None
    p_all = None
    if due is not None:
        z = pert.z_score(due, project_mean, sd)
        p_due = pert.p_meet(due, project_mean, sd)
        probs = [pr.p_meet_due for pr in path_results]
        p_all = (float(np.prod(probs)), float(min(probs)))
    confidence = {c: pert.duration_at(c, project_mean, sd) for c in s.confidence_levels}

    targets: list[TargetResult] = []
    target_offsets: dict[int, float] = {}
    for i, a in enumerate(acts):
        if a.target is None:
            continue
        t_off, t_date = _due_offset(a.target, calendar)
        ends = np.zeros(len(acts), dtype=bool)
        ends[i] = True
        to_it = k_longest_paths(net, te, var, 1, ends=ends)
        v = to_it[0].variance if to_it else 0.0
        mean_i = float(cpm.ef[i])
        targets.append(TargetResult(i, t_off, t_date, mean_i, v,
                                    pert.p_meet(t_off, mean_i, math.sqrt(v)), None))
        target_offsets[i] = t_off

    simulation = None
    if options is None or getattr(options, "simulate", True):
        from converter.analyse.simulate.runs import simulate

        dists = [a.distribution for a in acts]
        groups = [a.group for a in acts]
        simulation = simulate(
            net, o, m, p,
            distribution=s.distribution,
            distributions=dists if any(dists) else None,
            groups=groups if any(groups) else None,
            correlation=s.correlation,
            iterations=s.iterations,
            seed=s.seed,
            due=due,
            targets=target_offsets or None,
            pert_mean=project_mean,
            progress=getattr(options, "progress", None) if options is not None else None,
            workers=getattr(options, "simulation_workers", None),
            memory_mb=getattr(options, "simulation_memory_mb", None),
        )
        for t in targets:
            t.p_simulated = simulation.target_p.get(t.activity)

    unit_days = days_per_unit(s.time_unit, s.working_days)
    checks = run_checks(ids, o, m, p, net, cpm, days_per_unit=unit_days)
    finish_table = _finish_table(project_mean, sd, simulation)
    levels = sorted({round(x, 4) for x in (0.05, *np.arange(0.1, 0.91, 0.1), 0.95)}
                    | set(s.confidence_levels))
    confidence_table = [
        (c, pert.duration_at(c, project_mean, sd),
         simulation.percentile(c) if simulation is not None else None)
        for c in levels
    ]
    histogram = _histogram(simulation.durations) if simulation is not None else None
    return Analysis(
        finish_table=finish_table, confidence_table=confidence_table, histogram=histogram,
        days_per_unit=unit_days,
        schedule=schedule, net=net, ids=ids, o=o, m=m, p=p, te=te, var=var, cpm=cpm,
        paths=path_results, project_mean=project_mean, project_variance=project_variance,
        due=due, due_date=due_date, z=z, p_meet_due=p_due, confidence=confidence,
        calendar=calendar, simulation=simulation, checks=checks, targets=targets,
        path_count=count_paths(net), tied_longest=tied, p_all_paths=p_all,
        link_push=driving_push(net, cpm.es, cpm.ef, te),
        link_pull=link_pull(net, cpm.ls, cpm.lf, te),
    )


def nice_step(span: float, rows: int = 25) -> float:
    """A round step (1, 2 or 5 x 10^k) giving about ``rows`` rows over ``span``."""
    if span <= 0:
        return 1.0
    raw = span / rows
    power = 10.0 ** math.floor(math.log10(raw))
    for mult in (1, 2, 5, 10):
        if mult * power >= raw:
            return mult * power
    return 10 * power


def _finish_table(mean: float, sd: float, simulation) -> list[tuple[float, float, float | None]]:
    """Durations in round steps from the analytic P1 to P99 (the simulated range if sd is 0)."""
    from scipy.stats import norm

    if sd > 0:
        lo, hi = mean + norm.ppf(TABLE_LOW) * sd, mean + norm.ppf(TABLE_HIGH) * sd
    elif simulation is not None and simulation.sd > 0:
        lo, hi = simulation.percentile(TABLE_LOW), simulation.percentile(TABLE_HIGH)
    else:
        lo = hi = mean
    step = nice_step(hi - lo)
    start = math.floor(lo / step) * step
    stop = math.ceil(hi / step) * step
    count = int(round((stop - start) / step)) + 1
    rows = []
    for k in range(count):
        t = round(start + k * step, 10)
        rows.append((t, pert.p_meet(t, mean, sd),
                     simulation.p_finish_by(t) if simulation is not None else None))
    return rows


def _histogram(durations: np.ndarray, bins: int = 30) -> tuple[np.ndarray, np.ndarray]:
    """Counts of simulated durations in equal bins; returns (upper edges, counts)."""
    lo, hi = float(durations.min()), float(durations.max())
    if hi <= lo:
        return np.array([hi]), np.array([durations.size])
    step = nice_step(hi - lo, bins)
    start = math.floor(lo / step) * step
    edges = np.arange(start, hi + step, step)
    if edges[-1] < hi:
        edges = np.append(edges, edges[-1] + step)
    counts, _ = np.histogram(durations, bins=edges)
    return edges[1:], counts
