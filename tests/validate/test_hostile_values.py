"""Numbers, dates and IDs that once crashed the analysis or were misread (issue 9).

What is checked against what:
- the cell each problem names is worked out by hand from the invented rows (header on
  row 1, the good activity A on row 2, the row under test on row 3; columns as in
  ``helpers.HEADER``: A=ID, B=Description, C=Predecessors, D=O, E=M, F=P);
- ``check`` and ``convert`` must agree: both exit 2 with the same problems, never 1;
- the limits (durations and lags up to 10,000,000 time units, dates 1900-03-01 to
  9999-12-31) are the project's documented ones; 9999-12-31 is the last date of the
  1900 date system (Microsoft's Excel specifications and limits, from memory);
- dates in messages are compared with the ISO text a user types.
"""

from __future__ import annotations

import datetime as dt
import warnings

import pytest
from helpers import HEADER, write_csv, write_xlsx

from converter.api import ConvertOptions, check, convert, load
from converter.model import ERROR, WARNING


def run(path, **options):
    return load(path, ConvertOptions(simulate=False, **options))


def errors(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == ERROR}


def warnings_of(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == WARNING}


def two_rows(path, row, settings=None, links=None, header=HEADER):
    """Header (row 1), a good activity A (row 2), then ``row`` (row 3)."""
    sheets = {"Activities": [header, ["A", "a", None, 1, 2, 3], row]}
    if settings is not None:
        sheets["Settings"] = settings
    if links is not None:
        sheets["Links"] = links
    return write_xlsx(path, sheets)


def start(d):
    return [["Start date", d]]  # Settings!B1


# --------------------------------------------------------------------------- crashes
NO_PREDECESSOR_HEADER = ["ID", "Description", "Optimistic", "Most likely", "Pessimistic"]

# (name, rows after A, settings, links, options, the error (code, sheet, cell, activity))
CRASHES = [
    (
        "o-m-p-1e308",
        ["B", "b", "A", 1e308, 1e308, 1e308],
        None,
        None,
        {},
        {("too-large", "Activities", c, "B") for c in ("D3", "E3", "F3")},
    ),
    (
        "p-1e155",
        ["B", "b", "A", 1, 2, 1e155],
        None,
        None,
        {},
        {("too-large", "Activities", "F3", "B")},
    ),
    (
        "lag-400-digits",
        ["B", "b", "A[+" + "9" * 400 + "]", 1, 2, 3],
        None,
        None,
        {},
        {("bad-link", "Activities", "C3", "B")},
    ),
    (
        "lag-1e8-in-brackets",
        ["B", "b", "A[SS-1e8]", 1, 2, 3],
        None,
        None,
        {},
        {("bad-link", "Activities", "C3", "B")},
    ),
    (
        "start-9999-12-31",
        ["B", "b", "A", 1, 2, 3],
        start(dt.date(9999, 12, 31)),
        None,
        {},
        {("beyond-calendar", "Settings", "B1", None)},
    ),
    (
        "start-9999-12-20-command-line",
        ["B", "b", "A", 1, 2, 3],
        None,
        None,
        {"start_date": "9999-12-20"},
        {("beyond-calendar", None, None, None)},
    ),
    (
        "3e6-days-from-2025",
        ["B", "b", "A", 3e6, 3e6, 3e6],
        start(dt.date(2025, 1, 6)),
        None,
        {},
        {("beyond-calendar", "Activities", "F3", "B")},
    ),
    (
        "start-before-1900-03-01",
        ["B", "b", "A", 1, 2, 3],
        start(dt.date(1900, 2, 28)),
        None,
        {},
        {("bad-setting", "Settings", "B1", None)},
    ),
    (
        "due-duration-beyond-the-calendar",
        ["B", "b", "A", 1, 2, 3],
        start(dt.date(9000, 1, 3)) + [["Due", 1e6]],
        None,
        {},
        {("beyond-calendar", "Settings", "B1", None)},
    ),
]


@pytest.mark.parametrize(
    "name, row, settings, links, options, want", CRASHES, ids=[c[0] for c in CRASHES]
)
def test_check_and_convert_agree_and_name_the_cell(
    tmp_path, name, row, settings, links, options, want
):
    path = two_rows(tmp_path / f"{name}.xlsx", row, settings, links)
    opts = ConvertOptions(simulate=False, **options)
    checked = check(path, opts)
    converted = convert(path, opts, outdir=tmp_path / "out")
    assert checked.exit_code == converted.exit_code == 2
    assert errors(checked.problems) == errors(converted.problems) == want
    assert converted.workbook is None and not (tmp_path / "out").exists()


def test_links_sheet_lag_of_1e308_names_its_cell(tmp_path):
    links = [["Predecessor", "Successor", "Type", "Lag"], ["A", "B", "FS", 1e308]]  # D2
    path = write_xlsx(
        tmp_path / "l.xlsx",
        {
            "Activities": [NO_PREDECESSOR_HEADER, ["A", "a", 1, 2, 3], ["B", "b", 1, 2, 3]],
            "Links": links,
        },
    )
    checked = check(path, ConvertOptions(simulate=False))
    assert checked.exit_code == 2
    assert errors(checked.problems) == {("too-large", "Links", "D2", "B")}


def test_schedules_at_the_edges_of_the_calendar_convert(tmp_path):
    # Just inside the limits: a small schedule late in 9999 and one starting 1900-03-01
    # with fixed durations (no spread, so no date before the start is shown). Every date
    # written lies in the calendar, and the analysis raises no warning.
    late = two_rows(tmp_path / "late.xlsx", ["B", "b", "A", 1, 2, 3], start(dt.date(9999, 11, 1)))
    early = write_xlsx(
        tmp_path / "early.xlsx",
        {
            "Activities": [HEADER, ["A", "a", None, 1, 1, 1], ["B", "b", "A", 2, 2, 2]],
            "Settings": start(dt.date(1900, 3, 1)),
        },
    )
    for path in (late, early):
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            result = convert(
                path, ConvertOptions(iterations=500, json=True), outdir=tmp_path / "out"
            )
        assert result.exit_code == 0, result.problems
    # the early schedule: 3 working days from Thu 1900-03-01 (hand count: Thu 1, Fri 2,
    # Mon 5) end on 1900-03-05.
    assert result.headline["finish_date"] == "1900-03-05"
    # A small spread dates nothing before the start: A then B, each 1/2/3, mean 4 and sd
    # sqrt(2) / 3 (Malcolm et al. 1959), so the lowest row of the tables, about 3 sd below
    # the mean, is at 2.6 > 0 (hand count): accepted on 1900-03-01.
    small = two_rows(tmp_path / "small.xlsx", ["B", "b", "A", 1, 2, 3], start(dt.date(1900, 3, 1)))
    assert errors(check(small).problems) == set()
    # B with 0/0/60 has mean 10 and sd 10, so the project's mean is 12 and its P1 about
    # 12 - 2.33 * 10 = -11: dates before the start, refused on 1900-03-01, naming it
    spread = two_rows(
        tmp_path / "spread.xlsx", ["B", "b", "A", 0, 0, 60], start(dt.date(1900, 3, 1))
    )
    assert errors(check(spread).problems) == {("beyond-calendar", "Settings", "B1", None)}
    # ... and accepted two months later (about 20 working days are needed before it)
    later = two_rows(tmp_path / "later.xlsx", ["B", "b", "A", 0, 0, 60], start(dt.date(1900, 5, 1)))
    assert errors(check(later).problems) == set()


def test_start_near_the_end_is_refused_but_a_shorter_schedule_fits(tmp_path):
    # The bound is an upper bound: the same start with shorter durations fits.
    opts = {"start_date": "9999-12-01"}
    long_path = two_rows(tmp_path / "long.xlsx", ["B", "b", "A", 10, 20, 30])
    short_path = two_rows(tmp_path / "short.xlsx", ["B", "b", "A", 1, 1, 1])
    _, problems = run(long_path, **opts)
    assert errors(problems) == {("beyond-calendar", None, None, None)}
    (p,) = [p for p in problems if p.severity == ERROR]
    assert "9999-12-01" in p.message and "--start-date" in p.message
    schedule, problems = run(short_path, **opts)
    assert schedule is not None, problems


EXTREME_BUT_VALID = {
    "durations-1e7-no-start": [["A", "a", None, 1e7, 1e7, 1e7], ["B", "b", "A", 0, 5e6, 1e7]],
    "tiny-durations": [["A", "a", None, 1e-300, 2e-300, 3e-300], ["B", "b", "A", 0, 0, 1e-310]],
    "lead-of-1e7": [["A", "a", None, 1, 2, 3], ["B", "b", "A[SS-10000000]", 1, 2, 3]],
    "lag-of-1e7": [["A", "a", None, 1, 2, 3], ["B", "b", "A[FF+10000000]", 1, 2, 3]],
    "all-milestones": [["A", "a", None, 0, 0, 0], ["B", "b", "A", 0, 0, 0]],
    "one-fixed-activity": [["A", "a", None, 5, 5, 5]],
}


@pytest.mark.parametrize("name", sorted(EXTREME_BUT_VALID))
def test_what_validation_accepts_analyses_without_a_warning(tmp_path, name):
    # Numpy's RuntimeWarnings (overflow, invalid value) must never reach stderr: every
    # warning is made an error here, so any one would fail the conversion.
    path = write_xlsx(tmp_path / f"{name}.xlsx", {"Activities": [HEADER, *EXTREME_BUT_VALID[name]]})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = convert(path, ConvertOptions(iterations=2000, json=True), outdir=tmp_path / "out")
    assert result.exit_code == 0, result.problems


# --------------------------------------------------------------------------- numbers
@pytest.mark.parametrize(
    "text, code",
    [
        ("1_0", "not-a-number"),
        ("inf", "not-a-number"),
        ("-Infinity", "not-a-number"),
        ("1,5", "not-a-number"),
        ("1 000", "not-a-number"),
        ("0x10", "not-a-number"),
        ("\uff11\uff12", "not-a-number"),
        ("\u0661\u0662", "not-a-number"),
        ("1e", "bad-unit"),  # 1 with the unit "e", which is no unit pertbook reads
        ("--1", "not-a-number"),
        ("5 dayz", "bad-unit"),  # "5 days" is read (tests/validate/test_units.py)
    ],
)
def test_estimates_must_be_plain_numbers(tmp_path, text, code):
    # Python's float() reads "1_0" as 10, "inf", and digits of other scripts (Python
    # documentation, "float"); a cell must hold a plain decimal number, or one with a unit
    # pertbook reads. ("nan" is read as blank by the reader today; parse_number refuses it,
    # tests/validate/test_values.py.)
    path = two_rows(tmp_path / "n.xlsx", ["B", "b", "A", text, 20, 30])
    _, problems = run(path)
    assert errors(problems) == {(code, "Activities", "D3", "B")}
    (p,) = problems
    assert f'"{text}"' in p.message


@pytest.mark.parametrize(
    "text, value",
    [("2.5", 2.5), (" 3 ", 3.0), ("1e1", 10.0), (".5", 0.5), ("+4", 4.0), ("4.", 4.0)],
)
def test_plain_numbers_in_text_are_read(tmp_path, text, value):
    path = write_csv(tmp_path / "n.csv", [HEADER, ["A", "a", None, text, 15, 16]])
    schedule, problems = run(path)
    assert schedule is not None, problems
    assert schedule.activities[0].optimistic == value


@pytest.mark.parametrize(
    "option, text",
    [
        ("due", "nan"),
        ("due", float("nan")),
        ("due", "1_0"),
        ("due", "inf"),
        ("iterations", "1_000"),
        ("seed", "1_2"),
        ("correlation", "2_5%"),
        ("confidence", "5_0, 80"),
        ("paths", "nan"),
        ("due", "20250303"),
    ],
)
def test_options_take_only_plain_numbers(tmp_path, option, text):
    path = two_rows(tmp_path / "o.xlsx", ["B", "b", "A", 1, 2, 3])
    _, problems = run(path, **{option: text})
    assert errors(problems) == {("bad-option", None, None, None)}


def test_lags_take_only_plain_numbers(tmp_path):
    links = [["Predecessor", "Successor", "Lag"], ["A", "B", "1_0"]]  # C2
    path = write_xlsx(
        tmp_path / "l.xlsx",
        {
            "Activities": [NO_PREDECESSOR_HEADER, ["A", "a", 1, 2, 3], ["B", "b", 1, 2, 3]],
            "Links": links,
        },
    )
    _, problems = run(path)
    assert errors(problems) == {("bad-link", "Links", "C2", "B")}
    path = two_rows(tmp_path / "t.xlsx", ["B", "b", "A[+1_0]", 1, 2, 3])
    _, problems = run(path)
    assert errors(problems) == {("bad-link", "Activities", "C3", "B")}


def test_lag_with_exponent_and_unicode_minus_is_read(tmp_path):
    path = two_rows(tmp_path / "t.xlsx", ["B", "b", "A[SS+1e1], ", 1, 2, 3])
    schedule, problems = run(path)
    assert [(lk.type, lk.lag) for lk in schedule.links] == [("SS", 10.0)]
    path = two_rows(tmp_path / "u.xlsx", ["B", "b", "A[FF\u22122]", 1, 2, 3])
    schedule, problems = run(path)
    assert [(lk.type, lk.lag) for lk in schedule.links] == [("FF", -2.0)]


# --------------------------------------------------------------------------- dates shown
@pytest.mark.parametrize(
    "value, typed, kind",
    [
        (dt.date(2024, 3, 1), "2024-03-01", "date"),
        (dt.datetime(2024, 3, 1, 10, 30), "2024-03-01 10:30", "date"),
        (dt.time(10, 30), "10:30", "time"),
    ],
)
def test_date_in_a_duration_cell_is_shown_as_typed(tmp_path, value, typed, kind):
    path = two_rows(tmp_path / "d.xlsx", ["B", "b", "A", value, 20, 30])
    _, problems = run(path)
    assert errors(problems) == {("not-a-number", "Activities", "D3", "B")}
    (p,) = problems
    assert typed in p.message and f"is a {kind}" in p.message
    assert "datetime" not in p.message and "(2024" not in p.message


# --------------------------------------------------------------------------- IDs
def test_id_1_point_0_is_one_id_in_every_place(tmp_path):
    # The ID column holds the number 1.0 (shown as 1); the predecessor cells hold the
    # text "1.0", the number 1 and the bracket notation "1.0[+2]".
    rows = [
        HEADER,
        [1.0, "a", None, 1, 2, 3],
        ["B", "b", "1.0", 1, 2, 3],
        ["C", "c", 1, 1, 2, 3],
        ["D", "d", "1.0[+2]", 1, 2, 3],
    ]
    schedule, problems = run(write_xlsx(tmp_path / "i.xlsx", {"Activities": rows}))
    assert not errors(problems), problems
    assert [a.id for a in schedule.activities] == ["1", "B", "C", "D"]
    assert sorted((lk.pred, lk.succ, lk.lag) for lk in schedule.links) == [
        ("1", "B", 0.0),
        ("1", "C", 0.0),
        ("1", "D", 2.0),
    ]


def test_id_1_point_0_in_a_csv_and_on_a_links_sheet(tmp_path):
    rows = [
        HEADER,
        ["1.0", "a", None, 1, 2, 3],
        ["2", "b", "1", 1, 2, 3],
        ["3", "c", "2.0, 1.00", 1, 2, 3],
    ]
    schedule, problems = run(write_csv(tmp_path / "i.csv", rows))
    assert not errors(problems), problems
    assert sorted((lk.pred, lk.succ) for lk in schedule.links) == [
        ("1", "2"),
        ("1", "3"),
        ("2", "3"),
    ]
    links = [["Predecessor", "Successor"], ["1.0", 2.0]]
    path = write_xlsx(
        tmp_path / "l.xlsx",
        {
            "Activities": [NO_PREDECESSOR_HEADER, [1, "a", 1, 2, 3], ["2", "b", 1, 2, 3]],
            "Links": links,
        },
    )
    schedule, problems = run(path)
    assert not errors(problems), problems
    assert [(lk.pred, lk.succ) for lk in schedule.links] == [("1", "2")]


@pytest.mark.parametrize(
    "predecessor",
    [
        "2024-01-02 10:30:00",
        "2024-01-02T10:30:00",
        "2024-01-02 10:30",
        dt.datetime(2024, 1, 2, 10, 30),
    ],
)
def test_date_time_id_is_one_id_in_every_place(tmp_path, predecessor):
    rows = [
        HEADER,
        [dt.datetime(2024, 1, 2, 10, 30), "a", None, 1, 2, 3],
        ["B", "b", predecessor, 1, 2, 3],
    ]
    schedule, problems = run(write_xlsx(tmp_path / "i.xlsx", {"Activities": rows}))
    assert not errors(problems), problems
    assert schedule.activities[0].id == "2024-01-02 10:30"
    assert [(lk.pred, lk.succ) for lk in schedule.links] == [("2024-01-02 10:30", "B")]


def test_date_id_on_a_links_sheet(tmp_path):
    links = [["Predecessor", "Successor"], [dt.date(2024, 1, 2), "B"]]
    path = write_xlsx(
        tmp_path / "l.xlsx",
        {
            "Activities": [
                NO_PREDECESSOR_HEADER,
                ["2024-01-02", "a", 1, 2, 3],
                ["B", "b", 1, 2, 3],
            ],
            "Links": links,
        },
    )
    schedule, problems = run(path)
    assert not errors(problems), problems
    assert [(lk.pred, lk.succ) for lk in schedule.links] == [("2024-01-02", "B")]


# --------------------------------------------------------------------------- settings
def test_two_due_rows_warn_naming_both_cells(tmp_path):
    settings = [["Setting", "Value"], ["Due", 10], ["Iterations", 500], ["Due", 20]]  # B2, B4
    path = two_rows(tmp_path / "s.xlsx", ["B", "b", "A", 1, 2, 3], settings)
    schedule, problems = run(path)
    assert warnings_of(problems) == {("repeated-setting", "Settings", "B4", None)}
    (p,) = problems
    assert "Settings!B2" in p.message and "Settings!B4" in p.message
    assert schedule.settings.due == 20.0  # the later row is used, as the warning says


def test_due_date_before_the_start_warns_naming_the_date(tmp_path):
    settings = [["Start date", dt.date(2025, 1, 6)], ["Due", dt.date(2024, 12, 31)]]  # B2
    path = two_rows(tmp_path / "s.xlsx", ["B", "b", "A", 1, 2, 3], settings)
    schedule, problems = run(path)
    assert schedule is not None
    assert warnings_of(problems) == {("due-before-start", "Settings", "B2", None)}
    assert "2024-12-31" in problems[0].message and "0%" in problems[0].message
    # from the command line: no cell, the option named
    _, problems = run(path, due="2023-05-01")
    assert warnings_of(problems) == {("due-before-start", None, None, None)}
    assert "2023-05-01" in problems[0].message and "--due" in problems[0].message
    # on the start date itself there is still a working day to finish in: no warning
    _, problems = run(path, due="2025-01-06")
    assert problems == []


def test_target_date_before_the_start_warns_naming_the_cell(tmp_path):
    header = [*HEADER, "Target"]
    path = two_rows(
        tmp_path / "t.xlsx",
        ["B", "b", "A", 1, 2, 3, dt.date(2024, 1, 1)],
        start(dt.date(2025, 1, 6)),
        header=header,
    )
    schedule, problems = run(path)
    assert schedule is not None
    assert warnings_of(problems) == {("target-before-start", "Activities", "G3", "B")}


@pytest.mark.parametrize(
    "label, value",
    [
        ("Start date", "1899-12-31"),
        ("Holidays", dt.date(1800, 1, 1)),
        ("Start date", "2025-03-03 and more"),
        ("Due", "2025-02-30"),
    ],
)
def test_dates_out_of_range_or_malformed_name_their_cell(tmp_path, label, value):
    path = two_rows(tmp_path / "s.xlsx", ["B", "b", "A", 1, 2, 3], [[label, value]])  # B1
    _, problems = run(path)
    assert errors(problems) == {("bad-setting", "Settings", "B1", None)}


def test_an_extreme_confidence_level_widens_the_room_needed(tmp_path):
    # B's spread: sd = (6000 - 0) / 6 = 1000 working days (Malcolm et al. 1959); the P1
    # row of the finish table lies about 2.33 sd below the mean, about 9 years before the
    # 1950 start: fine. A confidence level of 1e-300 lies 37 sd below the mean
    # (scipy.stats.norm.ppf(1e-300) = -37.05), about 142 years before 1950: refused.
    path = two_rows(tmp_path / "c.xlsx", ["B", "b", "A", 0, 1, 6000], start(dt.date(1950, 1, 2)))
    schedule, problems = run(path)
    assert schedule is not None, problems
    _, problems = run(path, confidence=(1e-300, 0.5))
    assert errors(problems) == {("beyond-calendar", "Settings", "B1", None)}
    assert "before 1900-03-01" in problems[-1].message
