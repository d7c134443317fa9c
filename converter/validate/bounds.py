"""Whether every date the analysis may show fits in the calendar a workbook can hold.

Each number is checked where it is read (durations and lags up to 10,000,000 time units,
dates from 1900-03-01, see :mod:`converter.values`); what is left is the sum of them.
Rather than run the analysis, a cheap upper bound of every offset it can date is used:

* no path through the network is longer than the sum of all pessimistic durations and all
  positive lags (each link moves its successor's start by at most the predecessor's
  duration plus the lag, whatever its type, and no start is before 0), and no simulated
  duration exceeds its pessimistic estimate;
* the analytic finish quantiles lie within :func:`spread_allowance` standard deviations
  of the mean (the fixed tables' reach, or the most extreme confidence level asked for),
  and no path's standard deviation exceeds the square root of the sum of all
  activities' PERT variances ``((P - O) / 6)^2``;
* the mean finish is at least every activity's own PERT mean ``(O + 4M + P) / 6`` (no
  start is before 0), so the lowest quantile dated is no earlier than the largest of
  them less the spread: only that much before the start must fit before 1900-03-01;
* a due or target duration is dated as it is.

The bound in working days is turned into calendar days, again from above: ``q`` whole
weeks hold ``q`` times the working weekdays, less at most every holiday.
"""

from __future__ import annotations

import datetime as dt
import math
from statistics import NormalDist

from converter.model import Activity, Link, Settings
from converter.options import SheetValue
from converter.read.sheets import TableMatch, cell_name
from converter.validate.problems import Collector
from converter.validate.settings import place_of
from converter.values import FIRST_DATE, LAST_DATE

#: Standard deviations around the mean that the workbook's fixed tables reach: the finish
#: probability table spans the analytic P1 to P99 (z = 2.33), rounded out by at most one
#: step of about a twelfth of that span; the confidence table 5% to 95%.
TABLE_SPREAD = 3.0


def spread_allowance(levels: tuple[float, ...]) -> float:
    """Standard deviations from the mean within which every analytic quantile lies.

    The fixed tables' :data:`TABLE_SPREAD`, or the standard normal quantile of the most
    extreme confidence level asked for (``statistics.NormalDist``).

    Examples
    --------
    >>> spread_allowance((0.5, 0.8)), round(spread_allowance((1e-6,)), 2)
    (3.0, 4.75)
    """
    normal = NormalDist()
    return max([TABLE_SPREAD, *(abs(normal.inv_cdf(c)) for c in levels)])


#: Calendar days from the first to the last date pertbook works with.
CALENDAR_DAYS = (LAST_DATE - FIRST_DATE).days


def calendar_days_for(units: float, settings: Settings) -> int:
    """An upper bound of the calendar days spanned by ``units`` of the schedule.

    Parameters
    ----------
    units : float
        An offset in the schedule's time unit (not negative).
    settings : Settings
        Time unit, working weekdays and holidays.

    Returns
    -------
    int
        Calendar days from the start date within which the offset is dated.

    Examples
    --------
    Five working days, Monday to Friday and no holidays, fit in two weeks:

    >>> calendar_days_for(5, Settings())
    14

    Forty working hours of 8 to the day are the same five working days:

    >>> calendar_days_for(40, Settings(time_unit="working hours", hours_per_day=8))
    14
    """
    if settings.time_unit == "calendar days":
        return math.ceil(units) + 1
    per_week = len(settings.working_days)
    steps = units * (per_week if settings.time_unit == "weeks" else 1)
    if settings.time_unit == "working hours":  # the calendar's step: hours / hours per day
        steps = units / settings.hours_per_day
    working = math.ceil(steps) + 1  # working day 1 is the start's own (or the next one)
    return 7 * math.ceil((working + len(settings.holidays)) / per_week)


def _alone_too_long(
    activities: list[Activity],
    settings: Settings,
    places: dict[str, SheetValue],
    match: TableMatch,
    room: int,
):
    """(units, sheet, cell, activity, what) of the first single duration that alone does not
    fit in ``room`` days: the largest pessimistic estimate, the due duration, the largest
    target duration."""
    fixed = "pessimistic" not in match.columns
    key = "most_likely" if fixed else "pessimistic"
    worst = max(activities, key=lambda a: a.pessimistic)
    candidates = [
        (
            worst.pessimistic,
            match.sheet.name,
            cell_name(worst.row - 1, match.columns[key]),
            worst.id,
            "the duration" if fixed else "the pessimistic estimate",
        )
    ]
    if isinstance(settings.due, float):
        sheet, cell, where = place_of(settings, "due", places)
        candidates.append((settings.due, sheet, cell, None, f"the due duration{where}"))
    timed = [a for a in activities if isinstance(a.target, float)]
    if timed:
        a = max(timed, key=lambda a: a.target)
        candidates.append(
            (
                a.target,
                match.sheet.name,
                cell_name(a.row - 1, match.columns["target"]),
                a.id,
                "the target",
            )
        )
    for units, sheet, cell, ident, what in candidates:
        if calendar_days_for(units, settings) > room:
            return units, sheet, cell, ident, what
    return None


def _latest_floor(activities: list[Activity], settings: Settings) -> float:
    """The most any start floor (Not before, actual dates, the status date) adds to a path,
    from above: an offset as given, a date as calendar days from the start (no unit counts
    more units than calendar days)."""
    values = [settings.status_date]
    values += [v for a in activities for v in (a.not_before, a.actual_start, a.actual_finish)]
    most = 0.0
    for v in values:
        if isinstance(v, dt.date):
            most = max(most, float((v - settings.start_date).days + 1))
        elif v is not None:
            most = max(most, float(v))
    return most


def check_dates_fit(
    activities: list[Activity],
    links: list[Link],
    settings: Settings,
    places: dict[str, SheetValue],
    match: TableMatch,
    out: Collector,
) -> None:
    """An error when a date the analysis may show could fall outside 1900-03-01..9999-12-31.

    The problem names the cell to change: a single duration (the largest pessimistic
    estimate, the due duration, the largest target) when it alone does not fit, otherwise
    the start date.
    """
    start = settings.start_date
    if start is None or not activities:
        return
    longest = sum(a.pessimistic for a in activities) + sum(max(lk.lag, 0.0) for lk in links)
    longest += _latest_floor(activities, settings)
    spread = spread_allowance(settings.confidence_levels) * math.sqrt(
        sum(((a.pessimistic - a.optimistic) / 6.0) ** 2 for a in activities)
    )
    targets = [a.target for a in activities if isinstance(a.target, float)]
    due = settings.due if isinstance(settings.due, float) else 0.0
    latest = max(longest + spread, due, *targets)
    shortest = max((a.optimistic + 4 * a.most_likely + a.pessimistic) / 6.0 for a in activities)
    before = max(spread - shortest, 0.0)  # how far the lowest dated quantile precedes 0
    room_after = (LAST_DATE - start).days
    room_before = (start - FIRST_DATE).days
    if calendar_days_for(latest, settings) <= room_after and (
        before == 0 or calendar_days_for(before, settings) <= room_before
    ):
        return
    unit = settings.time_unit
    alone = _alone_too_long(activities, settings, places, match, CALENDAR_DAYS)
    if alone is not None:
        units, sheet, cell, ident, what = alone
        out.error(
            "beyond-calendar",
            f"{what} of {units:,.6g} {unit} is longer than the whole calendar a "
            f"workbook can hold ({FIRST_DATE.isoformat()} to {LAST_DATE.isoformat()})",
            sheet,
            cell,
            ident,
            fix="Check the number and the time unit of the schedule.",
        )
        return
    sheet, cell, where = place_of(settings, "start_date", places)
    after = calendar_days_for(latest, settings) > room_after
    if not after:
        reach = (
            f"the low end of the finish's spread, {before:,.4g} {unit} before the "
            f"start, would fall before {FIRST_DATE.isoformat()}"
        )
    elif latest == longest + spread:
        reach = (
            f"all pessimistic durations and positive lags together ({longest:,.6g} "
            f"{unit}) and the spread of the finish ({spread:,.4g} {unit}) would reach "
            f"past {LAST_DATE.isoformat()}"
        )
    else:
        reach = (
            f"the {'due' if latest == due else 'target'} duration of {latest:,.6g} "
            f"{unit} would end after {LAST_DATE.isoformat()}"
        )
    out.error(
        "beyond-calendar",
        f"from the start date {start.isoformat()}{where} the schedule's dates do not "
        f"fit in the calendar a workbook can hold: {reach}",
        sheet,
        cell,
        fix="Check the start date (and its year), the durations and the time unit.",
    )
