"""Figures the workbook and the JSON show, computed once so the writers only place them.

Tables on round durations (finish probability, durations at confidence), the histogram
of simulated finishes with the bin that holds the due date, calendar dates, the order
of risk drivers and of the timeline's activities.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from converter.analyse import pert
from converter.analyse.calendar import Calendar
from converter.analyse.network import CpmResult

if TYPE_CHECKING:
    from converter.analyse.simulate.runs import SimulationResult

#: Finish-probability table spans the analytic P1..P99.
TABLE_LOW, TABLE_HIGH = 0.01, 0.99

#: Above this many activities, the timeline charts only the critical and near-critical ones.
CHART_LIMIT = 250


def nice_step(span: float, rows: int = 25) -> float:
    """A round step (1, 2 or 5 x 10^k) giving about ``rows`` rows over ``span``.

    Examples
    --------
    >>> nice_step(37.0), nice_step(0.9, rows=10), nice_step(0.0)
    (2.0, 0.1, 1.0)
    """
    if span <= 0:
        return 1.0
    raw = span / rows
    power = 10.0 ** math.floor(math.log10(raw))
    for mult in (1, 2, 5, 10):
        if mult * power >= raw:
            return mult * power
    return 10 * power


class FinishRow(NamedTuple):
    """Chance of finishing by ``duration``; ``date`` is the end of the day it falls on."""

    duration: float
    p_analytic: float
    p_simulated: float | None
    date: dt.date | None


class ConfidenceRow(NamedTuple):
    """The duration (and its date) met with chance ``confidence``."""

    confidence: float
    analytic: float
    simulated: float | None
    analytic_date: dt.date | None
    simulated_date: dt.date | None


def _finish_dates(calendar: Calendar | None, offsets: list[float]) -> list[dt.date | None]:
    if calendar is None or not offsets:
        return [None] * len(offsets)
    return calendar.finish_dates(offsets)


def finish_table(
    mean: float, sd: float, simulation: SimulationResult | None, calendar: Calendar | None
) -> list[FinishRow]:
    """Durations in round steps over the analytic P1 to P99 and the simulated P1 to P99
    (both curves run their whole course on the chart)."""
    from scipy.stats import norm

    ranges = []
    if sd > 0:
        ranges.append((mean + norm.ppf(TABLE_LOW) * sd, mean + norm.ppf(TABLE_HIGH) * sd))
    if simulation is not None and simulation.sd > 0:
        ranges.append((simulation.percentile(TABLE_LOW), simulation.percentile(TABLE_HIGH)))
    if ranges:
        lo, hi = min(r[0] for r in ranges), max(r[1] for r in ranges)
    else:
        lo = hi = mean
    step = nice_step(hi - lo)
    start = math.floor(lo / step) * step
    stop = math.ceil(hi / step) * step
    count = int(round((stop - start) / step)) + 1
    durations = [round(start + k * step, 10) for k in range(count)]
    dates = _finish_dates(calendar, durations)
    return [
        FinishRow(
            t,
            pert.p_meet(t, mean, sd),
            simulation.p_finish_by(t) if simulation is not None else None,
            d,
        )
        for t, d in zip(durations, dates, strict=True)
    ]


def confidence_table(
    levels: list[float],
    mean: float,
    sd: float,
    simulation: SimulationResult | None,
    calendar: Calendar | None,
) -> list[ConfidenceRow]:
    """For each confidence level, the analytic and the simulated duration with their dates."""
    rows = []
    for c in levels:
        analytic = pert.duration_at(c, mean, sd)
        simulated = simulation.percentile(c) if simulation is not None else None
        analytic_date = simulated_date = None
        if calendar is not None:
            analytic_date = calendar.finish_date(analytic)
            if simulated is not None:
                simulated_date = calendar.finish_date(simulated)
        rows.append(ConfidenceRow(c, analytic, simulated, analytic_date, simulated_date))
    return rows


def confidence_levels(chosen: tuple[float, ...]) -> list[float]:
    """5%, 10% ... 90%, 95% and the chosen levels, sorted, without repeats."""
    return sorted({round(x, 4) for x in (0.05, *np.arange(0.1, 0.91, 0.1), 0.95)} | set(chosen))


@dataclass
class Histogram:
    """Simulated durations in equal bins.

    ``upper[k]`` is the upper edge of bin ``k``; ``share`` and ``cumulative`` are the
    count and the running count over the iterations. ``due_bin`` is the bin that holds
    the due date (None without one, or when it lies outside every bin). ``due_at`` is
    where the due date falls on a chart whose bins stand at 1, 2, ... (bin ``k`` spans
    ``k + 0.5`` to ``k + 1.5``), and ``peak`` the largest count.
    """

    upper: list[float]
    counts: list[int]
    iterations: int
    share: list[float]
    cumulative: list[float]
    due_bin: int | None
    due_at: float | None = None
    peak: int = 0


def histogram(durations: np.ndarray, due: float | None, bins: int = 30) -> Histogram:
    """Counts of simulated durations in about ``bins`` bins of a round width.

    Examples
    --------
    >>> h = histogram(np.array([1.0, 2.0, 2.5, 4.0]), due=2.2, bins=3)
    >>> h.upper, h.counts, h.due_bin, round(h.due_at, 6), h.peak
    ([2.0, 3.0, 4.0], [1, 2, 1], 1, 1.7, 2)
    """
    lo, hi = float(durations.min()), float(durations.max())
    if hi <= lo:
        edges, counts = np.array([hi]), np.array([durations.size])
    else:
        step = nice_step(hi - lo, bins)
        start = math.floor(lo / step) * step
        edges = np.arange(start, hi + step, step)
        if edges[-1] < hi:
            edges = np.append(edges, edges[-1] + step)
        counts, _ = np.histogram(durations, bins=edges)
        edges = edges[1:]
    total = float(counts.sum())
    width = float(edges[1] - edges[0]) if edges.size > 1 else 0.0
    due_bin = due_at = None
    if due is not None and edges.size:
        k = int(np.searchsorted(edges, due, side="left"))
        due_bin = k if k < edges.size and (edges[k] - width) <= due else None
        if due_bin is not None:  # bin k's lower edge is at k + 0.5 on the chart
            into = (due - (edges[k] - width)) / width if width > 0 else 0.5
            due_at = k + 0.5 + float(into)
    return Histogram(
        upper=edges.tolist(),
        counts=counts.tolist(),
        iterations=int(total),
        share=(counts / total).tolist(),
        cumulative=(np.cumsum(counts) / total).tolist(),
        due_bin=due_bin,
        due_at=due_at,
        peak=int(counts.max()) if counts.size else 0,
    )


@dataclass
class ActivityDates:
    """Calendar dates of each activity's early and late start and finish."""

    early_start: list[dt.date]
    early_finish: list[dt.date]
    late_start: list[dt.date]
    late_finish: list[dt.date]
    #: The Not before, actual start and actual finish offsets as dates (None where blank;
    #: empty lists when the schedule has no such column): see :func:`progress_dates`.
    not_before: list[dt.date | None] = field(default_factory=list)
    actual_start: list[dt.date | None] = field(default_factory=list)
    actual_finish: list[dt.date | None] = field(default_factory=list)


def activity_dates(calendar: Calendar, cpm: CpmResult) -> ActivityDates:
    """Start dates (work at the offset) and finish dates (end of the day reached)."""
    return ActivityDates(
        early_start=calendar.start_dates(cpm.es, finishes=cpm.ef),
        early_finish=calendar.finish_dates(cpm.ef),
        late_start=calendar.start_dates(cpm.ls, finishes=cpm.lf),
        late_finish=calendar.finish_dates(cpm.lf),
    )


def progress_dates(dates: ActivityDates, calendar: Calendar, remaining) -> None:
    """Fill ``dates``' Not before, actual start and actual finish dates.

    A Not before or actual start offset is a start (the working day the work at it is
    done, :meth:`Calendar.start_date`; a finished activity's start never after its
    finish); an actual finish the end of the day reached (:meth:`Calendar.finish_date`).
    Blank offsets (``nan``) stay None. ``remaining`` is the analysis'
    :class:`~converter.analyse.status.Remaining`, or None when neither is given.

    Examples
    --------
    Start Monday 3 March 2025, Not before 2 working days (Wednesday), an activity started
    at 1 (Tuesday) and finished at 3 (end of Wednesday), another not started:

    >>> from types import SimpleNamespace as NS
    >>> cal = Calendar(dt.date(2025, 3, 3))
    >>> prog = NS(actual_start=np.array([1.0, np.nan]), actual_finish=np.array([3.0, np.nan]))
    >>> rem = NS(not_before=np.array([np.nan, 2.0]), progress=prog)
    >>> d = ActivityDates([], [], [], [])
    >>> progress_dates(d, cal, rem)
    >>> d.not_before, d.actual_start, d.actual_finish
    ([None, datetime.date(2025, 3, 5)], [datetime.date(2025, 3, 4), None], \
[datetime.date(2025, 3, 5), None])
    """
    if remaining is None:
        return
    nb = np.asarray(remaining.not_before, dtype=float)
    if not np.isnan(nb).all():
        dates.not_before = _or_none(calendar.start_dates(np.nan_to_num(nb)), nb)
    prog = remaining.progress
    if prog is None:
        return
    start = np.asarray(prog.actual_start, dtype=float)
    finish = np.asarray(prog.actual_finish, dtype=float)
    free = calendar.start_dates(np.nan_to_num(start))
    # a finished activity's start is never after its finish (a milestone)
    held = calendar.start_dates(np.nan_to_num(start), finishes=np.nan_to_num(finish))
    chosen = [h if not math.isnan(x) else d for d, h, x in zip(free, held, finish.tolist())]
    dates.actual_start = _or_none(chosen, start)
    dates.actual_finish = _or_none(calendar.finish_dates(np.nan_to_num(finish)), finish)


def _or_none(values: list[dt.date], offsets: np.ndarray) -> list[dt.date | None]:
    return [None if math.isnan(x) else d for d, x in zip(values, offsets.tolist(), strict=True)]


def risk_drivers(simulation: SimulationResult) -> list[int]:
    """Activities by falling absolute sensitivity, then criticality, then sheet order.

    A fixed duration (sensitivity NaN) ranks as sensitivity 0.
    """
    sens = np.nan_to_num(np.asarray(simulation.sensitivity, float), nan=0.0)
    crit = simulation.criticality
    return sorted(range(sens.size), key=lambda i: (-abs(sens[i]), -crit[i], i))


def most_critical(simulation: SimulationResult) -> list[int]:
    """Activities by falling criticality index, then sheet order."""
    crit = simulation.criticality
    return sorted(range(len(crit)), key=lambda i: (-crit[i], i))


def timeline_rows(n: int, path_activities: list[list[int]], total_float) -> tuple[list[int], bool]:
    """Activities the timeline charts (sheet order) and whether the list was cut down.

    Up to :data:`CHART_LIMIT` activities all are charted; beyond, those on the listed
    paths, then the ones with the least total float.
    """
    if n <= CHART_LIMIT:
        return list(range(n)), False
    keep = {i for acts in path_activities for i in acts}
    if len(keep) < CHART_LIMIT:
        for i in np.argsort(total_float, kind="stable").tolist():
            if len(keep) >= CHART_LIMIT:
                break
            keep.add(i)
    return sorted(keep)[:CHART_LIMIT], True


@dataclass
class TimelineBars:
    """Where each charted activity's bar sits on the timeline, in the axis unit.

    With a calendar the axis is in dates: ``start`` is the early start date's serial day
    and the lengths are calendar days (the bar runs from the start of the early start day
    to the end of the early finish day; the float from there to the end of the late finish
    day). Without one, the axis is in schedule units from the start: ``start`` is the early
    start, the bar the expected duration, the float the total float. ``marker`` is the
    length a milestone's mark takes: an eightieth of the span, at least a day (or 0.5).
    """

    start: list[float]
    length: list[float]
    float_: list[float]
    dates: bool
    marker: float = 1.0


def timeline_bars(
    rows: list[int],
    cpm: CpmResult,
    te,
    dates: ActivityDates | None,
    epoch: dt.date = dt.date(1899, 12, 30),
) -> TimelineBars:
    """Bars for the activities ``rows`` (see :class:`TimelineBars`).

    ``epoch`` is day 0 of the spreadsheet's serial dates (the 1900 date system).

    Examples
    --------
    >>> cpm = CpmResult.__new__(CpmResult)
    >>> cpm.es, cpm.total_float = np.array([0.0, 2.0]), np.array([0.0, 1.5])
    >>> b = timeline_bars([0, 1], cpm, np.array([2.0, 0.0]), None)
    >>> b.start, b.length, b.float_, b.marker
    ([0.0, 2.0], [2.0, 0.0], [0.0, 1.5], 0.5)
    """
    if dates is None:
        bars = TimelineBars(
            start=[float(cpm.es[i]) for i in rows],
            length=[float(te[i]) for i in rows],
            float_=[max(0.0, float(cpm.total_float[i])) for i in rows],
            dates=False,
        )
    else:
        es, ef, lf = dates.early_start, dates.early_finish, dates.late_finish
        bars = TimelineBars(
            start=[float((es[i] - epoch).days) for i in rows],
            length=[float(max(0, (ef[i] - es[i]).days + 1)) if te[i] > 0 else 0.0 for i in rows],
            float_=[float(max(0, (lf[i] - ef[i]).days)) for i in rows],
            dates=True,
        )
    ends = [s + n + f for s, n, f in zip(bars.start, bars.length, bars.float_, strict=True)]
    span = (max(ends) - min(bars.start)) if rows else 0.0
    bars.marker = round(max(span / 80.0, 1.0 if bars.dates else 0.5), 2)
    return bars
