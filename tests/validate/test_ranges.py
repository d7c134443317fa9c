"""Ranges from a single duration: Duration and Range columns, the Ranges sheet, the Default
range; every problem with its sheet and cell.

What is checked against what:
- each O / M / P is the duration times the class's percentage over 100, worked out by hand
  in the comment beside it (the rule the project's issue states: O = duration x low% / 100);
- the cell each problem names is worked out by hand from the invented rows written: the
  header on sheet row 1, so data row k is sheet row k + 1; columns A=ID, B=Description,
  C=Predecessors, D=Duration, E=Range on the activity sheet and A=Range, B=Low %,
  C=Likely %, D=High % on the Ranges sheet;
- header spellings, the sheet names, the setting label and the option are the ones the
  issue lists; the unit conversions (2w = 10 working days, 16h = 2 days of 8 hours) are
  common practice for a five-day week of eight-hour days.
Inputs are written with openpyxl or the csv module.
"""

from __future__ import annotations

import json

import pytest
from helpers import run_cli, write_csv, write_xlsx

from converter.api import ConvertOptions, convert, load
from converter.model import ERROR, WARNING

HEAD = ["ID", "Description", "Predecessors", "Duration", "Range"]
CLASSES = [
    ["Range", "Low %", "Likely %", "High %"],  # row 1
    ["Tight", 90, 100, 110],  # row 2
    ["Wide", 75, 110, 150],  # row 3
]


def run(path, **options):
    return load(path, ConvertOptions(simulate=False, **options))


def problems_of(problems, severity) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == severity}


def estimates(schedule) -> dict[str, tuple]:
    return {
        a.id: (a.optimistic, a.most_likely, a.pessimistic, a.range) for a in schedule.activities
    }


def book(tmp_path, rows, classes=CLASSES, settings=None, name="plan.xlsx", ranges="Ranges"):
    sheets = {"Activities": [HEAD, *rows]}
    if classes is not None:
        sheets[ranges] = classes
    if settings is not None:
        sheets["Settings"] = settings
    return write_xlsx(tmp_path / name, sheets)


# --------------------------------------------------------------------------- end to end
def test_durations_and_classes_only_convert_end_to_end(tmp_path):
    rows = [
        ["A", "Clear site", None, 10, "Tight"],  # row 2
        ["B", "Foundations", "A", 20, "Wide"],  # row 3
        ["C", "Services", "A", 8, "wide"],  # row 4: class names ignore case
        ["D", "Frame", "B, C", 12, "Tight"],  # row 5
    ]
    path = book(tmp_path, rows)
    result = convert(path, ConvertOptions(json=True, iterations=300), outdir=tmp_path / "out")
    assert result.ok, "\n".join(map(str, result.problems))
    sched, _ = run(path)
    assert estimates(sched) == {
        "A": (9.0, 10.0, 11.0, "Tight"),  # 10 x 90% = 9, 10 x 100% = 10, 10 x 110% = 11
        "B": (15.0, 22.0, 30.0, "Wide"),  # 20 x 75% = 15, 20 x 110% = 22, 20 x 150% = 30
        "C": (6.0, 8.8, 12.0, "Wide"),  # 8 x 75% = 6, 8 x 110% = 8.8, 8 x 150% = 12
        "D": (10.8, 12.0, 13.2, "Tight"),  # 12 x 90% = 10.8, 12, 12 x 110% = 13.2
    }
    assert [a.duration for a in sched.activities] == [10.0, 20.0, 8.0, 12.0]
    assert sched.activities[1].range_percent == (75.0, 110.0, 150.0)
    assert [(r.name, r.place) for r in sched.ranges] == [
        ("Tight", "Ranges!A2"),
        ("Wide", "Ranges!A3"),
    ]
    data = json.loads(result.json_path.read_text())
    assert [a["range"] for a in data["activities"]] == ["Tight", "Wide", "Wide", "Tight"]
    # TE = (O + 4M + P) / 6 (Malcolm et al. 1959): B (15 + 88 + 30) / 6 = 22.1666...
    te = {a["id"]: a["te"] for a in data["activities"]}
    assert te["B"] == pytest.approx(133 / 6, abs=1e-4)
    assert not [p for p in sched.warnings if p.code in ("deterministic", "fixed-durations")]


def test_duration_units_and_header_spellings(tmp_path):
    head = ["Task ID", "Planned duration", "Uncertainty", "Depends on"]
    rows = [
        head,
        ["A", "2w", "Tight", None],  # 2 weeks = 10 working days: 9 / 10 / 11
        ["B", "16h", "Tight", "A"],  # 16 h at 8 h a day = 2 days: 1.8 / 2 / 2.2
        ["C", "3 days", "Tight", "B"],  # 2.7 / 3 / 3.3
    ]
    path = write_xlsx(tmp_path / "units.xlsx", {"Tasks": rows, "Range classes": CLASSES})
    sched, problems = run(path)
    assert sched is not None, "\n".join(map(str, problems))
    assert [a.duration for a in sched.activities] == [10.0, 2.0, 3.0]
    assert estimates(sched)["B"] == (1.8, 2.0, 2.2, "Tight")  # 2 x 90 / 100 = 1.8 ...
    assert estimates(sched)["C"] == pytest.approx((2.7, 3.0, 3.3, "Tight"))
    alt = [["ID", "Baseline duration", "Range class", "Predecessors"], ["A", 5, "Wide", None]]
    sched, _ = run(write_xlsx(tmp_path / "alt.xlsx", {"Plan": alt, "Ranges": CLASSES}))
    assert estimates(sched)["A"] == (3.75, 5.5, 7.5, "Wide")  # 5 x 75/110/150 %


def test_duration_is_not_confused_with_other_columns(tmp_path):
    """A Target column and a "Target duration" column stay what they were: only the
    headers the issue lists are the Duration ("Remaining duration" is the status issue's
    Remaining column, tested with progress)."""
    head = ["ID", "Predecessors", "Target", "Target duration", "Notes", "Duration"]
    rows = [head, ["A", None, 30, 99, "n", 10]]
    sheets = {"Activities": rows, "Ranges": CLASSES}
    sched, problems = run(write_xlsx(tmp_path / "t.xlsx", sheets), default_range="Tight")
    assert sched is not None, "\n".join(map(str, problems))
    a = sched.activities[0]
    assert (a.duration, a.target, a.most_likely) == (10.0, 30.0, 10.0)
    assert sched.raw.headers[3:5] == ["Target duration", "Notes"]


def test_inline_ranges_xlsx_and_csv(tmp_path):
    rows = [
        ["A", "a", None, 10, "80/100/120"],  # 8 / 10 / 12
        ["B", "b", "A", 5, "80% / 100% / 150%"],  # 4 / 5 / 7.5
        ["C", "c", "B", 20, " 80 / 100 / 120 "],  # the same range as A: 16 / 20 / 24
    ]
    sched, problems = run(book(tmp_path, rows, classes=None))
    assert sched is not None, "\n".join(map(str, problems))
    assert estimates(sched) == {
        "A": (8.0, 10.0, 12.0, "80/100/120"),
        "B": (4.0, 5.0, 7.5, "80/100/150"),
        "C": (16.0, 20.0, 24.0, "80/100/120"),
    }
    # listed once each, with the cell where first typed (E2, E3)
    assert [(r.name, r.inline, r.place) for r in sched.ranges] == [
        ("80/100/120", True, "typed in Activities!E2"),
        ("80/100/150", True, "typed in Activities!E3"),
    ]
    csv_path = write_csv(tmp_path / "plan.csv", [HEAD, *rows])
    sched, problems = run(csv_path)
    assert sched is not None, "\n".join(map(str, problems))
    assert estimates(sched)["B"] == (4.0, 5.0, 7.5, "80/100/150")


# --------------------------------------------------------------------------- default range
def test_default_range_from_the_settings_sheet_and_the_option(tmp_path):
    rows = [
        ["A", "a", None, 10, None],  # takes the Default range
        ["B", "b", "A", 10, "Wide"],  # its own class wins over the default
    ]
    settings = [["Setting", "Value"], ["Default range", "Tight"]]  # B2
    path = book(tmp_path, rows, settings=settings)
    sched, _ = run(path)
    assert estimates(sched)["A"] == (9.0, 10.0, 11.0, "Tight")  # 10 x 90/100/110 %
    assert estimates(sched)["B"] == (7.5, 11.0, 15.0, "Wide")  # 10 x 75/110/150 %
    assert sched.settings.source_of("default_range") == "settings sheet (Settings!B2)"
    # the command line overrides the sheet; inline percentages serve as a default too
    sched, _ = run(path, default_range="Wide")
    assert estimates(sched)["A"] == (7.5, 11.0, 15.0, "Wide")
    assert sched.settings.source_of("default_range") == "command line"
    sched, _ = run(path, default_range="50/100/200")
    assert estimates(sched)["A"] == (5.0, 10.0, 20.0, "50/100/200")
    assert sched.ranges[0].place == "Default range (--default-range)"


def test_default_range_on_the_command_line(tmp_path):
    path = book(tmp_path, [["A", "a", None, 10, None]])
    out = tmp_path / "out"
    done = run_cli("convert", path, "--default-range", "Wide", "--json", "--iterations", "100",
                   "--outdir", out)  # fmt: skip
    assert done.returncode == 0, done.stderr
    data = json.loads((out / "plan.analysis.json").read_text())
    assert data["activities"][0]["range"] == "Wide"
    bad = run_cli("convert", path, "--default-range", "Nope", "--outdir", out)
    assert bad.returncode == 2 and "Nope" in bad.stdout + bad.stderr


def test_without_a_default_a_bare_duration_is_fixed_with_a_warning(tmp_path):
    rows = [["A", "a", None, 10, None], ["B", "b", "A", 0, None]]  # B: a milestone
    sched, problems = run(book(tmp_path, rows))
    assert estimates(sched) == {"A": (10.0, 10.0, 10.0, None), "B": (0.0, 0.0, 0.0, None)}
    assert problems_of(problems, WARNING) >= {("deterministic", "Activities", "D2", "A")}
    assert ("deterministic", "Activities", "D3", "B") not in problems_of(problems, WARNING)
    assert sched.ranges == []


# --------------------------------------------------------------------------- O/M/P win
def test_explicit_estimates_win_over_a_range(tmp_path):
    head = ["ID", "Predecessors", "Optimistic", "Most likely", "Pessimistic", "Duration", "Range"]
    rows = [
        head,
        ["A", None, 1, 2, 3, 10, "Wide"],  # row 2: O/M/P given -> used; warning at G2
        ["B", "A", None, None, None, 10, "Wide"],  # row 3: blank O/M/P -> 7.5 / 11 / 15
        ["C", "B", 4, 5, 6, 10, None],  # row 4: O/M/P and a bare duration: no warning
    ]
    path = write_xlsx(tmp_path / "mixed.xlsx", {"Activities": rows, "Ranges": CLASSES})
    sched, problems = run(path, default_range="Tight")
    assert estimates(sched) == {
        "A": (1.0, 2.0, 3.0, None),
        "B": (7.5, 11.0, 15.0, "Wide"),  # 10 x 75/110/150 %
        "C": (4.0, 5.0, 6.0, None),
    }
    assert sched.activities[0].duration == 10.0  # the duration as read is kept
    assert problems_of(problems, WARNING) == {("range-not-used", "Activities", "G2", "A")}


# --------------------------------------------------------------------------- problems
def test_every_ranges_sheet_problem_names_its_cell(tmp_path):
    classes = [
        ["Range", "Low %", "Likely %", "High %"],  # row 1
        ["Tight", 90, 100, 110],  # row 2: fine
        ["tight", 80, 100, 120],  # row 3: duplicate name -> A3
        ["Odd", "ninety", 100, 110],  # row 4: not a number -> B4
        ["Neg", -5, 100, 110],  # row 5: negative -> B5
        ["Gap", 90, None, 110],  # row 6: blank -> C6
        ["Back", 90, 80, 110],  # row 7: Likely < Low -> C7
        ["Down", 90, 100, 95],  # row 8: High < Likely -> D8
        ["Frac", 0.9, 1, 1.2],  # row 9: fractions, not percents -> D9
        [None, 90, 100, 110],  # row 10: no name -> A10
        ["A/B", 90, 100, 110],  # row 11: a slash marks inline percentages -> A11
        ["Pct", "90%", "100%", "120%"],  # row 12: fine, 90 / 100 / 120
    ]
    rows = [["A", "a", None, 10, "Tight"], ["B", "b", "A", 10, "Pct"]]
    _, problems = run(book(tmp_path, rows, classes=classes))
    assert problems_of(problems, ERROR) == {
        ("range-duplicate", "Ranges", "A3", None),
        ("range-not-a-number", "Ranges", "B4", None),
        ("range-negative", "Ranges", "B5", None),
        ("range-missing-percent", "Ranges", "C6", None),
        ("range-order", "Ranges", "C7", None),
        ("range-order", "Ranges", "D8", None),
        ("range-fraction", "Ranges", "D9", None),
        ("range-blank-name", "Ranges", "A10", None),
        ("range-name-slash", "Ranges", "A11", None),
    }
    dup = next(p for p in problems if p.code == "range-duplicate")
    assert "row 2" in dup.message  # where the first one is
    good = [r for r in classes[1:] if r[0] in ("Tight", "Pct")]
    sched, _ = run(book(tmp_path, rows, classes=[classes[0], *good], name="ok.xlsx"))
    assert estimates(sched)["B"] == (9.0, 10.0, 12.0, "Pct")  # 10 x 90/100/120 %


def test_every_activity_range_problem_names_its_cell(tmp_path):
    rows = [
        ["A", "a", None, 10, "Tight"],  # row 2: fine
        ["B", "b", "A", 10, "Medium"],  # row 3: unknown class -> E3
        ["C", "c", "A", 10, "120/100/80"],  # row 4: inline out of order -> E4
        ["D", "d", "A", 10, "80/100"],  # row 5: two numbers -> E5
        ["E", "e", "A", "2 months", "Tight"],  # row 6: months refused -> D6
        ["F", "f", "A", -3, "Tight"],  # row 7: negative duration -> D7
        ["G", "g", "A", "soon", None],  # row 8: not a duration -> D8
        ["H", "h", "A", None, "Tight"],  # row 9: a range but no duration -> D9
        ["I", "i", "A", 10, "-10/100/120"],  # row 10: negative percent -> E10
    ]
    sched, problems = run(book(tmp_path, rows))
    assert sched is None
    assert problems_of(problems, ERROR) == {
        ("unknown-range", "Activities", "E3", "B"),
        ("bad-range", "Activities", "E4", "C"),
        ("bad-range", "Activities", "E5", "D"),
        ("not-a-number", "Activities", "D6", "E"),
        ("negative-estimate", "Activities", "D7", "F"),
        ("not-a-number", "Activities", "D8", "G"),
        ("no-estimates", "Activities", "D9", "H"),
        ("bad-range", "Activities", "E10", "I"),
    }
    unknown = next(p for p in problems if p.code == "unknown-range")
    assert "Tight, Wide" in unknown.message  # the classes that are defined


def test_default_range_problems_name_the_setting(tmp_path):
    settings = [["Setting", "Value"], ["Default range", "Medium"]]  # -> Settings!B2
    path = book(tmp_path, [["A", "a", None, 10, None]], settings=settings)
    _, problems = run(path)
    assert problems_of(problems, ERROR) == {("unknown-range", "Settings", "B2", None)}
    _, problems = run(path, default_range="100/90/80")  # the option: no cell to name
    assert problems_of(problems, ERROR) == {("bad-range", None, None, None)}
    assert "Default range" in next(p for p in problems if p.code == "bad-range").message


def test_a_ranges_sheet_without_its_headers_is_a_problem(tmp_path):
    classes = [["Class", "From", "To"], ["Tight", 90, 110]]
    _, problems = run(book(tmp_path, [["A", "a", None, 10, "Tight"]], classes=classes))
    assert problems_of(problems, ERROR) == {
        ("ranges-columns", "Ranges", "A1", None),
        ("unknown-range", "Activities", "E2", "A"),
    }


def test_a_duration_sheet_needs_a_duration_on_each_row(tmp_path):
    """Without O/M/P columns the Duration is what the row has; a blank one is a problem,
    and the sheet-wide fixed-durations warning is not given."""
    rows = [["A", "a", None, 10, "Tight"], ["B", "b", "A", None, None]]  # B: D3 blank
    sched, problems = run(book(tmp_path, rows))
    assert sched is None
    assert problems_of(problems, ERROR) == {("no-estimates", "Activities", "D3", "B")}
    assert not [p for p in problems if p.code == "fixed-durations"]


def test_the_ranges_sheet_is_neither_the_activity_list_nor_a_links_sheet(tmp_path):
    classes = [
        ["Range", "Low %", "Likely %", "High %", "Description"],
        ["Tight", 90, 100, 110, "x"],
    ]
    path = book(tmp_path, [["A", "a", None, 10, "Tight"]], classes=classes)
    sched, problems = run(path)
    assert sched is not None, "\n".join(map(str, problems))
    assert sched.sheet == "Activities"
    assert "Range classes sheet: Ranges." in sched.notes


def test_unused_classes_are_a_note(tmp_path):
    sched, _ = run(book(tmp_path, [["A", "a", None, 10, "Tight"]]))
    assert "Range classes defined on Ranges but used by no activity: Wide." in sched.notes


def test_error_values_in_range_cells_are_named(tmp_path):
    """A failed formula (#N/A, #DIV/0!) in a Ranges cell, a Duration or a Range cell is an
    error naming that cell, and nothing else is said about the row."""
    import openpyxl

    rows = [["A", "a", None, 10, "Tight"], ["B", "b", "A", 10, "Wide"]]
    path = book(tmp_path, rows)
    wb = openpyxl.load_workbook(path)
    for sheet, ref, code in (
        ("Ranges", "C3", "#DIV/0!"),  # Wide's Likely %
        ("Ranges", "A2", "#N/A"),  # Tight's name
        ("Activities", "D2", "#VALUE!"),  # A's Duration
    ):
        wb[sheet][ref] = code
        wb[sheet][ref].data_type = "e"  # an error cell, as a failed formula leaves it
    wb.save(path)
    sched, problems = run(path)
    assert sched is None
    assert problems_of(problems, ERROR) == {
        ("error-value", "Ranges", "C3", None),
        ("error-value", "Ranges", "A2", None),
        ("error-value", "Activities", "D2", "A"),
    }  # B names Wide, refused for its C3: no second message
