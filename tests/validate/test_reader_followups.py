"""Validation after the reader: one problem per error cell, what the header search looked
at in the missing-column message, the reader's warnings on the Warnings sheet.

The expectations come from the project's issue ("Hostile and messy input": error cells
are reported as error values with their cell; say what was searched and why a sheet was
passed over; a column heading used twice is a warning naming both cells). Cells named
are worked out by hand from the rows written. The workbook is read back with openpyxl.
"""

from __future__ import annotations

import openpyxl
import pytest
from helpers import HEADER, write_xlsx

from converter.api import ConvertOptions, convert, load

ROWS = [HEADER + ["Target", "Group"], ["A", "a", None, 1, 2, 3], ["B", "b", "A", 1, 2, 3]]


def _with_error(path, ref: str, code: str = "#N/A", settings=None):
    """The schedule ROWS (plus a settings sheet) with an error value in ``ref``."""
    sheets = {"Activities": ROWS}
    if settings is not None:
        sheets["Settings"] = settings
    write_xlsx(path, sheets)
    book = openpyxl.load_workbook(path)
    sheet, cell = ref.split("!")
    book[sheet][cell] = code
    book[sheet][cell].data_type = "e"  # an error cell, as a failed formula leaves it
    book.save(path)
    return path


@pytest.mark.parametrize(
    "ref",
    [
        "Activities!D3",
        "Activities!E2",
        "Activities!F3",
        "Activities!C3",
        "Activities!G2",
        "Activities!H2",
        "Settings!B2",
    ],
)
def test_an_error_cell_is_one_problem_the_readers(tmp_path, ref):
    settings = [["Setting", "Value"], ["Iterations", 500]]
    _, problems = load(_with_error(tmp_path / "e.xlsx", ref, "#DIV/0!", settings))
    errors = [(p.code, f"{p.sheet}!{p.cell}") for p in problems if p.severity == "error"]
    assert errors == [("error-value", ref)]  # not also "not a number" and the like


def test_missing_column_says_what_was_searched(tmp_path):
    path = write_xlsx(
        tmp_path / "two.xlsx",
        {
            "Cover": [["Depot"], ["issue 3"]],
            "Plan": [["ID", "Predecessors", "Optimistic", "Pessimistic"], ["A", None, 1, 3]],
        },
    )
    _, problems = load(path)
    (p,) = [p for p in problems if p.code == "missing-column"]
    assert (p.sheet, p.cell) == ("Plan", "A1")
    assert "required column(s) missing: Most likely" in p.message
    assert "Searched the first 30 rows of each sheet for the header row" in p.message
    assert "Cover: passed over, no row names two or more activity columns." in p.message


def test_readers_warnings_are_on_the_warnings_sheet(tmp_path):
    rows = [HEADER + ["Most likely"], ["A", "a", None, 1, 2, 3, 9], ["B", "b", "A", 1, 4, 5, 9]]
    path = write_xlsx(tmp_path / "dup.xlsx", {"Activities": rows})
    result = convert(path, ConvertOptions(simulate=False))
    assert result.exit_code == 0
    (p,) = [p for p in result.problems if p.code == "duplicate-column"]  # once, on stderr
    ws = openpyxl.load_workbook(result.workbook)["Warnings"]
    listed = [(ws.cell(r, 1).value, ws.cell(r, 3).value) for r in range(4, ws.max_row + 1)]
    assert ("Activities!G1", p.message) in listed
    schedule, _ = load(path, ConvertOptions(simulate=False))
    assert [w.code for w in schedule.warnings].count("duplicate-column") == 1
