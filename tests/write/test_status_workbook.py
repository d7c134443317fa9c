"""Start constraints and status end to end: the command line, the JSON keys the issue
spells out, and the workbook's formulas recalculated by LibreOffice.

Checked against: figures worked by hand in the comments (a printed calendar of March 2026,
Monday 2 March the start), the JSON keys as the project's issue writes them, and
LibreOffice recalculating every formula (tests/support/recalc.py).
"""

from __future__ import annotations

import datetime as dt
import json

import openpyxl
import pytest
from helpers import run_cli, write_csv
from recalc import compare_recalculated

ROWS = [
    ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
    + ["Not before", "Actual start", "Actual finish", "Remaining"],
    ["A", "Survey", None, 2, 3, 5, None, "2026-03-02", "2026-03-04", None],
    ["B", "Design", "A", 4, 5, 8, None, "2026-03-05", None, "2d"],
    ["C", "Order", "A", 1, 2, 4, "2026-03-16", None, None, None],
    ["D", "Build", "B;C", 5, 8, 12, None, None, None, None],
]


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    root = tmp_path_factory.mktemp("status")
    src = write_csv(root / "flight.csv", ROWS)
    args = ["convert", src, "--start-date", "2026-03-02", "--status-date", "2026-03-09"]
    done = run_cli(*args, "--json", "--outdir", root / "out", "--iterations", "500")
    assert done.returncode == 0, done.stderr
    # the headline's status row: 6 of 18.47 expected units done (see the JSON test) = 32%
    assert "Work done by 2026-03-09" in done.stdout and "32%" in done.stdout
    return root / "out" / "flight.analysis.xlsx", root / "out" / "flight.analysis.json"


def test_cli_status_json_by_hand(converted):
    data = json.loads(converted[1].read_text(encoding="utf-8"))
    # status 9 March = end of working day 6 (2-6 and 9 March): offset 6
    assert set(data["status"]) == {
        "status_date",
        "status_offset",
        "done_share",
        "finished",
        "in_progress",
        "not_started",
    }
    assert data["status"]["status_date"] == "2026-03-09"
    assert data["status"]["status_offset"] == 6.0
    assert (data["status"]["finished"], data["status"]["in_progress"]) == (1, 1)
    acts = {a["id"]: a for a in data["activities"]}
    assert [acts[k]["state"] for k in "ABCD"] == [
        "finished",
        "in progress",
        "not started",
        "not started",
    ]
    # A: 2-4 March, offsets 0 -> 3. B: started 5 March (offset 3), 2 days left (O and P
    # scaled 4/5 and 8/5: 1.6, 2, 3.2, TE 12.8/6): EF = 6 + 12.8/6. C: not before 16 March
    # = offset 10 (2-13 March), TE 13/6. D after both: 10 + 13/6 + 49/6 = 20 + 1/3.
    assert acts["A"]["ef"] == 3.0 and acts["B"]["es"] == 3.0
    assert acts["B"]["ef"] == pytest.approx(6 + 12.8 / 6)
    assert acts["B"]["remaining"] == pytest.approx(12.8 / 6)
    assert acts["C"]["es"] == 10.0 and acts["C"]["not_before"] == "2026-03-16"
    assert acts["D"]["ef"] == pytest.approx(20 + 1 / 3)
    assert acts["A"]["actual_finish"] == "2026-03-04" and acts["D"]["actual_start"] is None
    keys = {c["name"] for c in data["checks"]}
    assert "missed activities (due by the status date, not finished)" in keys


@pytest.mark.libreoffice
def test_status_formulas_recalculate_in_libreoffice(converted, tmp_path, libreoffice):
    xlsx = converted[0]
    ws = openpyxl.load_workbook(xlsx)["Activities"]
    heads = {c.value: c.column_letter for c in ws[4] if c.value}
    es = heads["Early start"]
    # C's early start: MAX over its link, its Not before cell and the status offset
    c_es = ws[f"{es}7"].value
    assert heads["Not before"] + "7" in c_es and "StatusOffset" in c_es, c_es
    # B (in progress): its actual start inside the MAX; TE = time worked + remaining PERT
    assert heads["Actual start"] + "6" in ws[f"{es}6"].value
    assert "StatusOffset" in ws[heads["Expected time TE"] + "6"].value
    copy = libreoffice.recalculate(xlsx, tmp_path / "re")
    report = compare_recalculated(xlsx, copy)
    assert report.compared > 100
    assert not report, report


@pytest.mark.libreoffice
def test_constraint_and_actual_dates_by_hand_and_in_libreoffice(converted, tmp_path, libreoffice):
    # With a start date each Not before / actual offset has a date column beside it. By
    # hand, working days Mon-Fri from Monday 2 March 2026 (a printed calendar): A's actual
    # finish 4 March is offset 3 (2, 3, 4 March), the end of working day ceil(3) = 3 =
    # Wednesday 4 March; B's actual start 5 March is offset 3 (the end of 4 March), work at
    # 3 is on working day floor(3) + 1 = 4 = Thursday 5 March; C's Not before 16 March is
    # offset 10 (2-6 and 9-13 March), working day 11 = Monday 16 March.
    xlsx = converted[0]
    ws = openpyxl.load_workbook(xlsx)["Activities"]
    heads = {c.value: c.column_letter for c in ws[4] if c.value}
    nb, start, finish = (
        heads[k + " date"] for k in ("Not before", "Actual start", "Actual finish")
    )
    assert ws[f"{finish}5"].value.startswith("=WORKDAY.INTL(") and heads["Actual finish"] in (
        ws[f"{finish}5"].value
    )
    copy = libreoffice.recalculate(xlsx, tmp_path / "re")
    cached = openpyxl.load_workbook(xlsx, data_only=True)["Activities"]
    again = openpyxl.load_workbook(copy, data_only=True)["Activities"]
    expected = {
        f"{finish}5": dt.date(2026, 3, 4),  # A's actual finish
        f"{start}5": dt.date(2026, 3, 2),  # A's actual start: offset 0, working day 1
        f"{start}6": dt.date(2026, 3, 5),  # B's actual start
        f"{nb}7": dt.date(2026, 3, 16),  # C's Not before
    }
    for cell, when in expected.items():
        assert cached[cell].value.date() == when, cell
        assert again[cell].value.date() == when, cell
    # blank offsets, blank dates: B not finished, D neither constrained nor started
    for cell in (f"{finish}6", f"{nb}8", f"{start}8", f"{finish}8"):
        assert ws[cell].value is None and again[cell].value is None, cell
    assert not compare_recalculated(xlsx, copy)


@pytest.mark.libreoffice
def test_not_before_alone_recalculates_in_libreoffice(tmp_path, libreoffice):
    # No status date: the Not before column stands alone inside the early-start MAX.
    rows = [r[:7] for r in ROWS]
    rows[3][6] = 12
    src = write_csv(tmp_path / "nb.csv", rows)
    done = run_cli("convert", src, "--outdir", tmp_path, "--iterations", "300", "--json")
    assert done.returncode == 0, done.stderr
    data = json.loads((tmp_path / "nb.analysis.json").read_text(encoding="utf-8"))
    assert data["status"] is None
    # hand: TE_A = 19/6; C not before 12 -> ES 12; D = 12 + 13/6 + 49/6
    assert data["activities"][2]["es"] == 12.0
    assert data["activities"][3]["ef"] == pytest.approx(12 + 62 / 6)
    xlsx = tmp_path / "nb.analysis.xlsx"
    heads = [c.value for c in openpyxl.load_workbook(xlsx)["Activities"][4]]
    assert "Not before" in heads and "Not before date" not in heads  # no start date
    copy = libreoffice.recalculate(xlsx, tmp_path / "re")
    assert not compare_recalculated(xlsx, copy)


@pytest.mark.libreoffice
@pytest.mark.parametrize("unit", ["working days", "weeks"])
def test_status_with_holidays_recalculates_in_libreoffice(tmp_path, libreoffice, unit):
    # Holiday Monday 9 March and the status date on it: the status offset is the end of
    # Friday 6 March, 5 working days (1 week). The date formulas take the Holidays range.
    from helpers import write_xlsx

    settings = [
        ["Start date", dt.date(2026, 3, 2)],
        ["Time unit", unit],
        ["Status date", dt.date(2026, 3, 9)],
        ["Holidays", dt.date(2026, 3, 9)],
    ]
    rows = [list(r) for r in ROWS]
    for r in rows[1:]:
        for k in (6, 7, 8):
            if isinstance(r[k], str) and r[k].startswith("2026"):
                r[k] = dt.date.fromisoformat(r[k])
    src = write_xlsx(tmp_path / "hol.xlsx", {"Activities": rows, "Settings": settings})
    done = run_cli("convert", src, "--outdir", tmp_path / "out", "--iterations", "300", "--json")
    assert done.returncode == 0, done.stderr
    data = json.loads((tmp_path / "out" / "hol.analysis.json").read_text(encoding="utf-8"))
    assert data["status"]["status_offset"] == (5.0 if unit == "working days" else 1.0)
    xlsx = tmp_path / "out" / "hol.analysis.xlsx"
    copy = libreoffice.recalculate(xlsx, tmp_path / "re")
    report = compare_recalculated(xlsx, copy)
    assert not report, report


def test_not_before_stays_inside_the_maxifs_fallback(tmp_path):
    # 900 incoming links make the early start too long to name each cell; the fallback is
    # MAX(0, <Not before>, MAXIFS over the Links sheet) (8,192-character formula limit of
    # the spreadsheet specifications, from memory). Hand: P_i finish at most 9, +1 lag; the
    # fan-in activity is held by its Not before 50.
    from converter.api import ConvertOptions, convert

    n = 900
    rows = [["ID", "Predecessors", "Optimistic", "Most likely", "Pessimistic", "Not before"]]
    rows += [[f"P{i}", None, 1, 2, 9, None] for i in range(n)]
    rows.append(["FAN", ", ".join(f"P{i}[+1]" for i in range(n)), 1, 1, 1, 50])
    src = write_csv(tmp_path / "fan.csv", rows)
    result = convert(src, ConvertOptions(iterations=200, simulate=False), outdir=tmp_path)
    assert result.ok
    ws = openpyxl.load_workbook(result.workbook)["Activities"]
    heads = {c.value: c.column_letter for c in ws[4] if c.value}
    es = ws[f"{heads['Early start']}{5 + n}"].value
    assert es.startswith(f"=MAX(0,{heads['Not before']}{5 + n},_xlfn.MAXIFS(Links!"), es
    data = openpyxl.load_workbook(result.workbook, data_only=True)["Activities"]
    assert data[f"{heads['Early start']}{5 + n}"].value == 50
