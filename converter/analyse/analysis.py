"""A validated Schedule -> an Analysis: plain data, no file I/O.

Stages: TE and variance per activity (pert), forward/backward pass and floats
(network), the k longest paths (paths), normal probabilities on the critical path,
Monte Carlo simulation (simulate), calendar dates (calendar), health checks (checks).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from converter.analyse import figures, pert
from converter.analyse.baseline import Baseline
from converter.analyse.calendar import Calendar, days_per_unit
from converter.analyse.checks import Check, run_checks
from converter.analyse.figures import (
    ActivityDates,
    ConfidenceRow,
    FinishRow,
    Histogram,
    TimelineBars,
)
from converter.analyse.network import (
    CpmResult,
    Network,
    build_network,
    critical_tolerance,
    driving_push,
    link_pull,
)
from converter.analyse.network import schedule as run_cpm
from converter.analyse.paths import Path, count_paths, k_longest_paths
from converter.analyse.risk_register import RiskView, add_path_terms, risk_view, simulate_register
from converter.analyse.status import Remaining, remaining_network
from converter.analyse.status_checks import status_checks
from converter.analyse.summaries import SummaryFigures, summary_figures, summary_link_check
from converter.model import Schedule

if TYPE_CHECKING:
    from converter.analyse.simulate.runs import SimulationResult


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
    link_driving: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    float_tolerance: float = 0.0  # a float at or below this counts as zero
    finish_table: list[FinishRow] = field(default_factory=list)
    confidence_table: list[ConfidenceRow] = field(default_factory=list)
    histogram: Histogram | None = None
    # calendar dates (None / empty without a start date)
    finish_date: dt.date | None = None  # end of the day the expected finish falls on
    confidence_dates: dict[float, dt.date] = field(default_factory=dict)
    activity_dates: ActivityDates | None = None
    # orders for the writers
    drivers: list[int] = field(default_factory=list)  # by sensitivity (simulated)
    most_critical: list[int] = field(default_factory=list)  # by criticality index (simulated)
    timeline: list[int] = field(default_factory=list)  # activities the timeline charts
    timeline_cut: bool = False  # whether the timeline charts only some activities
    timeline_bars: TimelineBars | None = None  # where the timeline's bars sit
    summaries: SummaryFigures | None = None  # WBS summary rows (None without a WBS column)
    # start constraints and progress (None: neither given; see converter.analyse.status)
    remaining_work: Remaining | None = None
    risk_view: RiskView | None = None  # the risk register's figures (None: no register)
    baseline: Baseline | None = None  # the earlier run the progress checks judge against

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
            k
            for k, pr in enumerate(self.paths[1:], start=1)
            if pr.p_meet_due is not None and pr.p_meet_due < self.p_meet_due - 1e-12
        ]

    def headline(self) -> dict:
        """The figures a reader wants first: the command line's summary, the log line.

        Durations are in the schedule's time unit; dates are ISO text (None without a
        start date). ``pNN`` are the critical-path (analytic) durations at NN% confidence,
        ``simulated_pNN`` the simulation's percentiles (when it ran).
        """
        h = {
            "activities": len(self.ids),
            "expected_duration": round(self.project_mean, 6),
            "sd": round(self.project_sd, 6),
            "critical_path": " > ".join(self.critical_ids),
        }
        if self.due is not None:
            h["due"] = self.due
            h["p_meet_due"] = round(self.p_meet_due, 4)
        sim = self.simulation
        if sim is not None:
            h["simulated_mean"] = round(sim.mean, 6)
            if sim.p_meet_due is not None:
                h["simulated_p_meet_due"] = round(sim.p_meet_due, 4)
        h["warnings"] = len(self.schedule.warnings)
        prog = self.remaining_work.progress if self.remaining_work is not None else None
        if prog is not None:  # a project in flight
            when = prog.status_date.isoformat() if prog.status_date else prog.status_offset
            h["status_date"], h["done_share"] = when, round(prog.done_share, 4)

        def date(t: float) -> str | None:
            return self.calendar.finish_date(t).isoformat() if self.calendar else None

        levels = (0.5, 0.8, 0.9)  # P50, P80, P90
        settings = self.schedule.settings
        h["time_unit"] = settings.time_unit
        h["start_date"] = settings.start_date.isoformat() if settings.start_date else None
        h["finish_date"] = date(self.project_mean)
        if self.due is not None:
            h["due_date"] = self.due_date.isoformat() if self.due_date else None
        for level in levels:
            key = f"p{round(level * 100)}"
            value = pert.duration_at(level, self.project_mean, self.project_sd)
            h[key], h[f"{key}_date"] = round(value, 6), date(value)
        if sim is not None:
            h["simulated_finish_date"] = date(sim.mean)
            for level in levels:
                key = f"simulated_p{round(level * 100)}"
                value = (
                    sim.percentiles[level] if level in sim.percentiles else sim.percentile(level)
                )
                h[key], h[f"{key}_date"] = round(value, 6), date(value)
        h["checks"] = len(self.checks)
        h["failed_checks"] = sum(1 for c in self.checks if not c.passed)
        return h


_ESTIMATES = ("optimistic", "most_likely", "pessimistic")


def _due_offset(value, calendar: Calendar | None) -> tuple[float | None, dt.date | None]:
    if value is None:
        return None, None
    if isinstance(value, dt.date):
        assert calendar is not None  # validation guarantees a start date
        return float(calendar.offset_of(value)), value
    due = float(value)
    return due, (calendar.finish_date(due) if calendar else None)


def _network(schedule: Schedule, index: dict[str, int], rem: Remaining) -> Network:
    """The remaining-work network: the kept links with their lags, and the start floors."""
    links = [schedule.links[k] for k in rem.links]
    return build_network(
        len(schedule.activities),
        [index[lk.pred] for lk in links],
        [index[lk.succ] for lk in links],
        [lk.code for lk in links],
        rem.lags,
        floor=rem.floor,
    )


def _path_results(found: list, due: float | None) -> list[PathResult]:
    """Each listed path with its z and chance of meeting the due date (PERT)."""
    if due is None:
        return [PathResult(path, None, None) for path in found]
    return [
        PathResult(
            path, pert.z_score(due, path.mean, path.sd), pert.p_meet(due, path.mean, path.sd)
        )
        for path in found
    ]


def _with_risks(
    schedule: Schedule, index, te: np.ndarray, rem: Remaining
) -> tuple[RiskView | None, np.ndarray]:
    """The register's analytic view and the expected durations including the expected delay
    of the risks that hit each activity (``te`` itself without a register).

    In a project in flight a finished activity is past its risks: it is taken out of every
    risk's list of activities (its duration is the actual one)."""
    if not schedule.risks:
        return None, te
    risks = schedule.risks
    if rem.progress is not None:
        done = {
            schedule.activities[i].id for i, st in enumerate(rem.progress.state) if st == "finished"
        }
        risks = [
            dataclasses.replace(r, activities=tuple(x for x in r.activities if x not in done))
            for r in risks
        ]
    view = risk_view(risks, index, te, schedule.settings.distribution)
    return view, te + view.activity_delay


def analyse(schedule: Schedule, options=None, baseline: Baseline | None = None) -> Analysis:
    """Run every stage on a validated schedule; ``baseline`` (an earlier run's early
    finishes, from ``convert --baseline``) is what the progress checks judge against."""
    s = schedule.settings
    acts = schedule.activities
    ids = [a.id for a in acts]
    index = schedule.index()
    given = [np.array([getattr(a, k) for a in acts], dtype=float) for k in _ESTIMATES]
    calendar = Calendar.from_settings(s) if s.start_date is not None else None
    rem = remaining_network(schedule, calendar, *given)
    o, m, p = rem.o, rem.m, rem.p
    te_base, var = pert.expected_time(o, m, p), pert.variance(o, p)
    view, te = _with_risks(schedule, index, te_base, rem)
    net = _network(schedule, index, rem)
    cpm = run_cpm(net, te)
    due, due_date = _due_offset(s.due, calendar)

    found = k_longest_paths(net, te, var, max(1, s.paths))
    if view is not None:
        add_path_terms(view, found, te_base)
    path_results = _path_results(found, due)
    critical = found[0]
    project_mean = float(cpm.finish)
    project_variance = float(critical.variance)
    sd = math.sqrt(project_variance)
    tol = critical_tolerance(project_mean)
    tied = sum(1 for pth in found if abs(pth.mean - critical.mean) <= tol)

    z = p_due = p_all = None
    if due is not None:
        z = pert.z_score(due, project_mean, sd)
        p_due = pert.p_meet(due, project_mean, sd)
        probs = [pr.p_meet_due for pr in path_results]
        p_all = (float(np.prod(probs)), float(min(probs)))
    confidence = {c: pert.duration_at(c, project_mean, sd) for c in s.confidence_levels}

    targets = _targets(acts, net, te, var, cpm, calendar)
    simulation = None
    if options is None or getattr(options, "simulate", True):
        simulation = _simulate(schedule, net, o, m, p, due, targets, project_mean, options, view)

    unit_days = days_per_unit(s.time_unit, s.working_days, s.hours_per_day)
    a = Analysis(
        schedule=schedule,
        net=net,
        ids=ids,
        o=o,
        m=m,
        p=p,
        te=te,
        var=var,
        cpm=cpm,
        paths=path_results,
        project_mean=project_mean,
        project_variance=project_variance,
        due=due,
        due_date=due_date,
        z=z,
        p_meet_due=p_due,
        confidence=confidence,
        calendar=calendar,
        simulation=simulation,
        checks=run_checks(ids, *given, net, cpm, days_per_unit=unit_days)
        + status_checks(schedule, rem, calendar, baseline),
        targets=targets,
        path_count=count_paths(net),
        tied_longest=tied,
        p_all_paths=p_all,
        link_push=driving_push(net, cpm.es, cpm.ef, te),
        link_pull=link_pull(net, cpm.ls, cpm.lf, te),
        link_driving=np.abs(cpm.link_slack) <= tol,
        float_tolerance=tol,
        remaining_work=None if rem.floor is None and rem.progress is None else rem,
        risk_view=view,
        baseline=baseline,
    )
    if schedule.summaries:  # after the other logic checks
        logic = sum(1 for c in a.checks if c.group == "logic")
        check = summary_link_check(ids, net, [schedule.links[k].via for k in rem.links])
        a.checks.insert(logic, check)
    _add_figures(a)
    return a


def _targets(
    acts, net: Network, te, var, cpm: CpmResult, calendar: Calendar | None
) -> list[TargetResult]:
    """Interim targets: each activity's finish against its target on its longest path."""
    targets: list[TargetResult] = []
    for i, act in enumerate(acts):
        if act.target is None:
            continue
        t_off, t_date = _due_offset(act.target, calendar)
        ends = np.zeros(len(acts), dtype=bool)
        ends[i] = True
        to_it = k_longest_paths(net, te, var, 1, ends=ends)
        v = to_it[0].variance if to_it else 0.0
        mean_i = float(cpm.ef[i])
        targets.append(
            TargetResult(
                i, t_off, t_date, mean_i, v, pert.p_meet(t_off, mean_i, math.sqrt(v)), None
            )
        )
    return targets


def _simulate(
    schedule: Schedule,
    net: Network,
    o,
    m,
    p,
    due,
    targets: list[TargetResult],
    project_mean: float,
    options,
    view: RiskView | None = None,
) -> SimulationResult:
    """The Monte Carlo run (and the mitigated one); fills each target's simulated chance."""
    from converter.analyse.simulate.runs import simulate

    s = schedule.settings
    dists = [a.distribution for a in schedule.activities]
    groups = [a.group for a in schedule.activities]
    kwargs = dict(
        distribution=s.distribution,
        distributions=dists if any(dists) else None,
        groups=groups if any(groups) else None,
        correlation=s.correlation,
        iterations=s.iterations,
        seed=s.seed,
        due=due,
        targets={t.activity: t.target for t in targets} or None,
        pert_mean=project_mean,
        progress=getattr(options, "progress", None) if options is not None else None,
        workers=getattr(options, "simulation_workers", None),
        memory_mb=getattr(options, "simulation_memory_mb", None),
        trace=_trace_quantiles(options),
    )
    if view is not None:
        simulation = simulate_register(simulate, (net, o, m, p), kwargs, schedule, view)
    else:
        simulation = simulate(net, o, m, p, **kwargs)
    for t in targets:
        t.p_simulated = simulation.target_p.get(t.activity)
    return simulation


def _trace_quantiles(options) -> tuple[float, ...]:
    """The quantiles to trace: the option as given (text, count or quantiles), else the
    default (:data:`.simulate.trace.DEFAULT_TRACE`)."""
    from converter.analyse.simulate.trace import DEFAULT_TRACE
    from converter.options import parse_trace

    given = getattr(options, "trace", None)
    if given is None:
        return DEFAULT_TRACE
    if isinstance(given, tuple):
        return given
    return parse_trace(given)


def _add_figures(a: Analysis) -> None:
    """The tables, dates and orders the writers place (see :mod:`figures`)."""
    sim, cal, sd = a.simulation, a.calendar, a.project_sd
    a.finish_table = figures.finish_table(a.project_mean, sd, sim, cal)
    levels = figures.confidence_levels(a.schedule.settings.confidence_levels)
    a.confidence_table = figures.confidence_table(levels, a.project_mean, sd, sim, cal)
    if sim is not None:
        a.histogram = figures.histogram(sim.durations, a.due)
        a.drivers = figures.risk_drivers(sim)
        a.most_critical = figures.most_critical(sim)
    if cal is not None:
        a.finish_date = cal.finish_date(a.project_mean)
        a.confidence_dates = {c: cal.finish_date(v) for c, v in a.confidence.items()}
        a.activity_dates = figures.activity_dates(cal, a.cpm)
        figures.progress_dates(a.activity_dates, cal, a.remaining_work)
    a.timeline, a.timeline_cut = figures.timeline_rows(
        len(a.ids), [pr.path.activities for pr in a.paths], a.cpm.total_float
    )
    a.timeline_bars = figures.timeline_bars(a.timeline, a.cpm, a.te, a.activity_dates)
    a.summaries = summary_figures(a.schedule, a.cpm, a.activity_dates)
