"""``convert --baseline`` with a status date, end to end: the progress checks judged by the
earlier run, on the command line, in the JSON and on the Health check sheet.

What is checked against what:
- the baseline execution index as the DCMA 14-point assessment defines it (US Defense
  Contract Management Agency, DCMA-EA PAM 200.1, 2012, check 14, from memory: activities
  completed / activities whose baseline finish is on or before the status date), worked by
  hand below with dates read off a printed calendar of March 2026 (Monday 2 March);
- LibreOffice recalculating the Health check's formulas reproduces their cached values
  (tests/support/recalc.py), and the recalculated BEI is the hand figure;
- the baseline given as the first run's .analysis.xlsx (read back from its cells) gives the
  same checks as its .analysis.json.
"""

from __future__ import annotations

import json

import openpyxl
import pytest
from helpers import run_cli, write_csv
from recalc import compare_recalculated

from converter.compare.readback import read_run

HEAD = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
#: The plan (invented), fixed durations, start Monday 2026-03-02. Early finishes by hand:
#: A 2 (Tue 3 Mar), B 2+3 = 5 (Fri 6 Mar), C 2+1 = 3 (Wed 4 Mar), F 2+6 = 8 (Wed 11 Mar),
#: D max(5, 3)+4 = 9 (Thu 12 Mar), E max(9, 8)+2 = 11 (Mon 16 Mar).
PLAN = [
    ["A", "Survey", "", 2, 2, 2],
    ["B", "Design", "A", 3, 3, 3],
    ["C", "Permit", "A", 1, 1, 1],
    ["F", "Order", "A", 6, 6, 6],
    ["D", "Build", "B;C", 4, 4, 4],
    ["E", "Handover", "D;F", 2, 2, 2],
]
#: The update as of Monday 9 March (status offset 6: 2-6 and 9 March): A finished, F
#: finished early (4-6 March), B re-estimated at 5 and in progress, C in progress.
UPDATE = [
    ["A", "Survey", "", 2, 2, 2, "2026-03-02", "2026-03-03", ""],
    ["B", "Design", "A", 5, 5, 5, "2026-03-04", "", 2],
    ["C", "Permit", "A", 1, 1, 1, "2026-03-05", "", 1],
    ["F", "Order", "A", 6, 6, 6, "2026-03-04", "2026-03-06", ""],
    ["D", "Build", "B;C", 4, 4, 4, "", "", ""],
    ["E", "Handover", "D;F", 2, 2, 2, "", "", ""],
]
STATUS = ["Actual start", "Actual finish", "Remaining"]
BEI = "baseline execution index (finished / due by the baseline)"
MISSED = "missed activities (due by the status date, not finished)"
COMMON = ["--start-date", "2026-03-02", "--json", "--iterations", "300"]


def _checks(json_path) -> dict[str, dict]:
    data = json.loads(json_path.read_text(encoding="utf-8"))
    return {c["name"]: c for c in data["checks"]}


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    root = tmp_path_factory.mktemp("bei")
    plan = write_csv(root / "plan.csv", [HEAD, *PLAN])
    update = write_csv(root / "update.csv", [HEAD + STATUS, *UPDATE])
    done = run_cli("convert", plan, *COMMON, "--outdir", root / "m1")
    assert done.returncode == 0, done.stderr
    baseline = root / "m1" / "plan.analysis.json"
    args = ["convert", update, *COMMON, "--status-date", "2026-03-09"]
    done = run_cli(*args, "--baseline", baseline, "--outdir", root / "m2")
    assert done.returncode == 0, done.stderr
    alone = run_cli(*args, "--outdir", root / "alone")
    assert alone.returncode == 0, alone.stderr
    back = run_cli(*args, "--baseline", root / "m1" / "plan.analysis.xlsx", "--outdir", root / "b")
    assert back.returncode == 0, back.stderr
    return root


def test_bei_by_hand_from_the_command_line(runs):
    checks = _checks(runs / "m2" / "update.analysis.json")
    # Due by the baseline's early finish dates on or before Mon 9 March: A (3 Mar),
    # B (6 Mar), C (4 Mar) = 3; F (11 Mar), D, E are not. Finished: A and F = 2 (F early).
    # BEI = 2 / 3 = 0.667 < 0.95: FAIL. JSON: count = finished, percent = BEI x 100.
    bei = checks[BEI]
    assert bei["count"] == 2 and bei["percent"] == pytest.approx(100 * 2 / 3)
    assert bei["passed"] is False and bei["activities"] == ["B", "C"]
    assert bei["threshold"].startswith("BEI >= 0.95") and bei["group"] == "progress"
    # Missed by the baseline: B and C, due and not finished: 2 of 3 = 67% > 5%.
    assert checks[MISSED]["activities"] == ["B", "C"] and checks[MISSED]["count"] == 2


def test_without_a_baseline_missed_uses_the_plan(runs):
    # The update's own early finishes as if nothing had started: B = 2 + 5 = 7 (Wed 11
    # March) is no longer due; due: A (2), C (3); missed: C only. No BEI without a baseline.
    checks = _checks(runs / "alone" / "update.analysis.json")
    assert BEI not in checks
    assert checks[MISSED]["activities"] == ["C"]
    assert checks[MISSED]["percent"] == pytest.approx(100 * 1 / 2)


def test_the_workbook_baseline_gives_the_same_checks(runs):
    # read back from the first run's .analysis.xlsx (its Early finish date cells): the
    # early finish dates worked by hand above (PLAN), the same as from its JSON
    hand = {"A": 3, "B": 6, "C": 4, "F": 11, "D": 12, "E": 16}
    for name in ("plan.analysis.xlsx", "plan.analysis.json"):
        acts = read_run(runs / "m1" / name).activities
        assert {k: (v.early_finish.day, v.early_finish.month) for k, v in acts.items()} == {
            k: (d, 3) for k, d in hand.items()
        }
    assert _checks(runs / "b" / "update.analysis.json") == _checks(
        runs / "m2" / "update.analysis.json"
    )


SUMMARY_BEI = "Baseline execution index"


def _row(ws, name: str):
    return next(row for row in ws.iter_rows() if row[0].value == name)


def test_health_sheet_and_method(runs):
    book = openpyxl.load_workbook(runs / "m2" / "update.analysis.xlsx")
    row = _row(book["Health check"], BEI)
    count, out_of, percent, result = (c.value for c in row[2:6])
    assert count.startswith("=COUNTIF(Activities!") and '"finished"' in count
    assert out_of == 3 and percent.startswith("=") and ">=95*" in result
    assert "BEI = 2 / 3 = 0.667" in row[6].value
    assert "DCMA 2012, check 14" in row[8].value
    labels = [r[0].value for r in book["Method"].iter_rows()]
    assert "Baseline checks" in labels


@pytest.mark.libreoffice
def test_libreoffice_recalculates_the_bei(runs, tmp_path, libreoffice):
    xlsx = runs / "m2" / "update.analysis.xlsx"
    copy = libreoffice.recalculate(xlsx, tmp_path / "recalc")
    report = compare_recalculated(xlsx, copy)  # LibreOffice vs cached values
    assert not report, report
    row = _row(openpyxl.load_workbook(copy, data_only=True)["Health check"], BEI)
    # recalculated by LibreOffice: 2 finished on the State column, 2 / 3, FAIL
    assert [c.value for c in row[2:6]] == [2, 3, pytest.approx(2 / 3), "FAIL"]
    # the Summary's status block shows the same index, recounted from the State column
    summary = _row(openpyxl.load_workbook(copy, data_only=True)["Summary"], SUMMARY_BEI)
    assert summary[1].value == pytest.approx(2 / 3)
