"""Ladders and repeated links as read from the input (issue 11).

Expected outcomes come from the issue text: two links of different types between one
pair are accepted (SS with a lag together with FF with a lag is normal practice, common
practice since Fondahl 1961, from memory); the very same link (pair, type and lag) twice is a
warning naming the second cell, counted once; the same pair and type with different lags
is an error naming both cells. Cells are worked out by hand from helpers.HEADER: A=ID,
C=Predecessors, data from sheet row 2; links sheets A=Predecessor, B=Successor, C=Type,
D=Lag, data from row 2.
"""

from __future__ import annotations

import json

from helpers import HEADER, run_cli, write_xlsx

from converter.api import ConvertOptions, convert, load
from converter.model import ERROR, WARNING

LINKS_HEADER = ["Predecessor", "Successor", "Type", "Lag"]


def acts(b_predecessors, c_predecessors="B"):
    return [
        HEADER,
        ["A", "Excavate", None, 5, 6, 9],  # row 2
        ["B", "Lay kerbs", b_predecessors, 3, 4, 6],  # row 3
        ["C", "Surface", c_predecessors, 1, 2, 3],  # row 4
    ]


def run(path):
    return load(path, ConvertOptions(simulate=False))


def found(problems, severity):
    return [(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == severity]


def link_tuples(schedule):
    return [(lk.pred, lk.succ, lk.type, lk.lag, lk.cell) for lk in schedule.links]


def test_ladder_in_one_predecessor_cell_is_two_links(tmp_path):
    schedule, problems = run(
        write_xlsx(tmp_path / "l.xlsx", {"Activities": acts("A[SS+2], A[FF+3]")})
    )
    assert not problems, [str(p) for p in problems]
    assert link_tuples(schedule) == [
        ("A", "B", "SS", 2.0, "C3"),
        ("A", "B", "FF", 3.0, "C3"),
        ("B", "C", "FS", 0.0, "C4"),
    ]


def test_ladder_on_two_rows_of_a_links_sheet(tmp_path):
    links = [LINKS_HEADER, ["A", "B", "SS", 2], ["A", "B", "FF", 3], ["B", "C", "FS", 0]]
    path = write_xlsx(tmp_path / "l.xlsx", {"Activities": acts(None, None), "Links": links})
    schedule, problems = run(path)
    assert not problems, [str(p) for p in problems]
    assert link_tuples(schedule) == [
        ("A", "B", "SS", 2.0, "A2"),
        ("A", "B", "FF", 3.0, "A3"),
        ("B", "C", "FS", 0.0, "A4"),
    ]


def test_the_same_link_twice_in_one_cell_is_a_warning_counted_once(tmp_path):
    schedule, problems = run(
        write_xlsx(tmp_path / "l.xlsx", {"Activities": acts("A[SS+2], A[SS+2]")})
    )
    assert found(problems, ERROR) == []
    assert found(problems, WARNING) == [("repeated-link", "Activities", "C3", "B")]
    (warning,) = problems
    assert warning.message == (
        "the SS+2 link A -> B is given twice (again in the same cell); it is counted once"
    )
    assert link_tuples(schedule) == [("A", "B", "SS", 2.0, "C3"), ("B", "C", "FS", 0.0, "C4")]


def test_the_same_link_on_the_links_sheet_names_the_second_cell_and_the_first(tmp_path):
    links = [LINKS_HEADER, ["A", "B", None, None], ["A", "B", "FF", 3]]  # rows 2, 3
    path = write_xlsx(tmp_path / "l.xlsx", {"Activities": acts("A, A[FF+3]"), "Links": links})
    schedule, problems = run(path)
    assert found(problems, ERROR) == []
    assert found(problems, WARNING) == [
        ("repeated-link", "Links", "A2", "B"),
        ("repeated-link", "Links", "A3", "B"),
    ]
    first, second = problems
    assert "FS link A -> B" in first.message and "first at Activities!C3" in first.message
    assert "FF+3 link A -> B" in second.message and "first at Activities!C3" in second.message
    assert len(schedule.links) == 3  # A->B FS, A->B FF+3, B->C: each counted once


def test_same_type_with_different_lags_is_an_error_naming_both_cells(tmp_path):
    links = [LINKS_HEADER, ["A", "B", "SS", 1]]  # row 2
    path = write_xlsx(tmp_path / "l.xlsx", {"Activities": acts("A[SS+2], A[FF+3]"), "Links": links})
    schedule, problems = run(path)
    assert schedule is None
    assert found(problems, ERROR) == [("conflicting-lags", "Links", "A2", "B")]
    (error,) = problems
    assert error.message == (
        "the SS link A -> B is given twice with different lags: +2 at Activities!C3 "
        "and +1 at Links!A2"
    )


def test_conflicting_lags_in_one_cell_refuse_the_input_with_exit_code_2(tmp_path):
    path = write_xlsx(tmp_path / "l.xlsx", {"Activities": acts("A[FF+1], A[FF-1]")})
    before = path.read_bytes()
    done = run_cli("check", path)
    assert done.returncode == 2, done.stderr
    assert "error: Activities!C3: the FF link A -> B is given twice" in done.stderr
    assert "lags: +1 and -1, both at Activities!C3" in done.stderr
    assert path.read_bytes() == before


def test_ladder_converts_end_to_end_with_both_links_and_two_paths(tmp_path):
    # A(6) -> B(4) by SS+2 and FF+3, fixed durations, worked by hand (PDM rules, Moder,
    # Phillips & Davis 1983): ES_B = max(0 + 2, 6 + 3 - 4) = 5, EF_B = 9; C after B: 9..10.
    rows = [
        HEADER,
        ["A", "Excavate", None, None, 6, None],
        ["B", "Lay kerbs", "A[SS+2], A[FF+3]", None, 4, None],
        ["C", "Surface", "B", None, 1, None],
    ]
    path = write_xlsx(tmp_path / "l.xlsx", {"Activities": rows})
    result = convert(path, ConvertOptions(json=True, simulate=False), outdir=tmp_path / "out")
    assert result.ok, [str(p) for p in result.problems]
    data = json.loads(result.json_path.read_text(encoding="utf-8"))
    assert data["links"] == [
        {"from": "A", "to": "B", "type": "SS", "lag": 2.0},
        {"from": "A", "to": "B", "type": "FF", "lag": 3.0},
        {"from": "B", "to": "C", "type": "FS", "lag": 0.0},
    ]
    b = next(x for x in data["activities"] if x["id"] == "B")
    assert (b["es"], b["ef"], b["total_float"]) == (5.0, 9.0, 0.0)
    # paths A-FF+3-B-C: 6 + 3 + 1 = 10 and A-SS+2-B-C: 2 + 4 + 1 = 7, same activities
    assert [(p["activities"], p["links"], p["mean"]) for p in data["paths"]] == [
        (["A", "B", "C"], [1, 2], 10.0),
        (["A", "B", "C"], [0, 2], 7.0),
    ]
