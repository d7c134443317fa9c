"""The calendar of a schedule in working hours (issue 11): hours to working days and back.

Outside reference: numpy's business-day functions (``numpy.busday_offset`` with
``roll="forward"`` gives working day n + 1 counted from 0; ``numpy.busday_count`` counts
the working days in [begin, end)), against the rule the Method sheet states: work at hour
offset t falls on working day floor(t / hours per day) + 1, a finish at the end of hour t
on working day ceil(t / hours per day). Python's datetime gives the weekdays of the
hand-worked dates.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest

from converter.analyse.calendar import Calendar, days_per_unit
from converter.model import Settings
from converter.validate.bounds import calendar_days_for

D = dt.date


def test_hand_worked_friday_start_eight_hours():
    # Fri 2025-03-07 start, 8 h a day, Mon-Fri, Tue 03-11 a holiday.
    # Day 1 Fri 03-07 (hours 0-8), day 2 Mon 03-10 (8-16), day 3 Wed 03-12 (16-24).
    assert D(2025, 3, 7).weekday() == 4
    cal = Calendar(D(2025, 3, 7), "working hours", holidays=(D(2025, 3, 11),), hours_per_day=8)
    assert cal.start_date(0) == cal.start_date(7.99) == D(2025, 3, 7)
    assert cal.start_date(8) == D(2025, 3, 10)  # hour 8 is the first hour of day 2
    assert cal.finish_date(8) == D(2025, 3, 7)  # ending at hour 8 is the end of day 1
    assert cal.finish_date(8.5) == D(2025, 3, 10)
    assert cal.finish_date(17) == D(2025, 3, 12)  # ceil(17 / 8) = day 3, after the holiday
    assert cal.offset_of(D(2025, 3, 11)) == 16.0  # end of Tue: 2 working days = 16 h
    assert cal.start_date(16, finish=16) == D(2025, 3, 10)  # a milestone at hour 16: day 2
    assert cal.days_per_unit == 0.125


@pytest.mark.parametrize("hours_per_day", [8.0, 7.5, 10.0, 24.0, 0.5])
@pytest.mark.parametrize(
    ("start", "working_days", "holidays"),
    [
        (D(2025, 3, 1), (0, 1, 2, 3, 4), ()),  # a Saturday start
        (D(2026, 12, 30), (0, 1, 2, 3, 4), (D(2027, 1, 1), D(2027, 1, 6))),
        (D(2025, 3, 6), (0, 1, 2, 3, 4, 5), (D(2025, 3, 10),)),
        (D(2025, 3, 7), (6, 0, 1, 2, 3), ()),  # Sun-Thu
    ],
)
def test_hours_against_numpy_busday_functions(hours_per_day, start, working_days, holidays):
    cal = Calendar(start, "working hours", working_days, holidays, hours_per_day)
    mask = "".join("1" if i in working_days else "0" for i in range(7))
    hol = np.array(holidays, dtype="datetime64[D]")
    rng = np.random.default_rng(11)
    hours = list(rng.uniform(0, 400, 200)) + [0.0, hours_per_day, 3 * hours_per_day, 0.25]
    for t in hours:
        x = t / hours_per_day  # working days
        n = math.floor(round(x, 9))  # working day n + 1, counted from 0
        want_start = np.busday_offset(start, n, roll="forward", weekmask=mask, holidays=hol)
        assert cal.start_date(t) == want_start.astype(dt.date), t
        k = math.ceil(round(x, 9)) - 1 if x > 0 else n  # the finish's day, counted from 0
        want_finish = np.busday_offset(start, k, roll="forward", weekmask=mask, holidays=hol)
        assert cal.finish_date(t) == want_finish.astype(dt.date), t
    for k in range(0, 60):
        d = start + dt.timedelta(days=k)
        count = np.busday_count(start, d + dt.timedelta(days=1), weekmask=mask, holidays=hol)
        assert cal.offset_of(d) == pytest.approx(count * hours_per_day, abs=1e-9), d


def test_from_settings_and_days_per_unit():
    s = Settings(start_date=D(2025, 3, 3), time_unit="working hours", hours_per_day=7.5)
    cal = Calendar.from_settings(s)
    assert (cal.unit, cal.hours_per_day) == ("working hours", 7.5)
    assert days_per_unit("working hours", (0, 1, 2, 3, 4), 7.5) == pytest.approx(1 / 7.5)
    with pytest.raises(ValueError):
        Calendar(D(2025, 3, 3), "working hours", hours_per_day=0)


def test_bounds_count_hours_as_days():
    # 400 h at 8 a day = 50 working days: 51 days with day 1, 11 Mon-Fri weeks = 77 days
    # (calendar_days_for's own bound: 7 x ceil(51 / 5)); the same as 50 working days.
    hours = Settings(time_unit="working hours", hours_per_day=8)
    assert calendar_days_for(400, hours) == calendar_days_for(50, Settings()) == 77
