"""Tests for converter.analyse.calendar: offsets to dates and back.

Outside references: numpy.busday_offset / busday_count / is_busday, Python's datetime
(weekday of a date), and hand counts written beside each check. The formula strings are
also evaluated with a small emulation of WORKDAY.INTL and NETWORKDAYS.INTL written from
Microsoft's function reference (days > 0: nth working day after start_date; days = 0:
start_date itself; days < 0: nth working day before; NETWORKDAYS.INTL counts both ends
and is negative when the end is before the start). LibreOffice checks the same formulas
end to end elsewhere.
"""

from __future__ import annotations

import datetime as dt
import math
import re

import numpy as np
import pytest

from converter.analyse.calendar import Calendar
from converter.model import Settings

D = dt.date
MON, TUE, WED, THU, FRI, SAT, SUN = range(7)


def test_hand_count_new_year_holiday():
    # Wed 2026-12-30 start, holiday Fri 2027-01-01.
    # Working days: 1 Wed 12-30, 2 Thu 12-31, (Fri 01-01 holiday, Sat, Sun),
    # 3 Mon 01-04, 4 Tue 01-05, 5 Wed 01-06.
    assert D(2026, 12, 30).weekday() == WED and D(2027, 1, 1).weekday() == FRI
    cal = Calendar(D(2026, 12, 30), holidays=(D(2027, 1, 1),))
    assert cal.start_date(0) == D(2026, 12, 30)
    assert cal.finish_date(0) == D(2026, 12, 30)  # milestone at the start: day 1
    assert cal.start_date(1.9) == D(2026, 12, 31)  # during day 2
    assert cal.start_date(2) == D(2027, 1, 4)  # day 3 skips the holiday and weekend
    assert cal.finish_date(2) == D(2026, 12, 31)  # end of day 2
    assert cal.finish_date(2.5) == D(2027, 1, 4)  # partway into day 3
    assert cal.start_date(4.3) == D(2027, 1, 6)  # during day 5
    assert cal.finish_date(5) == D(2027, 1, 6)  # end of day 5
    # finishing by the end of Sun 01-03 = 2 working days; Mon 01-04 = 3
    assert cal.offset_of(D(2027, 1, 1)) == 2
    assert cal.offset_of(D(2027, 1, 3)) == 2
    assert cal.offset_of(D(2027, 1, 4)) == 3
    # before the start: end of Tue 12-29 is the start itself (0); end of Mon 12-28 is
    # one working day (Tue 12-29) before it
    assert cal.offset_of(D(2026, 12, 29)) == 0
    assert cal.offset_of(D(2026, 12, 28)) == -1


def test_start_on_saturday():
    # Sat 2025-03-01 start, Monday-Friday: work begins Mon 03-03 (day 1), Tue 03-04 day 2.
    assert D(2025, 3, 1).weekday() == SAT
    cal = Calendar(D(2025, 3, 1))
    assert cal.first_day == D(2025, 3, 3)
    assert cal.start_date(0) == D(2025, 3, 3)
    assert cal.finish_date(0) == D(2025, 3, 3)
    assert cal.finish_date(1) == D(2025, 3, 3)
    assert cal.start_date(1) == D(2025, 3, 4)
    assert cal.start_date(5) == D(2025, 3, 10)  # day 6: next Monday
    assert cal.offset_of(D(2025, 3, 2)) == 0  # end of Sunday: nothing worked yet
    assert cal.offset_of(D(2025, 3, 3)) == 1
    # end of Fri 02-28 is the start of Sat 03-01, i.e. offset 0; end of Thu 02-27 is one
    # working day (Fri 02-28) before the start
    assert cal.offset_of(D(2025, 2, 28)) == 0
    assert cal.offset_of(D(2025, 2, 27)) == -1


def test_offset_before_start_matches_definition():
    # offset_of(d) for d < start is minus the working days in [d + 1, start - 1]
    # (numpy.busday_count counts [begin, end)).
    cal = Calendar(D(2025, 3, 5), holidays=(D(2025, 2, 24),))
    for k in range(1, 30):
        d = cal.start - dt.timedelta(days=k)
        want = -np.busday_count(
            np.datetime64(d + dt.timedelta(days=1)),
            np.datetime64(cal.start),
            holidays=[np.datetime64(D(2025, 2, 24))],
        )
        assert cal.offset_of(d) == want


def test_six_day_week():
    # Monday-Saturday, start Thu 2025-03-06, holiday Mon 2025-03-10.
    # Days: 1 Thu 03-06, 2 Fri 03-07, 3 Sat 03-08, (Sun, Mon holiday), 4 Tue 03-11.
    assert D(2025, 3, 6).weekday() == THU and D(2025, 3, 10).weekday() == MON
    cal = Calendar(D(2025, 3, 6), working_days=(0, 1, 2, 3, 4, 5), holidays=(D(2025, 3, 10),))
    assert cal.weekmask == "1111110"
    assert cal.weekend_code == "0000001"
    assert cal.days_per_unit == 1.0
    assert cal.finish_date(3) == D(2025, 3, 8)  # end of Saturday
    assert cal.start_date(3) == D(2025, 3, 11)
    assert cal.offset_of(D(2025, 3, 10)) == 3


def test_weeks_unit():
    # Monday-Friday weeks: 1 week = 5 working days. Start Mon 2025-03-03.
    # 1 week: finish end of day 5 = Fri 03-07, next work day 6 = Mon 03-10.
    # 0.5 week = 2.5 days: day 3 = Wed 03-05 for both start and finish.
    cal = Calendar(D(2025, 3, 3), unit="weeks")
    assert cal.days_per_unit == 5.0
    assert cal.finish_date(1) == D(2025, 3, 7)
    assert cal.start_date(1) == D(2025, 3, 10)
    assert cal.start_date(0.5) == D(2025, 3, 5)
    assert cal.finish_date(0.5) == D(2025, 3, 5)
    assert cal.offset_of(D(2025, 3, 7)) == 1.0
    assert cal.offset_of(D(2025, 3, 4)) == pytest.approx(0.4)
    # Six-day weeks: 1 week = 6 days, finish end of Sat 03-08.
    six = Calendar(D(2025, 3, 3), unit="weeks", working_days=(0, 1, 2, 3, 4, 5))
    assert six.days_per_unit == 6.0
    assert six.finish_date(1) == D(2025, 3, 8)
    assert six.start_date(1) == D(2025, 3, 10)


def test_calendar_days_ignore_weekends_and_holidays():
    # Every date counts: start Sat 2025-03-01, offset 2 starts Mon 03-03,
    # finish at 2 is the end of Sun 03-02; the holiday on Sun is ignored.
    cal = Calendar(D(2025, 3, 1), unit="calendar days", holidays=(D(2025, 3, 2),))
    assert cal.start_date(0) == D(2025, 3, 1)
    assert cal.start_date(2) == D(2025, 3, 3)
    assert cal.finish_date(2) == D(2025, 3, 2)
    assert cal.offset_of(D(2025, 3, 2)) == 2
    assert cal.days_per_unit == pytest.approx(5 / 7)
    assert "WORKDAY" not in cal.start_date_formula("A1", "S", "H")


@pytest.mark.parametrize(
    "working_days, holidays",
    [
        ((0, 1, 2, 3, 4), ()),
        ((0, 1, 2, 3, 4), (D(2025, 3, 12), D(2025, 4, 18), D(2025, 4, 21))),
        ((0, 1, 2, 3, 4, 5), (D(2025, 3, 15),)),
        ((6, 0, 1, 2, 3), (D(2025, 3, 9),)),  # Sunday to Thursday
        ((2,), ()),  # one working day a week
    ],
)
@pytest.mark.parametrize("start", [D(2025, 3, 1), D(2025, 3, 3), D(2025, 3, 9)])
def test_against_numpy_busday_offset(working_days, holidays, start):
    # Reference: numpy.busday_offset with roll="forward" gives working day n + 1 (n from 0).
    cal = Calendar(start, working_days=working_days, holidays=holidays)
    mask = "".join("1" if i in working_days else "0" for i in range(7))
    hol = np.array(holidays, dtype="datetime64[D]")
    rng = np.random.default_rng(7)
    ts = np.concatenate([rng.uniform(0, 60, 200), np.arange(0, 40, 1.0), [1e-12, 3 - 1e-12]])
    starts = cal.start_dates(ts)
    finishes = cal.finish_dates(ts)
    for t, s, f in zip(ts, starts, finishes, strict=True):
        k = math.floor(round(t, 9))
        want_s = np.busday_offset(
            np.datetime64(start), k, roll="forward", weekmask=mask, holidays=hol
        )
        kf = max(math.ceil(round(t, 9)) - 1, 0)
        want_f = np.busday_offset(
            np.datetime64(start), kf, roll="forward", weekmask=mask, holidays=hol
        )
        assert s == want_s.astype(dt.date)
        assert f == want_f.astype(dt.date)
        assert np.is_busday(np.datetime64(s), weekmask=mask, holidays=hol)
    assert [cal.start_date(t) for t in ts[:20]] == starts[:20]


def test_handover_milestone_takes_the_day_the_work_before_it_ends():
    # The case: a milestone at offset 16 from Mon 2027-03-01, Monday to Friday and
    # two holidays (invented: Wed 2027-03-10 and Wed 2027-03-17). Hand count: working days
    # 1-5 = 03-01..05, 6-9 = 03-08, 09, 11, 12, 10-13 = 03-15, 16, 18, 19, 14-16 =
    # 03-22..24, 17 = Thu 03-25. Before the fix the milestone started 03-25 and finished
    # 03-24; it now starts and finishes on 03-24, the end of day 16.
    hol = (D(2027, 3, 10), D(2027, 3, 17))
    assert D(2027, 3, 1).weekday() == MON
    cal = Calendar(D(2027, 3, 1), holidays=hol)
    assert cal.finish_date(16) == D(2027, 3, 24)
    assert cal.start_date(16) == D(2027, 3, 25)  # work at offset 16 is done on day 17
    assert cal.start_date(16, finish=16) == D(2027, 3, 24)
    assert cal.start_dates([16, 0, 16], finishes=[16, 0, 17]) == [
        D(2027, 3, 24),
        D(2027, 3, 1),
        D(2027, 3, 25),
    ]
    # numpy.busday_offset: working day 16 counted from 0 is offset 15.
    want = np.busday_offset(
        np.datetime64("2027-03-01"),
        15,
        roll="forward",
        holidays=np.array(hol, dtype="datetime64[D]"),
    )
    assert cal.start_date(16, finish=16) == want.astype(dt.date)


@pytest.mark.parametrize(
    "cal",
    [
        Calendar(D(2026, 12, 30), holidays=(D(2027, 1, 1), D(2027, 1, 6))),
        Calendar(D(2025, 3, 1), unit="weeks"),
        Calendar(D(2025, 3, 1), unit="calendar days"),
    ],
    ids=["working days", "weeks", "calendar days"],
)
def test_start_never_after_finish_and_milestones_start_where_they_finish(cal):
    # Reference: the rules themselves in numpy terms. For any length d >= 0 the start date
    # (given the finish) is not after the finish date; a zero length starts on its finish
    # date; any length that stays positive after rounding keeps the plain start rule.
    rng = np.random.default_rng(11)
    starts = np.concatenate([rng.uniform(0, 40, 300), np.arange(0, 30.0)])
    lengths = np.concatenate([rng.choice([0.0, 0.5, 1.0, 2.0, 1e-12], 300), np.zeros(30)])
    finishes = starts + lengths
    got = cal.start_dates(starts, finishes=finishes)
    plain = cal.start_dates(starts)
    end = cal.finish_dates(finishes)
    for s, f, g, p, e in zip(starts, finishes, got, plain, end, strict=True):
        assert g <= e
        if round(f, 9) == round(s, 9):
            assert g == e  # a milestone: one date
        else:
            assert g == p  # a positive length: the start rule unchanged


def test_offset_of_round_trip_against_numpy():
    # For every date d with offset_of(d) > 0, finish_date(offset_of(d)) is the last working
    # day on or before d (numpy.busday_offset with roll="backward").
    hol = (D(2025, 4, 18), D(2025, 4, 21))
    for unit in ("working days", "weeks"):
        cal = Calendar(D(2025, 3, 8), unit=unit, holidays=hol)
        for k in range(0, 80):
            d = cal.start + dt.timedelta(days=k)
            off = cal.offset_of(d)
            if off <= 0:
                continue
            want = np.busday_offset(
                np.datetime64(d), 0, roll="backward", holidays=np.array(hol, dtype="datetime64[D]")
            )
            assert cal.finish_date(off) == want.astype(dt.date)


def test_float_noise_is_guarded():
    # 7/3 + 7/3 + 7/3 in floats is 7.000000000000001 or 6.99...; both count as 7.
    cal = Calendar(D(2025, 3, 3))
    noisy_low, noisy_high = 7 - 1e-12, 7 + 1e-12
    assert cal.start_date(noisy_low) == cal.start_date(7) == D(2025, 3, 12)  # day 8 (hand count)
    assert cal.finish_date(noisy_high) == cal.finish_date(7) == D(2025, 3, 11)  # end of day 7
    assert cal.start_date(7 - 1e-6) == D(2025, 3, 11)  # a real fraction is not noise


def test_weekmask_and_codes():
    cal = Calendar(D(2025, 3, 3))
    assert cal.weekmask == "1111100"
    assert cal.weekend_code == "0000011"  # Microsoft: 0000011 = Saturday and Sunday off
    assert Calendar(D(2025, 3, 3), working_days=(6, 0, 1, 2, 3)).weekend_code == "0000110"


def test_bad_calendar_rejected():
    with pytest.raises(ValueError):
        Calendar(D(2025, 3, 3), working_days=())
    with pytest.raises(ValueError):
        Calendar(D(2025, 3, 3), unit="fortnights")
    with pytest.raises(ValueError):
        Calendar(D(2025, 3, 3), working_days=(7,))
    with pytest.raises(ValueError):  # holidays exist but the formula has no range for them
        Calendar(D(2025, 3, 3), holidays=(D(2025, 3, 4),)).start_date_formula("A1", "B1", None)


def test_from_settings():
    s = Settings(
        start_date=D(2025, 3, 3),
        time_unit="weeks",
        working_days=(0, 1, 2, 3),
        holidays=(D(2025, 3, 5),),
    )
    cal = Calendar.from_settings(s)
    assert cal.unit == "weeks" and cal.days_per_unit == 4.0 and cal.holidays == (D(2025, 3, 5),)
    with pytest.raises(ValueError):
        Calendar.from_settings(Settings())


# ---------------------------------------------------------------- formula emulation


def _working(serial: int, weekend: str, holidays: list[int]) -> bool:
    return weekend[dt.date.fromordinal(serial).weekday()] == "0" and serial not in holidays


def _workday_intl(start, days, weekend="0000011", holidays=()):
    """WORKDAY.INTL from Microsoft's reference: days truncated; 0 returns start_date."""
    start, days, step = int(start), int(days), 1 if days > 0 else -1
    d, left = start, abs(days)
    while left:
        d += step
        if _working(d, weekend, list(holidays)):
            left -= 1
    return d


def _networkdays_intl(start, end, weekend="0000011", holidays=()):
    """NETWORKDAYS.INTL from Microsoft's reference: both ends count; negative if end < start."""
    lo, hi, sign = (start, end, 1) if end >= start else (end, start, -1)
    return sign * sum(_working(d, weekend, list(holidays)) for d in range(lo, hi + 1))


def _round(x, n):
    """Spreadsheet ROUND: halves away from zero."""
    return math.copysign(math.floor(abs(x) * 10**n + 0.5) / 10**n, x)


def _roundup(x, n):
    """Spreadsheet ROUNDUP: away from zero."""
    s = 10**n
    return math.copysign(math.ceil(abs(x) * s) / s, x)


def _eval(formula: str, cells: dict) -> float:
    """Evaluate our formula text with Python: only the functions we emit are known."""
    assert not formula.startswith("=")
    py = formula.replace("WORKDAY.INTL(", "WORKDAY_INTL(").replace("NETWORKDAYS.INTL(", "NWD(")
    py = py.replace("ROUNDUP(", "RUP(")
    py = re.sub(r"(?<![<>=])=(?!=)", "==", py)
    env = {
        "WORKDAY_INTL": _workday_intl,
        "NWD": _networkdays_intl,
        "INT": math.floor,
        "ROUND": _round,
        "RUP": _roundup,
        "IF": lambda c, a, b: a if c else b,
        "MIN": min,
    }
    env.update(cells)
    return eval(py, {"__builtins__": {}}, env)


def _date(serial: float) -> dt.date:
    assert serial == int(serial)  # a whole date serial
    return dt.date.fromordinal(int(serial))


CALENDARS = [
    Calendar(D(2026, 12, 30), holidays=(D(2027, 1, 1), D(2027, 1, 6))),
    Calendar(D(2025, 3, 1)),
    Calendar(D(2025, 3, 6), working_days=(0, 1, 2, 3, 4, 5), holidays=(D(2025, 3, 10),)),
    Calendar(D(2025, 3, 2), unit="weeks", holidays=(D(2025, 3, 3),)),
    Calendar(D(2025, 3, 1), unit="calendar days"),
    Calendar(D(2025, 3, 7), working_days=(6, 0, 1, 2, 3)),
    # working hours (issue 11): 8 and 7.5 hours a day, the offsets below read as hours
    Calendar(D(2026, 12, 30), "working hours", holidays=(D(2027, 1, 1),), hours_per_day=8),
    Calendar(D(2025, 3, 1), "working hours", working_days=(0, 1, 2, 3), hours_per_day=7.5),
]


@pytest.mark.parametrize("cal", CALENDARS, ids=range(len(CALENDARS)))
def test_formulas_match_python_in_emulation(cal):
    hol_serials = [h.toordinal() for h in cal.holidays]
    cells = {"S": cal.start.toordinal(), "H": hol_serials}
    hol_ref = "H" if cal.holidays else None
    rng = np.random.default_rng(3)
    ts = list(rng.uniform(-5, 50, 150)) + [0, 0.5, 1, 2, 3, 7 - 1e-12, 7 + 1e-12, -1, -0.5]
    for t in ts:
        cells["T"] = float(t)
        got_s = _eval(cal.start_date_formula("T", "S", hol_ref), cells)
        got_f = _eval(cal.finish_date_formula("T", "S", hol_ref), cells)
        assert _date(got_s) == cal.start_date(t), t
        assert _date(got_f) == cal.finish_date(t), t
        for length in (0.0, 1e-12, 0.5, 1.0):  # with the finish: milestones and others
            cells["F"] = float(t) + length
            got_m = _eval(cal.start_date_formula("T", "S", hol_ref, finish_ref="F"), cells)
            assert _date(got_m) == cal.start_date(t, finish=t + length), (t, length)
    for k in range(-15, 40):
        d = cal.start + dt.timedelta(days=k)
        cells["D"] = d.toordinal()
        got = _eval(cal.offset_of_formula("D", "S", hol_ref), cells)
        assert got == pytest.approx(cal.offset_of(d), abs=1e-12), d
    assert _date(_eval(cal.first_day_formula("S", hol_ref), cells)) == cal.first_day


def test_formula_text_convention():
    # No leading "="; the weekend string and the holiday range appear as passed.
    cal = Calendar(D(2025, 3, 3), holidays=(D(2025, 3, 4),))
    for text in (
        cal.start_date_formula("Tasks!$F5", "Settings!$B$2", "Holidays!$A$2:$A$9"),
        cal.finish_date_formula("Tasks!$F5", "Settings!$B$2", "Holidays!$A$2:$A$9"),
    ):
        assert not text.startswith("=")
        assert text.count('"0000011"') == 2 and text.count("Holidays!$A$2:$A$9") == 2
        assert text.count("(") == text.count(")")


# ---------------------------------------------------------------- LibreOffice


@pytest.mark.libreoffice
def test_milestone_start_formula_recalculates_in_libreoffice(libreoffice, tmp_path):
    # Outside check: LibreOffice evaluates the start-date formula given the finish cell
    # (the MIN form) and must reach the date cached from Calendar.start_dates(finishes=).
    import xlsxwriter
    from recalc import compare_recalculated, recalculate

    epoch = D(1899, 12, 30).toordinal()  # serial 0 of the 1900 date system from 1900-03-01

    def serial(d):
        return float(d.toordinal() - epoch)

    cases = [  # (calendar, its sheet)
        (Calendar(D(2027, 3, 1), holidays=(D(2027, 3, 10), D(2027, 3, 17))), "hol"),
        (Calendar(D(2025, 3, 1), unit="weeks", holidays=(D(2025, 3, 3),)), "weeks"),
        (Calendar(D(2025, 3, 1), unit="calendar days"), "cal"),
    ]
    pairs = [
        (16.0, 16.0),
        (0.0, 0.0),
        (16.0, 17.0),
        (2.5, 2.5),
        (3.0, 3.0 + 1e-12),
        (7.25, 9.0),
        (1.0, 1.0),
    ]
    path = tmp_path / "milestones.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    date_format = wb.add_format({"num_format": "yyyy-mm-dd"})
    for cal, label in cases:
        ws = wb.add_worksheet(label)
        ws.write_datetime(0, 1, dt.datetime.combine(cal.start, dt.time()), date_format)
        for k, h in enumerate(cal.holidays):
            ws.write_datetime(k, 5, dt.datetime.combine(h, dt.time()), date_format)
        hol = f"$F$1:$F${len(cal.holidays)}" if cal.holidays else None
        got = cal.start_dates([s for s, _ in pairs], finishes=[f for _, f in pairs])
        for r, ((s, f), want) in enumerate(zip(pairs, got, strict=True), start=1):
            ws.write_number(r, 0, s)
            ws.write_number(r, 1, f)
            formula = cal.start_date_formula(f"A{r + 1}", "$B$1", hol, finish_ref=f"B{r + 1}")
            ws.write_formula(r, 2, "=" + formula, date_format, serial(want))
    wb.close()
    report = compare_recalculated(path, recalculate(path, tmp_path))
    assert report.compared == len(cases) * len(pairs)
    assert list(report) == []
