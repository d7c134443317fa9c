"""Durations and lags written with a unit (issue 11): 16h, 4 hrs, 3d, 3 days, 2w, 1.5 wks.

What is checked against what: every converted number is worked by hand in the comment
beside it (a day is ``Hours per day`` hours, a week is as many working days as the
working week has; 7 days in a calendar-day schedule: common practice); the problems must
name the sheet, the cell (worked out from the header layout in tests/support/helpers.py:
A=ID, B=Description, C=Predecessors, D=Optimistic, E=Most likely, F=Pessimistic) and the
activity, as the project's rules for bad input ask.
"""

from __future__ import annotations

import pytest
from helpers import HEADER, write_csv, write_xlsx

from converter.api import ConvertOptions, load
from converter.model import ERROR, Settings
from converter.options import parse_hours_per_day, parse_time_unit
from converter.validate.links import parse_link_token
from converter.validate.units import in_time_units
from converter.values import UnitError, parse_duration, split_unit, unit_factor


def run(path, **options):
    return load(path, ConvertOptions(simulate=False, **options))


def errors(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == ERROR}


# --------------------------------------------------------------------------- one cell
@pytest.mark.parametrize(
    ("text", "time_unit", "hours_per_day", "days_per_week", "want"),
    [
        ("16h", "working days", 8, 5, 2.0),  # 16 h / 8 h a day = 2 days
        ("4 hrs", "working days", 8, 5, 0.5),  # 4 / 8 = 0.5
        ("3d", "working days", 8, 5, 3.0),  # a day is a day
        ("3 days", "working days", 8, 5, 3.0),
        ("2w", "working days", 8, 5, 10.0),  # 2 weeks x 5 working days
        ("1.5 wks", "working days", 8, 5, 7.5),  # 1.5 x 5
        ("2 weeks", "working days", 8, 6, 12.0),  # a Mon-Sat week: 2 x 6
        ("2 WEEKS", "working days", 8, 6, 12.0),  # case does not matter
        ("16h", "working hours", 8, 5, 16.0),  # already hours
        ("3d", "working hours", 7.5, 5, 22.5),  # 3 x 7.5 h
        ("1 wk", "working hours", 7.5, 5, 37.5),  # 5 x 7.5 h
        ("2w", "working hours", 10, 4, 80.0),  # 2 x 4 days x 10 h
        ("10d", "weeks", 8, 5, 2.0),  # 10 days / 5 a week
        ("20h", "weeks", 8, 5, 0.5),  # 20 h / (8 x 5 = 40 h a week)
        ("2w", "calendar days", 8, 5, 14.0),  # a calendar week is 7 days
        ("12h", "calendar days", 8, 5, 1.5),  # 12 h / 8 h a day
        ("4", "working hours", 8, 5, 4.0),  # a bare number is in the time unit
        (6.0, "weeks", 8, 5, 6.0),
    ],
)
def test_unit_conversion_by_hand(text, time_unit, hours_per_day, days_per_week, want):
    got = parse_duration(text, time_unit, hours_per_day, days_per_week)
    assert got == pytest.approx(want, rel=1e-15)
    settings = Settings(
        time_unit=time_unit,
        hours_per_day=hours_per_day,
        working_days=tuple(range(days_per_week)),
    )
    assert in_time_units(text, settings) == pytest.approx(want, rel=1e-15)


def test_units_have_one_factor_each_way():
    # hours -> days -> hours is the identity (8 h a day): 1/8 day per hour x 8 h per day
    assert unit_factor("hours", "working days") * unit_factor("days", "working hours") == 1.0
    assert split_unit("16 H") == (16.0, "hours") and split_unit("3") == (3.0, None)


@pytest.mark.parametrize("text", ["2 months", "1 mo", "1yr", "3 Years", "2 fortnights", "5 dayz"])
def test_months_years_and_unknown_units_refused(text):
    with pytest.raises(UnitError) as exc:
        split_unit(text)
    assert f'"{text}"' in str(exc.value)


def test_time_unit_and_hours_per_day_settings():
    for alias in ("working hours", "Working Hours", "hours", "hrs", "work hours"):
        assert parse_time_unit(alias) == "working hours", alias
    assert parse_hours_per_day("7.5") == 7.5 and parse_hours_per_day(24) == 24.0
    for bad in ("0", "-1", "24.5", "eight"):
        with pytest.raises(ValueError):
            parse_hours_per_day(bad)


# --------------------------------------------------------------------------- lags
@pytest.mark.parametrize(
    ("token", "want_days", "want_hours"),
    [
        # 8 hours a day, Mon-Fri: (working days, working hours)
        ("A3[SS+2d]", ("A3", "SS", 2.0), ("A3", "SS", 16.0)),  # 2 d = 16 h
        ("A3[+4h]", ("A3", "FS", 0.5), ("A3", "FS", 4.0)),  # 4 h = half a day
        ("A3[FF-1w]", ("A3", "FF", -5.0), ("A3", "FF", -40.0)),  # a lead of 5 d = 40 h
        ("A3[ss + 1.5 Days]", ("A3", "SS", 1.5), ("A3", "SS", 12.0)),
        ("A3[+2]", ("A3", "FS", 2.0), ("A3", "FS", 2.0)),  # bare: the time unit
        ("B-1[SF]", ("B-1", "SF", 0.0), ("B-1", "SF", 0.0)),  # IDs keep their + and -
    ],
)
def test_lags_with_units_in_brackets(token, want_days, want_hours):
    assert parse_link_token(token, Settings()) == want_days
    assert parse_link_token(token, Settings(time_unit="working hours")) == want_hours


def test_lag_in_months_is_refused_naming_the_cell(tmp_path):
    path = write_xlsx(
        tmp_path / "lag.xlsx",
        {"Activities": [HEADER, ["A", "a", None, 1, 2, 3], ["B", "b", "A[SS+1 month]", 1, 2, 3]]},
    )
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {("bad-link", "Activities", "C3", "B")}
    assert "months" in problems[0].message and "ambiguous" in problems[0].message


def test_links_sheet_lag_with_a_unit(tmp_path):
    links = [
        ["Predecessor", "Successor", "Type", "Lag"],
        ["A", "B", "SS", "4h"],  # 4 h / 8 h = 0.5 working days
        ["A", "C", "FF", "-1w"],  # a lead of 5 working days
    ]
    rows = [
        ["ID", "Description", "Optimistic", "Most likely", "Pessimistic"],
        ["A", "a", 1, 2, 3],
        ["B", "b", 1, 2, 3],
        ["C", "c", 1, 2, 3],
    ]
    path = write_xlsx(tmp_path / "links.xlsx", {"Activities": rows, "Links": links})
    schedule, problems = run(path)
    assert schedule is not None, problems
    lags = {(lk.pred, lk.succ): (lk.type, lk.lag) for lk in schedule.links}
    assert lags == {("A", "B"): ("SS", 0.5), ("A", "C"): ("FF", -5.0)}
    links[1][3] = "2 years"
    path = write_xlsx(tmp_path / "bad.xlsx", {"Activities": rows, "Links": links})
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {("bad-unit", "Links", "D2", "B")}  # the Lag cell


# --------------------------------------------------------------------------- whole sheets
def test_estimates_and_target_with_units_in_working_hours(tmp_path):
    settings = [["Time unit", "working hours"], ["Hours per day", 7.5]]
    rows = [
        [*HEADER, "Target"],
        ["A", "Isolate", None, "2h", "3 hrs", "6H", None],
        ["B", "Drain", "A[+0.5h]", 4, 6, "1d", "3d"],  # 1 d = 7.5 h; target 3 x 7.5 = 22.5
        ["C", "Inspect", "B[FF-1h]", "0.5w", "3 days", "1 wk", None],  # 18.75, 22.5, 37.5 h
    ]
    path = write_xlsx(tmp_path / "hours.xlsx", {"Activities": rows, "Settings": settings})
    schedule, problems = run(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.settings.time_unit == "working hours"
    assert schedule.settings.hours_per_day == 7.5
    got = {a.id: (a.optimistic, a.most_likely, a.pessimistic) for a in schedule.activities}
    assert got == {"A": (2, 3, 6), "B": (4, 6, 7.5), "C": (18.75, 22.5, 37.5)}
    assert schedule.activities[1].target == 22.5
    assert {lk.lag for lk in schedule.links} == {0.5, -1.0}
    # the input as read keeps the text as typed
    assert schedule.raw.rows[0][3:6] == ["2h", "3 hrs", "6H"]


def test_hours_per_day_from_the_command_line_wins(tmp_path):
    rows = [HEADER, ["A", "a", None, "1d", "2d", "3d"]]
    path = write_xlsx(
        tmp_path / "hpd.xlsx", {"Activities": rows, "Settings": [["Hours per day", 8]]}
    )
    schedule, _ = run(path, time_unit="hours", hours_per_day=10)
    # 1, 2, 3 days of 10 hours
    a = schedule.activities[0]
    assert (a.optimistic, a.most_likely, a.pessimistic) == (10, 20, 30)
    assert schedule.settings.source_of("hours_per_day") == "command line"


def test_bad_hours_per_day_names_its_cell(tmp_path):
    rows = [HEADER, ["A", "a", None, 1, 2, 3]]
    path = write_xlsx(
        tmp_path / "hpd.xlsx", {"Activities": rows, "Settings": [["Hours per day", 25]]}
    )
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {("bad-setting", "Settings", "B1", None)}


@pytest.mark.parametrize(
    ("cell_text", "column", "cell"),
    [("2 months", 5, "F3"), ("1 yr", 3, "D3"), ("3 mos", 4, "E3")],
)
def test_months_and_years_in_estimates_name_sheet_cell_and_activity(
    tmp_path, cell_text, column, cell
):
    row = ["B", "b", "A", 1, 2, 3]
    row[column] = cell_text
    path = write_csv(tmp_path / "m.csv", [HEADER, ["A", "a", None, 1, 2, 3], row])
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {("bad-unit", "m.csv", cell, "B")}
    assert f'"{cell_text}"' in problems[0].message and problems[0].fix


def test_a_unit_past_the_largest_duration_shows_the_conversion(tmp_path):
    # 300,000 weeks x 5 = 1,500,000 days, in hours x 8 = 12,000,000 > 10,000,000
    row = ["B", "b", "A", 1, 2, "300000w"]
    path = write_csv(tmp_path / "big.csv", [HEADER, ["A", "a", None, 1, 2, 3], row])
    schedule, problems = run(path, time_unit="working hours")
    assert schedule is None
    assert errors(problems) == {("too-large", "big.csv", "F3", "B")}
    assert '"300000w" (= 12000000 working hours)' in problems[0].message


# --------------------------------------------------------------------------- the due duration
def test_due_with_a_unit_on_the_sheet_and_the_command_line(tmp_path):
    rows = [HEADER, ["A", "a", None, 1, 2, 3]]
    settings = [["Time unit", "working hours"], ["Hours per day", 7.5], ["Due date", "2w"]]
    path = write_xlsx(tmp_path / "due.xlsx", {"Activities": rows, "Settings": settings})
    schedule, problems = run(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.settings.due == 75.0  # 2 weeks x 5 days x 7.5 h
    schedule, _ = run(path, due="3d")  # the command line wins: 3 x 7.5 h
    assert schedule.settings.due == 22.5
    schedule, _ = run(path, due="3d", time_unit="working days")  # 3 days in days
    assert schedule.settings.due == 3.0


@pytest.mark.parametrize(
    ("due", "code"),
    [("2 months", "bad-setting"), ("-1w", "bad-setting"), ("2000000w", "bad-setting")],
)
def test_bad_due_with_a_unit_names_its_cell(tmp_path, due, code):
    # 2,000,000 weeks x 5 = 10,000,000 days, x 8 h = 80,000,000 h: past 10,000,000
    rows = [HEADER, ["A", "a", None, 1, 2, 3]]
    settings = [["Time unit", "working hours"], ["Due date", due]]
    path = write_xlsx(tmp_path / "due.xlsx", {"Activities": rows, "Settings": settings})
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {(code, "Settings", "B2", None)}
    assert f'"{due}"' in problems[0].message
