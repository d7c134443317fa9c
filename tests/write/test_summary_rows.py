"""WBS summary rows in the workbook and the JSON, end to end from a CSV with WBS rows.

What is checked against what:
- LibreOffice recalculates the workbook (tests/support/recalc.py): every formula, the
  summary rows' MIN / MAX / span and every column-wide formula (project finish MAX,
  activity COUNTA, health-check COUNTIFs and the COUNTA of links on summaries, the Paths
  sheet's SUMPRODUCTs, dates) must give the cached value with summary rows interleaved;
- the figures of a small outline worked by hand (CPM forward pass, Kelley & Walker 1959;
  TE = (O + 4M + P) / 6, Malcolm et al. 1959), written out in the comment of PLAN;
- the command line run in a fresh interpreter: exit codes 0 and 2 as the README gives them.
"""

from __future__ import annotations

import json

import openpyxl
import pytest
from helpers import run_cli, sha256, write_csv
from recalc import compare_recalculated

HEAD = ["WBS", "ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]

#: Worked by hand. S's activities: A, B, C with A -> B, A -> C[SS+1] inside, so K -> S is
#: K -> A, and S -> D is B -> D and C -> D.
#: K 0..0; A (TE 4) 0..4; B (3) 4..7; C (TE 2) SS+1 from A: 1..3; D (1) max(7, 3) = 7..8.
#: T (B, C) 1..7, span 6; S (A, B, C) 0..7, span 7; project 8.
#: Sheet rows (header on row 4): K 5, S 6, A 7, T 8, B 9, C 10, D 11.
PLAN = [
    HEAD,
    ["0", "K", "Kick-off", None, 0, 0, 0],
    ["1", "S", "Stage one", "K", None, None, None],
    ["1.1", "A", "Survey", None, 2, 4, 6],
    ["1.2", "T", "Works", None, None, None, None],
    ["1.2.1", "B", "Dig", "A", 3, 3, 3],
    ["1.2.2", "C", "Pipes", "A[SS+1]", 1, 2, 3],
    ["2", "D", "Hand over", "S", 1, 1, 1],
]


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    from converter.api import ConvertOptions, convert

    root = tmp_path_factory.mktemp("summary_rows")
    source = write_csv(root / "outline.csv", PLAN)
    options = ConvertOptions(json=True, iterations=300, seed=7, start_date="2026-03-02", due=9)
    result = convert(source, options, outdir=root)
    assert result.ok, [str(p) for p in result.problems]
    return result, json.loads(result.json_path.read_text(encoding="utf-8"))


def test_summary_rows_sit_above_their_children_with_min_max_formulas(made):
    result, _ = made
    ws = openpyxl.load_workbook(result.workbook)["Activities"]
    names = [ws.cell(r, 2).value for r in range(5, 12)]
    assert names == [
        "Kick-off",
        "Stage one (ID S)",
        "Survey",
        "Works (ID T)",
        "Dig",
        "Pipes",
        "Hand over",
    ]
    # S (row 6) spans rows 7-10 (A, T, B, C); T (row 8) spans rows 9-10; I = ES, J = EF
    assert (ws["I6"].value, ws["J6"].value) == ("=MIN($I$7:$I$10)", "=MAX($J$7:$J$10)")
    assert (ws["I8"].value, ws["J8"].value) == ("=MIN($I$9:$I$10)", "=MAX($J$9:$J$10)")
    # no estimates, TE, floats or ID on a summary row (column-wide counts see activities)
    assert all(ws.cell(6, c).value is None for c in (1, 4, 5, 6, 7, 8, 11, 12, 13, 14, 15))
    # B's early start reads A's early finish on A's row (7), not row 5 + index
    assert ws["I9"].value == "=MAX(0,J7)"
    method = openpyxl.load_workbook(result.workbook)["Method"]
    assert "Summary rows (WBS)" in [c.value for c in method["A"]]


def test_summary_figures_in_the_json_are_the_hand_worked_ones(made):
    _, data = made
    spans = {s["wbs"]: (s["start"], s["finish"], s["span"]) for s in data["summaries"]}
    assert spans == {"1": (0.0, 7.0, 7.0), "1.2": (1.0, 7.0, 6.0)}
    assert [s["summary"] for s in data["summaries"]] == [None, "1"]
    # 2026-03-02 is a Monday: offset 0 starts that day, finish 7 ends on day 7 (Tue 10th)
    first = data["summaries"][0]
    assert (first["start_date"], first["finish_date"]) == ("2026-03-02", "2026-03-10")
    parents = {a["id"]: a["summary"] for a in data["activities"]}
    assert parents == {"K": None, "A": "1", "B": "1.2", "C": "1.2", "D": None}
    assert data["project"]["expected_duration"] == 8.0
    check = next(c for c in data["checks"] if c["name"] == "links on summary rows")
    assert (check["count"], check["passed"]) == (3, False)  # K->A, B->D, C->D


@pytest.mark.libreoffice
def test_libreoffice_recalculates_summary_rows_and_column_formulas(made, libreoffice, tmp_path):
    result, _ = made
    copy = libreoffice.recalculate(result.workbook, tmp_path / "recalc")
    report = compare_recalculated(result.workbook, copy)
    assert not report, report
    assert report.compared > 100
    ws = openpyxl.load_workbook(copy, data_only=True)["Activities"]
    # LibreOffice's own figures for S (row 6) and T (row 8): start, finish, span (column W)
    assert [ws[f"{c}6"].value for c in "IJW"] == [0, 7, 7]
    assert [ws[f"{c}8"].value for c in "IJW"] == [1, 7, 6]


def test_cli_end_to_end_on_a_csv_with_wbs_rows(tmp_path):
    source = write_csv(tmp_path / "plan.csv", PLAN)
    done = run_cli("convert", source, "--json", "--no-simulation", "--outdir", tmp_path / "out")
    assert done.returncode == 0, done.stderr
    data = json.loads((tmp_path / "out" / "plan.analysis.json").read_text(encoding="utf-8"))
    assert [s["wbs"] for s in data["summaries"]] == ["1", "1.2"]
    assert data["project"]["critical_path"] == ["K", "A", "B", "D"]


def test_cli_refuses_a_repeated_wbs_code_with_its_cell(tmp_path):
    rows = [*PLAN[:3], ["1", "X", "again", None, 1, 1, 1], *PLAN[3:]]
    source = write_csv(tmp_path / "bad.csv", rows)
    before = sha256(source)
    done = run_cli("convert", source, "--outdir", tmp_path / "out")
    assert done.returncode == 2
    assert "bad.csv!A4" in done.stdout + done.stderr  # the third data row, column A
    assert sha256(source) == before
