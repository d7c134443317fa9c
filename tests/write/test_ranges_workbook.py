"""The workbook of a schedule whose estimates come from ranges on single durations.

What is checked against what:
- LibreOffice recalculates every formula of the workbook (tests/support/recalc.py) and
  each must give the cached value, the Activities sheet's O / M / P formulas that point at
  the Ranges sheet among them; the recalculated O / M / P are also compared with the
  percentages applied by hand (comments beside them);
- the formulas' references are read back with openpyxl (an independent reader) and must
  name the activity's own Duration cell and the Ranges row of its class;
- the input is invented (header on row 1: A=ID, B=Description, C=Predecessors,
  D=Optimistic, E=Most likely, F=Pessimistic, G=Duration, H=Range).
"""

from __future__ import annotations

import json
import re

import openpyxl
import pytest
from helpers import write_xlsx
from recalc import compare_recalculated

from converter.api import ConvertOptions, convert

HEAD = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
ROWS = [
    [*HEAD, "Duration", "Range"],
    ["A", "Clear site", None, None, None, None, 10, "Tight"],  # 9 / 10 / 11
    ["B", "Foundations", "A", None, None, None, "4w", "Wide"],  # 20 days: 15 / 22 / 30
    ["C", "Services", "A", None, None, None, 8, "80/100/150"],  # 6.4 / 8 / 12
    ["D", "Frame", "B, C", 3, 5, 9, 6, "Wide"],  # explicit O/M/P win: 3 / 5 / 9
    ["E", "Roof", "D", None, None, None, 5, None],  # the Default range Tight: 4.5 / 5 / 5.5
    ["F", "Fit-out", "E", None, None, None, 12, "80/100/150"],  # 9.6 / 12 / 18
]
CLASSES = [
    ["Range", "Low %", "Likely %", "High %"],
    ["Tight", 90, 100, 110],
    ["Wide", 75, 110, 150],
    ["Spare", 50, 100, 300],
]
SETTINGS = [["Setting", "Value"], ["Default range", "Tight"], ["Start date", "2027-03-01"]]
#: By hand: the duration times Low %, Likely %, High % over 100.
EXPECTED = {
    "A": (9.0, 10.0, 11.0),
    "B": (15.0, 22.0, 30.0),
    "C": (6.4, 8.0, 12.0),
    "D": (3.0, 5.0, 9.0),
    "E": (4.5, 5.0, 5.5),
    "F": (9.6, 12.0, 18.0),
}
RANGE_FORMULA = re.compile(r"^=([A-Z]+)(\d+)\*Ranges!\$([B-D])\$(\d+)/100$")


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    root = tmp_path_factory.mktemp("ranges")
    src = write_xlsx(
        root / "ranged.xlsx", {"Activities": ROWS, "Ranges": CLASSES, "Settings": SETTINGS}
    )
    result = convert(src, ConvertOptions(json=True, iterations=300), outdir=root / "out")
    assert result.ok, "\n".join(map(str, result.problems))
    return result


def _table(ws):
    """(header row, header -> column number, ID -> row) of the Activities table."""
    head = next(r for r in range(1, 12) if ws.cell(r, 1).value == "ID")
    cols = {c.value: c.column for c in ws[head] if c.value}
    rows = {ws.cell(r, 1).value: r for r in range(head + 1, ws.max_row + 1) if ws.cell(r, 1).value}
    return head, cols, rows


def test_range_estimates_are_formulas_on_the_ranges_sheet(made):
    wb = openpyxl.load_workbook(made.workbook)
    cached = openpyxl.load_workbook(made.workbook, data_only=True)
    ws, ranges = wb["Activities"], wb["Ranges"]
    _, cols, rows = _table(ws)
    assert list(cols)[-2:] == ["Duration", "Range used"]  # at the right end of the table
    range_row = {ranges.cell(r, 1).value: r for r in range(5, ranges.max_row + 1)}
    # every range used, in the order first used; inline ones as their own row; not Spare
    assert list(range_row) == ["Tight", "Wide", "80/100/150"]
    assert [ranges.cell(range_row["Wide"], c).value for c in (2, 3, 4)] == [75, 110, 150]
    assert ranges.cell(range_row["Tight"], 6).value == "Ranges!A2"
    assert ranges.cell(range_row["80/100/150"], 6).value == "typed in Activities!H4"
    for ident, r in rows.items():
        o, m, p = (ws.cell(r, cols[h]) for h in ("Optimistic", "Most likely", "Pessimistic"))
        values = tuple(cached["Activities"].cell(r, c.column).value for c in (o, m, p))
        assert values == pytest.approx(EXPECTED[ident]), ident
        if ident == "D":  # explicit O/M/P: numbers as read
            assert (o.value, m.value, p.value) == (3, 5, 9)
            assert ws.cell(r, cols["Range used"]).value is None
            continue
        name = ws.cell(r, cols["Range used"]).value
        for cell, percent in ((o, "B"), (m, "C"), (p, "D")):
            got = RANGE_FORMULA.match(cell.value)
            assert got, (ident, cell.value)
            col, row, pcol, prow = got.groups()
            assert (col, int(row)) == (ws.cell(r, cols["Duration"]).column_letter, r)
            assert (pcol, int(prow)) == (percent, range_row[name])
    assert cached["Activities"].cell(rows["B"], cols["Duration"]).value == 20  # 4w, 5-day week


def test_method_settings_and_json_say_where_the_estimates_came_from(made):
    wb = openpyxl.load_workbook(made.workbook)
    method = {r[0].value: r[1].value for r in wb["Method"].iter_rows() if r[0].value}
    assert "Duration x Low % / 100" in method["Ranges"]
    settings = {r[0].value: r[1].value for r in wb["Settings used"].iter_rows() if r[0].value}
    assert settings["Default range"] == "Tight"
    data = json.loads(made.json_path.read_text())
    assert {a["id"]: a["range"] for a in data["activities"]} == {
        "A": "Tight", "B": "Wide", "C": "80/100/150", "D": None, "E": "Tight",
        "F": "80/100/150",
    }  # fmt: skip
    assert any("used by no activity: Spare" in n for n in data["notes"])


@pytest.mark.libreoffice
def test_libreoffice_recalculates_the_range_formulas(made, tmp_path, libreoffice):
    # Outside check: LibreOffice recomputes every formula, the O/M/P from ranges included.
    copy = libreoffice.recalculate(made.workbook, tmp_path / "recalc")
    report = compare_recalculated(made.workbook, copy)
    assert report.compared > 100, report
    assert list(report) == [], "\n".join(report[:20])
    ws = openpyxl.load_workbook(copy, data_only=True)["Activities"]
    _, cols, rows = _table(ws)
    for ident, r in rows.items():
        got = tuple(ws.cell(r, cols[h]).value for h in ("Optimistic", "Most likely", "Pessimistic"))
        assert got == pytest.approx(EXPECTED[ident], rel=1e-12), ident  # by hand, above


def test_ranges_sheet_and_new_columns_read_cleanly_on_screen(made):
    """The on-screen checks every sample's sheets pass (tests/support/sheet_checks.py):
    wrapped text fits, nothing cut, numbers and text apart."""
    import sheet_checks

    wb = openpyxl.load_workbook(made.workbook, data_only=True)
    found = []
    for name in ("Ranges", "Activities", "Method", "Settings used"):
        sheet = sheet_checks.Sheet(wb[name])
        found += (
            sheet_checks.wrapped_text_fits(sheet)
            + sheet_checks.text_not_cut(sheet)
            + sheet_checks.aligned_apart(sheet)
            + sheet_checks.labels_beside_tall_text(sheet)
        )
    assert not found, "\n".join(found)


def test_the_reproduce_command_carries_a_default_range_given_on_the_command_line(tmp_path):
    """--default-range changes the estimates, so the command that reruns the simulation
    must carry it (the other settings given on the command line are carried likewise)."""
    rows = [[*HEAD, "Duration", "Range"], ["A", "a", None, None, None, None, 10, None]]
    src = write_xlsx(tmp_path / "d.xlsx", {"Activities": rows, "Ranges": CLASSES})
    options = ConvertOptions(iterations=200, default_range="Wide")
    result = convert(src, options, outdir=tmp_path / "out")
    assert result.ok, "\n".join(map(str, result.problems))
    ws = openpyxl.load_workbook(result.workbook)["Simulation"]
    command = next(
        r[1].value for r in ws.iter_rows() if r[0].value == "To reproduce" and r[1].value
    )
    assert command.endswith('--default-range "Wide"'), command
