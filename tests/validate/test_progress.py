"""Validation of the Not before and progress cells: each problem names its cell.

The cells are worked out by hand from the rows written: the header is sheet row 1, data
row k is sheet row k + 1; columns A=ID, B=Predecessors, C=O, D=M, E=P, then the progress
columns in the order of ``HEAD``. The problems are the ones the project's issue lists.
"""

from __future__ import annotations

import datetime as dt

from helpers import write_xlsx

from converter.api import ConvertOptions, load
from converter.model import ERROR, WARNING

HEAD = [
    "ID",
    "Predecessors",
    "Optimistic",
    "Most likely",
    "Pessimistic",
    "Not before",  # F
    "Actual start",  # G
    "Actual finish",  # H
    "Remaining",  # I
]
SETTINGS = [["Start date", dt.date(2026, 3, 2)], ["Status date", dt.date(2026, 3, 16)]]


def run(tmp_path, rows, settings=SETTINGS, **options):
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": [HEAD, *rows], "Settings": settings})
    return load(path, ConvertOptions(simulate=False, **options))


def found(problems, severity):
    return {(p.code, p.cell, p.activity) for p in problems if p.severity == severity}


def test_each_progress_problem_names_its_cell(tmp_path):
    d = dt.date
    rows = [
        ["A", None, 1, 2, 3, None, None, d(2026, 3, 4), None],  # finish, no start: H2
        ["B", "A", 1, 2, 3, None, d(2026, 3, 20), None, 1],  # start after status: G3 (warn)
        ["C", "A", 1, 2, 3, None, d(2026, 3, 9), d(2026, 3, 5), None],  # finish < start: H4
        ["D", "A", 1, 2, 3, None, d(2026, 3, 3), d(2026, 3, 5), 2],  # remaining on done: I5
        ["E", "A", 1, 2, 3, None, d(2026, 3, 3), None, None],  # no remaining: I6 (warn)
        ["F", "A", 1, 2, 3, "soon", None, None, None],  # Not before not a date/number: F7
        ["G", "A", 1, 2, 3, None, d(2026, 2, 27), None, 1],  # before the project start: G8
    ]
    schedule, problems = run(tmp_path, rows)
    assert schedule is None
    errors = found(problems, ERROR)
    assert ("finish-without-start", "H2", "A") in errors
    assert ("finish-before-start", "H4", "C") in errors
    assert ("remaining-on-finished", "I5", "D") in errors
    assert ("not-a-number", "F7", "F") in errors
    assert ("actual-before-project-start", "G8", "G") in errors
    warnings = found(problems, WARNING)
    assert ("actual-after-status", "G3", "B") in warnings
    assert ("no-remaining", "I6", "E") in warnings


def test_progress_without_a_status_date_is_an_error(tmp_path):
    rows = [["A", None, 1, 2, 3, None, dt.date(2026, 3, 3), None, 1]]
    schedule, problems = run(tmp_path, rows, settings=[["Start date", dt.date(2026, 3, 2)]])
    assert schedule is None
    assert ("progress-without-status-date", "G2", "A") in found(problems, ERROR)


def test_a_date_without_a_start_date_is_an_error(tmp_path):
    rows = [["A", None, 1, 2, 3, dt.date(2026, 3, 9), None, None, None]]
    schedule, problems = run(tmp_path, rows, settings=[["Status date", 4]])
    assert schedule is None
    assert ("date-without-start", "F2", "A") in found(problems, ERROR)


def test_units_and_the_command_line_status_date_are_read(tmp_path):
    # Remaining "2d" is 2 working days; Not before "1w" is 5; --status-date overrides.
    rows = [
        ["A", None, 1, 2, 3, None, 0, None, "2d"],
        ["B", "A", 1, 2, 3, "1w", None, None, None],
    ]
    schedule, problems = run(tmp_path, rows, settings=[["Status date", 1]], status_date="3")
    assert schedule is not None, problems
    assert schedule.settings.status_date == 3.0
    assert schedule.activities[0].remaining == (2.0, 2.0, 2.0)
    assert schedule.activities[1].not_before == 5.0


def test_a_start_floor_past_the_calendar_is_refused(tmp_path):
    # 9,000,000 working days after 2026 is far past 9999-12-31 (about 2.9 million working
    # days away): the analysis could not date it.
    rows = [["A", None, 1, 2, 3, 9_000_000, None, None, None]]
    schedule, problems = run(tmp_path, rows, settings=[["Start date", dt.date(2026, 3, 2)]])
    assert schedule is None
    assert "beyond-calendar" in {p.code for p in problems if p.severity == ERROR}


def test_out_of_sequence_progress_is_a_warning_at_the_successors_actual_start(tmp_path):
    # B (row 3) started on 9 March while its FS predecessor A (row 2) is still going:
    # a warning at B's Actual start, G3; the schedule is still analysed.
    d = dt.date
    rows = [
        ["A", None, 1, 2, 3, None, d(2026, 3, 2), None, 4],
        ["B", "A", 1, 2, 3, None, d(2026, 3, 9), None, 1],
    ]
    schedule, problems = run(tmp_path, rows)
    assert schedule is not None
    assert ("out-of-sequence", "G3", "B") in found(problems, WARNING)
