"""Reading and validating activity sheets: every problem at once, each with its place.

What is checked against what:
- the cell each problem names is worked out by hand from the invented rows written
  (comments give the working: header on sheet row h, so data row k is sheet row h + k;
  columns as in ``helpers.HEADER``: A=ID, B=Description, C=Predecessors, D=O, E=M, F=P);
- header spellings, link notation and settings are the ones the project's issue lists;
- cycles are cross-checked with networkx (``simple_cycles``), which finds them on its own.
Inputs are written with openpyxl or the csv module; the simulation is not run.
"""

from __future__ import annotations

import datetime as dt

import networkx as nx
import pytest
from helpers import HEADER, good_xlsx, write_csv, write_xlsx

from converter.analyse import pert
from converter.api import ConvertOptions, load
from converter.model import ERROR, WARNING


def run(path, **options):
    return load(path, ConvertOptions(simulate=False, **options))


def errors(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == ERROR}


def warnings(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == WARNING}


def two_rows(path, row, header=HEADER, sheet="Activities"):
    """Header (row 1), a good activity A (row 2), then ``row`` (row 3)."""
    return write_xlsx(path, {sheet: [header, ["A", "a", None, 1, 2, 3], row]})


# --------------------------------------------------------------------------- one pass
def test_every_problem_is_reported_in_one_pass(tmp_path):
    rows = [
        HEADER,  # row 1
        ["A", "first", None, 1, 2, 3],  # row 2
        ["A", "again", None, 1, 2, 3],  # row 3: duplicate ID -> A3
        [None, "no id", "A", 1, 2, 3],  # row 4: blank ID -> A4
        ["B", "b", "Z", 1, 2, 3],  # row 5: missing predecessor -> C5
        ["C", "c", "C", 1, 2, 3],  # row 6: self-link -> C6
        ["D", "d", "A", "x", 2, 3],  # row 7: O not a number -> D7
        ["E", "e", "A", -1, 2, 3],  # row 8: O negative -> D8
        ["F", "f", "A", 3, 2, 1],  # row 9: M < O -> E9, P < M -> F9
        ["K2", "k", "K4", 1, 2, 3],  # row 10: cycle closes in C10
        ["K3", "k", "K2", 1, 2, 3],  # row 11
        ["K4", "k", "K3", 1, 2, 3],  # row 12
        ["G", "g", "A[XX]", 1, 2, 3],  # row 13: bad bracket -> C13
    ]
    settings = [["Setting", "Value"], ["Start date", "next Monday"]]  # -> Settings!B2
    path = write_xlsx(tmp_path / "many.xlsx", {"Activities": rows, "Settings": settings})
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {
        ("duplicate-id", "Activities", "A3", "A"),
        ("blank-id", "Activities", "A4", None),
        ("missing-link", "Activities", "C5", "B"),
        ("self-link", "Activities", "C6", "C"),
        ("not-a-number", "Activities", "D7", "D"),
        ("negative-estimate", "Activities", "D8", "E"),
        ("order", "Activities", "E9", "F"),
        ("order", "Activities", "F9", "F"),
        ("cycle", "Activities", "C10", "K2"),
        ("bad-link", "Activities", "C13", "G"),
        ("bad-setting", "Settings", "B2", None),
    }
    cycle = next(p for p in problems if p.code == "cycle")
    assert "K2 -> K3 -> K4 -> K2" in cycle.message
    assert str(cycle).startswith("error: Activities!C10: ")


# Each case: the third row (sheet row 3) of a sheet whose row 2 is a good activity A.
SINGLE = [
    ("duplicate-id", ["A", "again", None, 1, 2, 3], "A3", "A"),
    ("blank-id", [None, "no id", "A", 1, 2, 3], "A3", None),
    ("missing-link", ["B", "b", "Q7", 1, 2, 3], "C3", "B"),
    ("self-link", ["B", "b", "B", 1, 2, 3], "C3", "B"),
    ("not-a-number", ["B", "b", "A", 1, "two", 3], "E3", "B"),
    ("not-a-number", ["B", "b", "A", "one day", 2, 3], "D3", "B"),
    ("negative-estimate", ["B", "b", "A", 1, 2, -3], "F3", "B"),
    ("order", ["B", "b", "A", 5, 2, 9], "E3", "B"),  # M < O: the M cell
    ("order", ["B", "b", "A", 1, 6, 4], "F3", "B"),  # P < M: the P cell
    ("bad-link", ["B", "b", "A[XX]", 1, 2, 3], "C3", "B"),
    ("missing-most-likely", ["B", "b", "A", 1, None, 3], "E3", "B"),
    ("missing-estimate", ["B", "b", "A", 1, 2, None], "F3", "B"),
]


@pytest.mark.parametrize(
    ("code", "row", "cell", "activity"), SINGLE, ids=[f"{c[0]}-{c[2]}" for c in SINGLE]
)
def test_single_problem_names_its_cell(tmp_path, code, row, cell, activity):
    schedule, problems = run(two_rows(tmp_path / "one.xlsx", row))
    assert schedule is None
    assert errors(problems) == {(code, "Activities", cell, activity)}


def test_missing_link_message_names_the_id_and_column(tmp_path):
    _, problems = run(two_rows(tmp_path / "q.xlsx", ["B", "b", "A, Q7", 1, 2, 3]))
    (p,) = [p for p in problems if p.severity == ERROR]
    assert str(p) == (
        'error: Activities!C3: predecessor "Q7" is not an activity ID in column A [activity B]'
    )


def test_problems_in_rows_after_a_bad_row_are_still_found(tmp_path):
    rows = [HEADER, ["A", None, None, "x", 2, 3]] + [
        [f"N{k}", None, "A", 1, 2, -1]
        for k in range(1, 6)  # rows 3..7, P negative -> F
    ]
    _, problems = run(write_xlsx(tmp_path / "rows.xlsx", {"Activities": rows}))
    assert errors(problems) == {("not-a-number", "Activities", "D2", "A")} | {
        ("negative-estimate", "Activities", f"F{k + 2}", f"N{k}") for k in range(1, 6)
    }


def test_duplicate_id_row_still_has_its_estimates_checked(tmp_path):
    # row 3 repeats ID A and also has O = "x" (D3) and M = -2 (E3)
    _, problems = run(two_rows(tmp_path / "dup.xlsx", ["A", "again", None, "x", -2, 3]))
    assert errors(problems) == {
        ("duplicate-id", "Activities", "A3", "A"),
        ("not-a-number", "Activities", "D3", "A"),
        ("negative-estimate", "Activities", "E3", "A"),
    }


def test_blank_id_row_still_has_its_estimates_checked(tmp_path):
    # row 3 has no ID and O = "x" (D3)
    _, problems = run(two_rows(tmp_path / "blank.xlsx", [None, "no id", None, "x", 2, 3]))
    codes_cells = {(c, cell) for c, _, cell, _ in errors(problems)}
    assert codes_cells == {("blank-id", "A3"), ("not-a-number", "D3")}


# --------------------------------------------------------------------------- cycles
def test_cycle_is_printed_in_link_order_from_the_first_listed_activity(tmp_path):
    rows = [
        HEADER,
        ["K4", None, "K3", 1, 2, 3],  # row 2: closing link K3 -> K4 is in C2
        ["K2", None, "K4", 1, 2, 3],  # row 3
        ["K3", None, "K2", 1, 2, 3],  # row 4
    ]
    _, problems = run(write_xlsx(tmp_path / "c.xlsx", {"Activities": rows}))
    (p,) = [p for p in problems if p.severity == ERROR]
    assert (p.code, p.cell, p.activity) == ("cycle", "C2", "K4")
    assert p.message.endswith("K4 -> K2 -> K3 -> K4")
    # networkx finds the same single cycle on its own
    g = nx.DiGraph([("K3", "K4"), ("K4", "K2"), ("K2", "K3")])
    (found,) = list(nx.simple_cycles(g))
    assert set(found) == {"K2", "K3", "K4"}


def test_two_separate_cycles_are_both_reported(tmp_path):
    rows = [
        HEADER,
        ["S", None, None, 1, 2, 3],  # row 2
        ["X", None, "S, Y", 1, 2, 3],  # row 3: Y -> X closes X -> Y -> X in C3
        ["Y", None, "X", 1, 2, 3],  # row 4
        ["P", None, "R", 1, 2, 3],  # row 5: R -> P closes P -> Q -> R -> P in C5
        ["Q", None, "P", 1, 2, 3],  # row 6
        ["R", None, "Q", 1, 2, 3],  # row 7
    ]
    _, problems = run(write_xlsx(tmp_path / "cc.xlsx", {"Activities": rows}))
    cycles = sorted((p.cell, p.activity, p.message) for p in problems if p.code == "cycle")
    assert [(c, a) for c, a, _ in cycles] == [("C3", "X"), ("C5", "P")]
    assert cycles[0][2].endswith("X -> Y -> X")
    assert cycles[1][2].endswith("P -> Q -> R -> P")


# --------------------------------------------------------------------------- columns / files
def test_missing_required_column_says_which_and_lists_headers(tmp_path):
    rows = [
        ["Plan for the new depot"],
        [],  # title, blank
        ["ID", "Task", "Predecessors", "Optimistic", "Pessimistic"],  # header row 3
        ["A", "a", None, 1, 3],
    ]
    schedule, problems = run(write_xlsx(tmp_path / "m.xlsx", {"Tasks": rows}))
    assert schedule is None
    (p,) = problems
    assert (p.code, p.sheet, p.cell) == ("missing-column", "Tasks", "A3")
    assert "missing: Most likely;" in p.message
    for h in ("ID", "Task", "Predecessors", "Optimistic", "Pessimistic"):
        assert f'"{h}"' in p.message


def test_no_recognisable_header_lists_what_was_found(tmp_path):
    rows = [["Foo", "Bar", "Baz"], ["A", 1, 2]]
    _, problems = run(write_xlsx(tmp_path / "f.xlsx", {"Sheet1": rows}))
    (p,) = problems
    assert (p.code, p.sheet, p.cell) == ("missing-column", "Sheet1", "A1")
    for name in ("ID", "Optimistic", "Most likely", "Pessimistic"):
        assert name in p.message
    assert '"Foo", "Bar", "Baz"' in p.message


def test_empty_sheet(tmp_path):
    schedule, problems = run(write_xlsx(tmp_path / "e.xlsx", {"Sheet1": []}))
    assert schedule is None
    assert errors(problems) == {("empty", "Sheet1", "A1", None)}


def test_header_without_rows_is_empty(tmp_path):
    path = write_xlsx(tmp_path / "h.xlsx", {"Activities": [HEADER, [], []]})
    _, problems = run(path)
    assert errors(problems) == {("empty", "Activities", "A2", None)}  # first row under header


def test_empty_table_reported_alongside_a_settings_problem(tmp_path):
    path = write_xlsx(
        tmp_path / "h.xlsx", {"Activities": [HEADER], "Settings": [["Start date", "soon"]]}
    )
    _, problems = run(path)
    assert errors(problems) == {
        ("empty", "Activities", "A2", None),
        ("bad-setting", "Settings", "B1", None),
    }


def test_empty_csv_is_an_empty_sheet(tmp_path):
    path = tmp_path / "blank.csv"
    path.write_bytes(b"")
    _, problems = run(path)
    assert [p.code for p in problems] == ["empty"]


@pytest.mark.parametrize(
    ("name", "content", "code"),
    [
        ("noise.xlsx", bytes((i * 131 + 7) % 256 for i in range(4096)), "unreadable"),
        ("zero.xlsx", b"", "unreadable"),
        ("really-csv.xlsx", b"ID,O,M,P\nA,1,2,3\n", "unreadable"),
        ("notes.txt", b"ID,O,M,P\nA,1,2,3\n", "unreadable"),
        ("noise.ods", bytes(range(256)) * 8, "unreadable"),
    ],
)
def test_unreadable_file_is_a_problem_naming_the_file(tmp_path, name, content, code):
    path = tmp_path / name
    path.write_bytes(content)
    schedule, problems = run(path)
    assert schedule is None
    (p,) = problems
    assert (p.severity, p.code, p.sheet, p.cell) == (ERROR, code, name, None)
    assert "not a readable workbook" in p.message


def test_missing_file(tmp_path):
    schedule, problems = run(tmp_path / "absent.xlsx")
    assert schedule is None
    (p,) = problems
    assert (p.code, p.sheet) == ("file-missing", "absent.xlsx")
    assert "not found" in p.message


def test_folder_is_not_a_file(tmp_path):
    (tmp_path / "folder.xlsx").mkdir()
    _, problems = run(tmp_path / "folder.xlsx")
    assert [(p.code, p.sheet) for p in problems] == [("not-a-file", "folder.xlsx")]


# --------------------------------------------------------------------------- warnings
def test_deterministic_row_and_unlinked_activity_are_warnings(tmp_path):
    rows = [
        HEADER,
        ["A", "a", None, 1, 2, 3],  # row 2
        ["B", "b", "A", None, 4, None],  # row 3: only M -> fixed duration (E3)
        ["C", "c", None, 1, 2, 3],  # row 4: no links at all (C4)
        ["D", "d", "A", 5, 5, 5],  # row 5: O = M = P given (E5)
    ]
    schedule, problems = run(write_xlsx(tmp_path / "w.xlsx", {"Activities": rows}))
    assert schedule is not None  # warnings do not block
    assert not errors(problems)
    assert warnings(problems) == {
        ("deterministic", "Activities", "E3", "B"),
        ("no-links", "Activities", "C4", "C"),
        ("deterministic", "Activities", "E5", "D"),
    }
    b = schedule.activities[1]
    assert (b.optimistic, b.most_likely, b.pessimistic) == (4, 4, 4)
    # ((P - O) / 6)^2 with P = O (Malcolm et al. 1959)
    assert pert.variance(b.optimistic, b.pessimistic) == 0
    assert {p.code for p in schedule.warnings} == {"deterministic", "no-links"}


# --------------------------------------------------------------------------- headers
SPELLINGS = {
    0: ("id", "activity", "activity id", "task id", "code"),
    1: ("task", "name", "description", "activity name"),
    2: ("predecessors", "depends on", "after", "preceded by"),
    3: ("optimistic", "o", "a", "min", "best"),
    4: ("most likely", "likely", "m", "mode"),
    5: ("pessimistic", "p", "b", "max", "worst"),
}
SPELLING_CASES = [
    (col, s, style)
    for col, names in SPELLINGS.items()
    for s in names
    for style in ("upper-spaced", "title")
]


def _styled(text: str, style: str) -> str:
    if style == "upper-spaced":
        return "  " + text.upper().replace(" ", "   ") + " "
    return text.title()


@pytest.mark.parametrize(
    ("col", "spelling", "style"), SPELLING_CASES, ids=[f"{s}-{st}" for _, s, st in SPELLING_CASES]
)
def test_header_spellings(tmp_path, col, spelling, style):
    header = list(HEADER)
    header[col] = _styled(spelling, style)
    rows = [header, ["A", "Dig", None, 1, 2, 4], ["B", "Fill", "A", 2, 3, 7]]
    schedule, problems = run(write_xlsx(tmp_path / "h.xlsx", {"Sheet1": rows}))
    assert not errors(problems), problems
    assert [
        (a.id, a.name, a.optimistic, a.most_likely, a.pessimistic) for a in schedule.activities
    ] == [("A", "Dig", 1, 2, 4), ("B", "Fill", 2, 3, 7)]
    assert [(lk.pred, lk.succ) for lk in schedule.links] == [("A", "B")]


def test_header_below_title_and_blank_rows(tmp_path):
    rows = [
        ["Depot fit-out: activity list"],  # row 1: title
        [],  # row 2
        ["Issued 3 March"],  # row 3
        [],  # row 4
        ["ID", "Predecessors", "O", "M", "P"],  # row 5: header
        ["A", None, 1, 2, 3],  # row 6
        [],  # row 7: blank, skipped
        ["B", "A", 1, "lots", 3],  # row 8: M in column D -> D8
    ]
    _, problems = run(write_xlsx(tmp_path / "t.xlsx", {"Plan": rows}))
    assert errors(problems) == {("not-a-number", "Plan", "D8", "B")}


def test_header_below_title_reads_activities_and_rows(tmp_path):
    rows = [
        ["Depot"],
        [],
        ["ID", "Predecessors", "O", "M", "P"],
        ["A", None, 1, 2, 3],
        [],
        [],
        ["B", "A", 1, 2, 3],
    ]
    schedule, problems = run(write_xlsx(tmp_path / "t.xlsx", {"Plan": rows}))
    assert not errors(problems)
    assert [(a.id, a.row) for a in schedule.activities] == [("A", 4), ("B", 7)]
    assert schedule.raw.header_row == 3


def test_csv_input_with_title_row_exported_by_a_spreadsheet(tmp_path):
    # A spreadsheet's CSV export pads the title row with delimiters.
    rows = [
        ["Boiler shutdown", "", "", "", ""],
        [],
        ["ID", "Predecessors", "O", "M", "P"],
        ["A", "", "1", "2", "3"],
        ["B", "A", "2", "3", "x"],
    ]  # P of B: row 5, col E
    _, problems = run(write_csv(tmp_path / "b.csv", rows))
    assert errors(problems) == {("not-a-number", "b.csv", "E5", "B")}


def test_csv_with_plain_title_line(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text(
        "Boiler shutdown\n\nID,Predecessors,O,M,P\nA,,1,2,3\nB,A,1,2,3\n", encoding="utf-8"
    )
    schedule, problems = run(path)
    assert not errors(problems), problems
    assert [a.id for a in schedule.activities] == ["A", "B"]


def test_description_absent_the_id_serves(tmp_path):
    rows = [["ID", "Predecessors", "O", "M", "P"], ["A", None, 1, 2, 3], ["B", "A", 1, 2, 3]]
    schedule, _ = run(write_xlsx(tmp_path / "d.xlsx", {"Sheet1": rows}))
    assert [(a.id, a.name) for a in schedule.activities] == [("A", "A"), ("B", "B")]


def test_blank_description_the_id_serves(tmp_path):
    schedule, _ = run(two_rows(tmp_path / "d.xlsx", ["B", None, "A", 1, 2, 3]))
    assert [a.name for a in schedule.activities] == ["a", "B"]


@pytest.mark.parametrize("cell", ["A, B; C", "A;B;C", "A , B ,C", " A ;  B, C ", "A,\nB;C"])
def test_predecessor_separators(tmp_path, cell):
    rows = [HEADER] + [[x, None, None, 1, 2, 3] for x in "ABC"] + [["D", None, cell, 1, 2, 3]]
    schedule, problems = run(write_xlsx(tmp_path / "s.xlsx", {"Activities": rows}))
    assert not errors(problems), problems
    assert sorted(lk.pred for lk in schedule.links if lk.succ == "D") == ["A", "B", "C"]


def test_numeric_id_cells_are_text(tmp_path):
    rows = [
        HEADER,
        [3, None, None, 1, 2, 3],  # numeric 3 -> "3"
        [4.0, None, 3, 1, 2, 3],  # numeric 4.0 -> "4"; predecessor cell numeric 3
        [5, None, "3; 4", 1, 2, 3],  # text predecessors
        [6, None, 4.0, 1, 2, 3],
    ]  # predecessor cell numeric 4.0
    schedule, problems = run(write_xlsx(tmp_path / "n.xlsx", {"Activities": rows}))
    assert not errors(problems), problems
    assert [a.id for a in schedule.activities] == ["3", "4", "5", "6"]
    assert sorted((lk.pred, lk.succ) for lk in schedule.links) == [
        ("3", "4"),
        ("3", "5"),
        ("4", "5"),
        ("4", "6"),
    ]


def test_numeric_3_and_3_point_0_are_the_same_id(tmp_path):
    rows = [HEADER, [3, None, None, 1, 2, 3], [3.0, None, None, 1, 2, 3]]  # rows 2, 3
    _, problems = run(write_xlsx(tmp_path / "n.xlsx", {"Activities": rows}))
    assert errors(problems) == {("duplicate-id", "Activities", "A3", "3")}


def test_blank_rows_are_skipped(tmp_path):
    rows = [
        HEADER,
        [],
        ["A", None, None, 1, 2, 3],
        [None, None, None, None, None, None],
        [],
        ["B", None, "A", 1, 2, 3],
        [],
    ]
    schedule, problems = run(write_xlsx(tmp_path / "b.xlsx", {"Activities": rows}))
    assert problems == []
    assert [(a.id, a.row) for a in schedule.activities] == [("A", 3), ("B", 6)]


# --------------------------------------------------------------------------- sheet choice
SIMPLE = [["ID", "Predecessors", "O", "M", "P"], ["A", None, 1, 2, 3], ["B", "A", 1, 2, 3]]


def test_single_sheet_is_used(tmp_path):
    schedule, _ = run(write_xlsx(tmp_path / "one.xlsx", {"Whatever": SIMPLE}))
    assert schedule.sheet == "Whatever"


@pytest.mark.parametrize("named", ["Activities", "Tasks", "Schedule", "activities", "TASKS"])
def test_sheet_named_for_activities_is_preferred(tmp_path, named):
    other = [r[:] for r in SIMPLE] + [["C", "B", 1, 2, 3]]
    path = write_xlsx(tmp_path / "two.xlsx", {"Copy": other, named: SIMPLE})
    schedule, problems = run(path)
    assert not errors(problems)
    assert schedule.sheet == named
    assert [a.id for a in schedule.activities] == ["A", "B"]
    assert any(named in note and "Activity sheet" in note for note in schedule.notes)


def test_sheet_found_by_headers_among_several(tmp_path):
    sheets = {
        "Read me": [["This file holds the depot plan."], ["Ask Sam."]],
        "Contacts": [["Name", "Phone"], ["Sam", "123"]],
        "Data": SIMPLE,
    }
    schedule, problems = run(write_xlsx(tmp_path / "many.xlsx", sheets))
    assert not errors(problems)
    assert schedule.sheet == "Data"
    (note,) = [n for n in schedule.notes if n.startswith("Activity sheet")]
    assert "Data" in note and "3 sheets" in note


def test_problem_cells_name_the_chosen_sheet(tmp_path):
    bad = [r[:] for r in SIMPLE]
    bad[2] = ["B", "Q", 1, 2, 3]  # row 3, predecessors in column B
    path = write_xlsx(tmp_path / "x.xlsx", {"Cover": [["Depot"]], "Tasks": bad})
    _, problems = run(path)
    assert errors(problems) == {("missing-link", "Tasks", "B3", "B")}


# --------------------------------------------------------------------------- typed links
LINK_CASES = [
    ("A", ("A", "FS", 0.0)),
    ("A[+2]", ("A", "FS", 2.0)),
    ("A[-1]", ("A", "FS", -1.0)),
    ("A[SS]", ("A", "SS", 0.0)),
    ("A[SS+3]", ("A", "SS", 3.0)),
    ("A[FF-1]", ("A", "FF", -1.0)),
    ("A[SF]", ("A", "SF", 0.0)),
    ("A[FS+1.5]", ("A", "FS", 1.5)),
    ("A-1+B", ("A-1+B", "FS", 0.0)),
    ("A-1+B[SS+2]", ("A-1+B", "SS", 2.0)),
    ("A-1+B[-2]", ("A-1+B", "FS", -2.0)),
]


@pytest.mark.parametrize(("token", "expected"), LINK_CASES, ids=[c[0] for c in LINK_CASES])
def test_typed_link_notation(tmp_path, token, expected):
    rows = [
        HEADER,
        ["A", None, None, 1, 2, 3],
        ["A-1+B", None, None, 1, 2, 3],
        ["X", None, token, 1, 2, 3],
    ]  # X's predecessors: C4
    schedule, problems = run(write_xlsx(tmp_path / "l.xlsx", {"Activities": rows}))
    assert not errors(problems), problems
    links = [(lk.pred, lk.type, lk.lag, lk.cell) for lk in schedule.links if lk.succ == "X"]
    assert links == [(*expected, "C4")]


def test_several_typed_links_in_one_cell(tmp_path):
    rows = [
        HEADER,
        ["A", None, None, 1, 2, 3],
        ["A-1+B", None, None, 1, 2, 3],
        ["C", None, "A", 1, 2, 3],
        ["X", None, "A[SS+3], A-1+B[FF-1]; C[+2]", 1, 2, 3],
    ]
    schedule, _ = run(write_xlsx(tmp_path / "l.xlsx", {"Activities": rows}))
    assert sorted((lk.pred, lk.type, lk.lag) for lk in schedule.links if lk.succ == "X") == [
        ("A", "SS", 3.0),
        ("A-1+B", "FF", -1.0),
        ("C", "FS", 2.0),
    ]


@pytest.mark.parametrize("token", ["A[XX]", "A[SS+]", "A[+two]", "[SS]", "A[FS*2]"])
def test_bad_bracket_is_a_problem_with_its_cell(tmp_path, token):
    _, problems = run(two_rows(tmp_path / "b.xlsx", ["B", None, token, 1, 2, 3]))
    assert errors(problems) == {("bad-link", "Activities", "C3", "B")}


def test_links_sheet_with_aliases(tmp_path):
    acts = [["ID", "O", "M", "P"], ["A", 1, 2, 3], ["B", 1, 2, 3], ["C", 1, 2, 3], ["D", 1, 2, 3]]
    links = [
        ["From", "To", "Relation", "Lead-lag"],
        ["A", "B", "SS", 2],  # row 2
        ["B", "C", None, None],  # row 3: FS, no lag
        ["C", "D", "FF", -1],
    ]  # row 4
    schedule, problems = run(write_xlsx(tmp_path / "k.xlsx", {"Activities": acts, "Links": links}))
    assert not errors(problems), problems
    assert [(lk.pred, lk.succ, lk.type, lk.lag, lk.sheet, lk.cell) for lk in schedule.links] == [
        ("A", "B", "SS", 2.0, "Links", "A2"),
        ("B", "C", "FS", 0.0, "Links", "A3"),
        ("C", "D", "FF", -1.0, "Links", "A4"),
    ]
    assert "Links sheet: Links." in schedule.notes


def test_links_sheet_with_standard_headers_and_its_problems(tmp_path):
    acts = [
        ["ID", "Predecessors", "O", "M", "P"],
        ["A", None, 1, 2, 3],
        ["B", "A", 1, 2, 3],
        ["C", None, 1, 2, 3],
    ]
    links = [
        ["Predecessor", "Successor", "Type", "Lag"],
        ["A", "B", "FS", 0],  # row 2: also inline in Activities!B3 -> a repeat (warning)
        ["B", "C", "SS", 1],  # row 3: good
        ["B", "Q", None, None],  # row 4: Q unknown -> B4
        ["C", "C", None, None],  # row 5: self-link -> A5
        ["A", "C", "XX", None],  # row 6: bad type -> C6
        ["A", "C", "SS", "soon"],
    ]  # row 7: bad lag -> D7
    schedule, problems = run(
        write_xlsx(tmp_path / "k.xlsx", {"Activities": acts, "Relationships": links})
    )
    assert schedule is None
    assert errors(problems) == {
        ("missing-link", "Relationships", "B4", "Q"),
        ("self-link", "Relationships", "A5", "C"),
        ("bad-link", "Relationships", "C6", "C"),
        ("bad-link", "Relationships", "D7", "C"),
    }
    # the very same link twice: a warning at the second place, naming the first
    twice = next(p for p in problems if p.code == "repeated-link")
    assert (twice.severity, twice.sheet, twice.cell) == ("warning", "Relationships", "A2")
    assert "given twice" in twice.message and "Activities!B3" in twice.message


# --------------------------------------------------------------------------- settings
ACTS = [["ID", "Predecessors", "O", "M", "P"], ["A", None, 1, 2, 3], ["B", "A", 1, 2, 3]]


def test_settings_problems_name_their_cells(tmp_path):
    settings = [
        ["Setting", "Value"],
        ["Start date", "next monday"],  # B2
        ["Working days", "Mon, Tue, Funday"],  # B3
        ["Confidence levels", "0.5, 1.5"],  # B4
        ["Due", dt.date(2025, 3, 1)],
    ]  # B5: a date, and no valid start
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": ACTS, "Settings": settings})
    schedule, problems = run(path)
    assert schedule is None
    assert errors(problems) == {
        ("bad-setting", "Settings", "B2", None),
        ("bad-setting", "Settings", "B3", None),
        ("bad-setting", "Settings", "B4", None),
        ("due-date-without-start", "Settings", "B5", None),
    }
    text = {p.cell: p.message for p in problems}
    assert "funday" in text["B3"].lower()
    assert "1.5" in text["B4"]


# A bare number above 1 is a percentage, one up to 1 a fraction (the project's issue:
# "50,80,90,95" must work as the help's default "50,80,90,95%" reads); a level must lie
# strictly between 0% and 100%, and a list mixing the two kinds is ambiguous.
@pytest.mark.parametrize(
    "value, named",
    [
        (0, "0"),
        (1, "1"),
        (100, "100"),
        (150, "150"),
        (-0.2, "-0.2"),
        (-20, "-20"),
        ("100%", "100%"),
        ("80%, 0%", "0%"),
        ("high", "high"),
        ("0.5, 80", "80"),
    ],
)
def test_confidence_outside_zero_one(tmp_path, value, named):
    settings = [["Confidence", value]]  # B1
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": ACTS, "Settings": settings})
    _, problems = run(path)
    assert errors(problems) == {("bad-setting", "Settings", "B1", None)}
    (p,) = problems
    assert named in p.message and "Traceback" not in p.message


@pytest.mark.parametrize(
    "value, levels",
    [
        ("50,80,90,95", (0.5, 0.8, 0.9, 0.95)),
        ("50%, 80%", (0.5, 0.8)),
        (0.8, (0.8,)),  # a fraction, e.g. a cell formatted as a percentage
        (80, (0.8,)),  # a percentage
        ("95; 50", (0.5, 0.95)),  # sorted
        (1.5, (0.015,)),  # above 1: 1.5%
    ],
)
def test_confidence_levels_as_percent_or_fraction(tmp_path, value, levels):
    settings = [["Confidence levels", value]]  # B1
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": ACTS, "Settings": settings})
    schedule, problems = run(path)
    assert problems == [] and schedule.settings.confidence_levels == levels
    schedule, problems = run(path, confidence=str(value))  # the command-line way, overriding
    assert problems == [] and schedule.settings.confidence_levels == levels
    assert schedule.settings.sources["confidence_levels"] == "command line"


def test_due_date_needs_a_start_date(tmp_path):
    settings = [["Due date", "2025-06-30"]]  # B1
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": ACTS, "Settings": settings})
    _, problems = run(path)
    assert errors(problems) == {("due-date-without-start", "Settings", "B1", None)}
    # with a start date given on the command line it is fine
    schedule, problems = run(path, start_date="2025-03-03")
    assert not errors(problems)
    assert schedule.settings.due == dt.date(2025, 6, 30)


def test_command_line_overrides_settings_sheet(tmp_path):
    settings = [
        ["Setting", "Value"],
        ["Start date", dt.date(2025, 3, 3)],
        ["Due", 30],
        ["Seed", 5],
        ["Working days", "Mon-Thu"],
    ]  # B2..B5
    path = write_xlsx(tmp_path / "s.xlsx", {"Activities": ACTS, "Settings": settings})
    schedule, _ = run(path)
    s = schedule.settings
    assert (s.start_date, s.due, s.seed, s.working_days) == (
        dt.date(2025, 3, 3),
        30,
        5,
        (0, 1, 2, 3),
    )
    assert s.sources["start_date"] == "settings sheet (Settings!B2)"
    assert s.sources["due"] == "settings sheet (Settings!B3)"
    schedule, _ = run(path, due="20", seed=7, start_date="2025-04-01")
    s = schedule.settings
    assert (s.start_date, s.due, s.seed) == (dt.date(2025, 4, 1), 20, 7)
    assert {k: s.sources[k] for k in ("start_date", "due", "seed")} == dict.fromkeys(
        ("start_date", "due", "seed"), "command line"
    )
    assert s.sources["working_days"] == "settings sheet (Settings!B5)"  # not overridden


def test_bad_command_line_option_is_a_problem(tmp_path):
    schedule, problems = run(write_xlsx(tmp_path / "a.xlsx", {"Activities": ACTS}), due="soon")
    assert schedule is None
    (p,) = problems
    assert p.code == "bad-option" and "--due" in p.message


def test_good_input_has_no_problems(tmp_path):
    # the shared sample network must be clean, or every "one bad row" test is moot
    schedule, problems = run(good_xlsx(tmp_path / "good.xlsx"))
    assert problems == []
    assert [(lk.pred, lk.succ) for lk in schedule.links] == [
        ("A", "B"),
        ("A", "C"),
        ("B", "D"),
        ("C", "D"),
    ]


def test_sheet_of_fixed_durations_needs_no_spread_columns(tmp_path):
    # Only ID, Predecessors and Most likely: every duration fixed (O = M = P), one warning
    # at the header instead of one per row (common practice for a deterministic schedule).
    rows = [["ID", "Predecessors", "Most likely"], ["A", None, 5], ["B", "A", 3]]
    schedule, problems = run(write_xlsx(tmp_path / "fixed.xlsx", {"Activities": rows}))
    assert schedule is not None
    assert [(p.severity, p.code, p.cell) for p in problems] == [
        ("warning", "fixed-durations", "C1")
    ]
    assert [(a.optimistic, a.most_likely, a.pessimistic) for a in schedule.activities] == [
        (5, 5, 5),
        (3, 3, 3),
    ]


def test_one_spread_column_without_the_other_is_missing(tmp_path):
    rows = [["ID", "Predecessors", "Optimistic", "Most likely"], ["A", None, 1, 2]]
    _, problems = run(write_xlsx(tmp_path / "half.xlsx", {"Activities": rows}))
    (p,) = problems
    assert p.code == "missing-column" and "Pessimistic" in p.message
