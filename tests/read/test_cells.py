"""Cells are read as written; error cells are error values with their cell; what the header
search looked at is said; two columns with one meaning are a warning naming both.

Error values: ECMA-376 18.18.11 (``t="e"`` cells hold ``#DIV/0!``, ``#N/A``...);
[MS-XLS] 2.4.24 BoolErr and 2.5.97.2 BErr (0x07 ``#DIV/0!``, 0x2A ``#N/A``); LibreOffice
writes a formula's error in .ods as ``calcext:value-type="error"`` with the error's text
(observed with LibreOffice 7 saving ``=1/0``; from memory of its files otherwise).
"""

from __future__ import annotations

import crafted
import openpyxl
from helpers import HEADER, write_xlsx

from converter.api import load
from converter.read.extent import CellError
from converter.read.sheets import read_input

NA_WORDS = ["NA", "N/A", "None", "NULL", "NaN", "nan", "#N/A N/A", "-"]


def test_words_pandas_reads_as_blank_are_read_as_text(tmp_path):
    rows = [HEADER] + [[word, word, None, 1, 2, 3] for word in NA_WORDS]
    path = write_xlsx(tmp_path / "na.xlsx", {"Activities": rows})
    sheet = read_input(path).raw.sheets[0]
    assert [r[0] for r in sheet.rows[1:]] == NA_WORDS
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert [a.id for a in schedule.activities] == NA_WORDS
    assert [a.name for a in schedule.activities] == NA_WORDS


def test_text_nan_in_an_estimate_is_reported_with_its_cell(tmp_path):
    rows = [HEADER, ["A", "a", None, 1, "NaN", 3]]
    _, problems = load(write_xlsx(tmp_path / "nan.xlsx", {"Activities": rows}))
    assert [(p.code, p.cell) for p in problems if p.severity == "error"] == [("not-a-number", "E2")]


def test_numeric_text_is_not_turned_into_a_number(tmp_path):
    rows = [HEADER, ["007", "a", None, 1, 2, 3], ["010", "b", "007", 1, 2, 3]]
    path = write_xlsx(tmp_path / "ids.xlsx", {"Activities": rows})
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert [a.id for a in schedule.activities] == ["007", "010"]


def test_xlsx_error_cells_are_error_values_naming_their_cells(tmp_path):
    head = crafted.header_row(HEADER)
    row2 = (
        '<row r="2">'
        + crafted.text_cell("A2", "A")
        + crafted.text_cell("B2", "Dig")
        + '<c r="D2" t="e"><f>1/0</f><v>#DIV/0!</v></c>'
        + crafted.number_cell("E2", 2)
        + '<c r="F2" t="e"><v>#N/A</v></c></row>'
    )
    path = crafted.xlsx(tmp_path / "errors.xlsx", {"Activities": head + row2})
    result = read_input(path)
    row = result.raw.sheets[0].rows[1]
    assert row[3] == CellError("#DIV/0!") and row[5] == CellError("#N/A")
    found = [(p.code, p.sheet, p.cell, p.activity) for p in result.problems]
    assert found == [
        ("error-value", "Activities", "D2", "A"),
        ("error-value", "Activities", "F2", "A"),
    ]
    assert "#DIV/0!" in result.problems[0].message
    schedule, problems = load(path)
    assert schedule is None and {p.cell for p in problems if p.severity == "error"} >= {"D2", "F2"}


def test_error_cells_outside_the_columns_read_are_left_alone(tmp_path):
    head = crafted.header_row(HEADER + ["Notes"])
    row2 = (
        '<row r="2">'
        + crafted.text_cell("A2", "A")
        + crafted.number_cell("D2", 1)
        + crafted.number_cell("E2", 2)
        + crafted.number_cell("F2", 3)
        + '<c r="G2" t="e"><v>#REF!</v></c></row>'
    )
    path = crafted.xlsx(tmp_path / "notes.xlsx", {"Activities": head + row2})
    assert read_input(path).problems == []


def test_xls_error_cell_is_an_error_value(tmp_path):
    import xlwt

    book = xlwt.Workbook()
    sheet = book.add_sheet("Activities")
    for c, h in enumerate(HEADER):
        sheet.write(0, c, h)
    for c, v in enumerate(["A", "a", None, 1, None, 3]):
        if v is not None:
            sheet.write(1, c, v)
    sheet.row(1).set_cell_error(4, "#DIV/0!")  # a BoolErr record with fError = 1
    book.save(str(tmp_path / "errors.xls"))
    result = read_input(tmp_path / "errors.xls")
    assert [(p.code, p.cell) for p in result.problems] == [("error-value", "E2")]


def test_ods_error_cell_is_an_error_value(tmp_path):
    error = (
        '<table:table-cell table:formula="of:=1/0" office:value-type="string" '
        'office:string-value="" calcext:value-type="error"><text:p>#DIV/0!</text:p>'
        "</table:table-cell>"
    )
    rows = (
        "<table:table-row>"
        + "".join(crafted.ods_cell(h) for h in HEADER)
        + "</table:table-row><table:table-row>"
        + crafted.ods_cell("A")
        + crafted.ods_cell("a")
        + "<table:table-cell/>"
        + error
        + crafted.ods_cell("2")
        + crafted.ods_cell("3")
        + "</table:table-row>"
    )
    result = read_input(crafted.ods(tmp_path / "errors.ods", {"Activities": rows}))
    assert [(p.code, p.cell) for p in result.problems] == [("error-value", "D2")]
    assert result.raw.sheets[0].rows[1][3] == CellError("#DIV/0!")


def test_error_in_a_setting_is_named(tmp_path):
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": [HEADER, ["A", "a", None, 1, 2, 3]]})
    book = openpyxl.load_workbook(path)
    ws = book.create_sheet("Settings")
    ws["A1"], ws["B1"] = "Start date", "#VALUE!"
    ws["B1"].data_type = "e"  # an error cell, as a failed formula leaves it
    book.save(path)
    problems = read_input(path).problems
    assert [(p.code, p.sheet, p.cell) for p in problems] == [("error-value", "Settings", "B1")]


# --------------------------------------------------------------------------- header search
def test_header_below_the_rows_searched_says_so(tmp_path):
    rows = (
        [["Project X schedule"]]
        + [[f"note {k}"] for k in range(32)]
        + [HEADER, ["A", "a", None, 1, 2, 3]]
    )
    path = write_xlsx(tmp_path / "low.xlsx", {"Plan": rows})
    problems = read_input(path).problems
    (p,) = [p for p in problems if p.code == "header-too-low"]
    assert (p.sheet, p.cell) == ("Plan", "A34")
    assert "only in the first 30 rows" in p.message and "row 34" in p.message


def test_only_sheet_named_settings_is_read_as_the_activity_list(tmp_path):
    rows = [HEADER, ["A", "a", None, 1, 2, 3], ["B", "b", "A", 1, 2, 3]]
    path = write_xlsx(tmp_path / "one.xlsx", {"Settings": rows})
    schedule, problems = load(path)
    assert schedule is not None, [str(p) for p in problems]
    assert schedule.sheet == "Settings"
    assert any("its name is one for a settings sheet" in n for n in schedule.notes)


def test_search_summary_says_why_each_sheet_was_passed_over(tmp_path):
    path = write_xlsx(
        tmp_path / "two.xlsx",
        {
            "Cover": [["Depot"], ["issue 3"]],
            "Settings": [["ID", "Description"], ["Start date", "2025-01-06"]],
        },
    )
    raw = read_input(path).raw
    summary = raw.search_summary()
    assert "Searched the first 30 rows of each sheet" in summary
    assert "Cover: passed over, no row names two or more activity columns." in summary
    assert (
        "Settings: passed over as the settings sheet, by its name (its row 1 names "
        "activity columns)."
    ) in summary


def test_two_most_likely_columns_are_a_warning_naming_both(tmp_path):
    rows = [HEADER + ["Most likely"], ["A", "a", None, 1, 2, 3, 9], ["B", "b", "A", 1, 4, 5, 9]]
    path = write_xlsx(tmp_path / "dup.xlsx", {"Activities": rows})
    schedule, problems = load(path)
    (p,) = [p for p in problems if p.code == "duplicate-column"]
    assert p.severity == "warning" and (p.sheet, p.cell) == ("Activities", "G1")
    assert "E1" in p.message and "G1" in p.message and "the first, E1, is used" in p.message
    assert [a.most_likely for a in schedule.activities] == [2, 4]  # column E, not G


def test_values_read_show_as_the_user_typed_them(tmp_path):
    # for messages: the date a user typed in a duration cell, not Python's repr of it
    import datetime as dt

    from converter.values import as_written

    rows = [HEADER, ["A", "a", None, dt.date(2024, 3, 1), dt.datetime(2024, 1, 2, 10, 30), 3.0]]
    row = read_input(write_xlsx(tmp_path / "d.xlsx", {"Activities": rows})).raw.sheets[0].rows[1]
    assert [as_written(v) for v in row[3:]] == ["2024-03-01", "2024-01-02 10:30", "3"]
