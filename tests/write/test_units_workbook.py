"""The workbook of a schedule planned in working hours, its cells typed with units (issue 11).

What is checked against what:
- LibreOffice Calc recalculates every formula of the workbook (tests/support/recalc.py,
  recalculation on load forced) and each recalculated value must equal the cached one: the
  outside proof that the WORKDAY.INTL date formulas divide hours by Hours per day as the
  analysis does;
- the dates in the JSON against numpy's business-day functions (``numpy.busday_offset``,
  roll forward: working day n + 1 counted from 0) under the rule stated on the Method
  sheet: work at hour t on working day floor(t / hours per day) + 1, a finish at hour t on
  working day ceil(t / hours per day);
- the converted estimates and lags worked by hand in the comments (7.5 hours a day);
- the workbook is read back with openpyxl (an independent reader).
"""

from __future__ import annotations

import datetime as dt
import json
import math
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from helpers import HEADER, write_csv, write_xlsx
from recalc import compare_recalculated

from converter.api import ConvertOptions, convert

D = dt.date
START = D(2026, 8, 1)  # a Saturday
HOLIDAYS = [D(2026, 8, 3), D(2026, 8, 12)]  # a Monday, a Wednesday
HOURS_PER_DAY = 7.5

ROWS = [
    [*HEADER, "Target"],
    ["A", "Isolate the line", None, "2h", "3 hrs", "6h", None],
    ["B", "Drain and vent", "A", 4, 6, "1d", None],  # 1 d = 7.5 h
    ["C", "Open the vessel", "B[SS+2h]", "1d", "1.5d", "2 days", "3d"],  # 7.5, 11.25, 15 h
    ["D", "Inspect", "B, C[FF-1h]", "0.5w", "3d", "1 wk", None],  # 18.75, 22.5, 37.5 h
    ["E", "Repair welds", "D[+0.5d]", "1 day", "12h", "3d", D(2026, 8, 14)],  # 7.5, 12, 22.5
    ["F", "Close and test", "E[FF+4h], D", 3, 5, 9, None],
    ["G", "Hand back", "F", 0, 0, 0, None],
]
# The estimates in working hours, worked by hand: a day is 7.5 h, a week 5 x 7.5 = 37.5 h.
CONVERTED = {
    "A": (2, 3, 6),
    "B": (4, 6, 7.5),
    "C": (7.5, 11.25, 15),
    "D": (18.75, 22.5, 37.5),
    "E": (7.5, 12, 22.5),
    "F": (3, 5, 9),
    "G": (0, 0, 0),
}
# Lags in hours: +2h, -1h, +0.5 d = 3.75 h, +4h.
LAGS = {("B", "C"): 2.0, ("C", "D"): -1.0, ("D", "E"): 3.75, ("E", "F"): 4.0}


def hours_input(path: Path) -> Path:
    settings = [
        ["Start date", START],
        ["Time unit", "working hours"],
        ["Hours per day", HOURS_PER_DAY],
        ["Working days", "Mon-Fri"],
        ["Holidays", HOLIDAYS[0]],
        [None, HOLIDAYS[1]],
        ["Due date", "80"],
    ]
    return write_xlsx(path, {"Activities": ROWS, "Settings": settings})


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    root = tmp_path_factory.mktemp("hours")
    source = hours_input(root / "shutdown.xlsx")
    result = convert(source, ConvertOptions(json=True, iterations=500, seed=5), outdir=root)
    assert result.ok, [str(p) for p in result.problems]
    return result, json.loads(result.json_path.read_text(encoding="utf-8"))


def _rows_by_id(ws, id_col: int = 1) -> dict[str, int]:
    return {
        str(ws.cell(r, id_col).value): r
        for r in range(1, ws.max_row + 1)
        if ws.cell(r, id_col).value in CONVERTED
    }


def test_activities_show_converted_numbers_and_input_keeps_the_text(converted):
    result, _ = converted
    wb = openpyxl.load_workbook(result.workbook)
    ws = wb["Activities"]
    head = next(r for r in range(1, 12) if ws.cell(r, 1).value == "ID")
    cols = {ws.cell(head, c).value: c for c in range(1, ws.max_column + 1)}
    for ident, r in _rows_by_id(ws).items():
        got = tuple(ws.cell(r, cols[k]).value for k in ("Optimistic", "Most likely", "Pessimistic"))
        assert got == pytest.approx(CONVERTED[ident]), ident
    typed = wb["Input as read"]
    as_read = {
        str(typed.cell(r, 1).value): [typed.cell(r, c).value for c in range(3, 7)]
        for r in range(4, typed.max_row + 1)
        if typed.cell(r, 1).value in CONVERTED
    }
    assert as_read["D"] == ["B, C[FF-1h]", "0.5w", "3d", "1 wk"]
    assert as_read["C"] == ["B[SS+2h]", "1d", "1.5d", "2 days"]


def test_method_settings_and_json_name_the_unit(converted):
    result, data = converted
    wb = openpyxl.load_workbook(result.workbook)
    method = {wb["Method"].cell(r, 1).value: wb["Method"].cell(r, 2).value for r in range(1, 40)}
    # 1 d = 7.5 h, 1 w = 5 x 7.5 = 37.5 h
    assert "Factors used, in working hours: 1 h = 1, 1 d = 7.5, 1 w = 37.5 (" in method["Units"]
    assert "INT(t / hours per day) + 1" in method["Calendar"]
    used = wb["Settings used"]
    values = {used.cell(r, 1).value: used.cell(r, 2).value for r in range(1, 30)}
    assert values["Time unit"] == "working hours" and values["Hours per day"] == 7.5
    assert data["time_unit"] == "working hours" and data["calendar"]["unit"] == "working hours"
    assert {(lk["from"], lk["to"]): lk["lag"] for lk in data["links"] if lk["lag"]} == LAGS
    targets = {t["activity"]: t["target"] for t in data["targets"]}
    assert targets["C"] == 22.5  # 3 d x 7.5 h


def test_dates_against_numpy_business_days(converted):
    _, data = converted
    hol = np.array(HOLIDAYS, dtype="datetime64[D]")

    def day(n: int) -> str:  # working day n + 1, counted from 0
        return str(np.busday_offset(START, n, roll="forward", holidays=hol))

    for a in data["activities"]:
        es, ef = round(a["es"] / HOURS_PER_DAY, 9), round(a["ef"] / HOURS_PER_DAY, 9)
        finish_day = math.ceil(ef) - 1 if ef > 0 else math.floor(ef)
        assert a["early_finish_date"] == day(finish_day), a["id"]
        assert a["early_start_date"] == day(min(math.floor(es), finish_day)), a["id"]


@pytest.mark.libreoffice
def test_hours_workbook_recalculates_in_libreoffice(converted, libreoffice, tmp_path):
    # Outside check: LibreOffice recomputes every formula (the WORKDAY.INTL dates over hours
    # among them); each must give the cached value.
    result, data = converted
    copy = libreoffice.recalculate(result.workbook, tmp_path)
    report = compare_recalculated(result.workbook, copy)
    assert report.compared > 100, report
    assert list(report) == [], "\n".join(report[:20])
    ws = openpyxl.load_workbook(copy, data_only=True)["Activities"]
    head = next(r for r in range(1, 12) if ws.cell(r, 1).value == "ID")
    cols = {ws.cell(head, c).value: c for c in range(1, ws.max_column + 1)}
    want = {a["id"]: a["early_finish_date"] for a in data["activities"]}
    for ident, r in _rows_by_id(ws).items():
        got = ws.cell(r, cols["Early finish date"]).value
        assert got.date().isoformat() == want[ident], ident


# --------------------------------------------------------------------------- the command line
def test_cli_converts_a_csv_with_units(tmp_path, capsys):
    from converter import cli

    rows = [HEADER[:6], *[row[:6] for row in ROWS[1:]]]
    path = write_csv(tmp_path / "units.csv", rows)
    code = cli.main(
        ["convert", str(path), "--outdir", str(tmp_path / "out"), "--no-simulation", "--json"]
        + ["--time-unit", "working hours", "--hours-per-day", "7.5"]
    )
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "working hours" in out  # the headline reads in hours
    data = json.loads((tmp_path / "out" / "units.analysis.json").read_text(encoding="utf-8"))
    te = {a["id"]: a["te"] for a in data["activities"]}
    # D: (18.75 + 4 x 22.5 + 37.5) / 6 = 146.25 / 6 = 24.375 h (PERT mean, Malcolm et al. 1959)
    assert te["D"] == pytest.approx(24.375)


def test_cli_refuses_months_naming_the_cell(tmp_path, capsys):
    from converter import cli

    rows = [HEADER, ["A", "a", None, "1d", "2d", "3d"], ["B", "b", "A", "1w", "2 months", "3w"]]
    path = write_csv(tmp_path / "months.csv", rows)
    before = path.read_bytes()
    code = cli.main(["convert", str(path), "--outdir", str(tmp_path / "out")])
    _, err = capsys.readouterr()
    assert code == 2
    assert "months.csv!E3" in err and '"2 months" is in months' in err and "activity B" in err
    assert path.read_bytes() == before and not (tmp_path / "out").exists()


def test_reproduce_command_keeps_the_time_unit_and_hours_per_day(tmp_path, capsys):
    # The Simulation sheet's command, run again, must give the same simulation: the time
    # unit and hours per day given on the command line change every converted duration.
    import shlex

    from converter import cli

    rows = [HEADER[:6], *[row[:6] for row in ROWS[1:]]]
    path = write_csv(tmp_path / "units.csv", rows)
    given = ["--time-unit", "working hours", "--hours-per-day", "7.5", "--iterations", "300"]
    assert (
        cli.main(["convert", str(path), "--outdir", str(tmp_path / "one"), "--json", *given]) == 0
    )
    ws = openpyxl.load_workbook(tmp_path / "one" / "units.analysis.xlsx")["Simulation"]
    command = next(
        ws.cell(r, 2).value for r in range(1, 40) if ws.cell(r, 1).value == "To reproduce"
    )
    assert '--time-unit "working hours"' in command and "--hours-per-day 7.5" in command
    words = shlex.split(command)[3:]
    out = tmp_path / "two"
    assert cli.main(["convert", str(path), *words, "--json", "--outdir", str(out)]) == 0
    capsys.readouterr()
    first = json.loads((tmp_path / "one" / "units.analysis.json").read_text(encoding="utf-8"))
    again = json.loads((out / "units.analysis.json").read_text(encoding="utf-8"))
    assert again["simulation"] == first["simulation"] and again["time_unit"] == "working hours"
