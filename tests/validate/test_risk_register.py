"""Reading the risk register: values, and every problem with its cell.

The expected cells are worked out by hand from the invented rows written (header on row 1,
so data row k is sheet row k + 1; risk columns A=Risk, B=Probability, C=Impact low,
D=Impact likely, E=Impact high, F=Activities, G=Group). Inputs are written with openpyxl.
"""

from __future__ import annotations

import pytest
from helpers import HEADER, write_xlsx

from converter.api import ConvertOptions, load
from converter.model import ERROR
from converter.validate.risks import parse_probability

RISK_HEADER = ["Risk", "Probability", "Impact low", "Impact likely", "Impact high", "Activities"]
ACTIVITIES = [HEADER, ["A", "a", None, 1, 2, 3], ["B", "b", "A", 2, 4, 9]]


def run(path):
    return load(path, ConvertOptions(simulate=False))


def errors(problems) -> set[tuple]:
    return {(p.code, p.sheet, p.cell, p.activity) for p in problems if p.severity == ERROR}


def register(tmp_path, rows, header=RISK_HEADER, name="Risks"):
    sheets = {"Activities": ACTIVITIES, name: [header, *rows]}
    return write_xlsx(tmp_path / "risks.xlsx", sheets)


def test_register_is_read_with_units_percentages_and_groups(tmp_path):
    header = [*RISK_HEADER, "Group", "Description", "Mitigated probability"]
    rows = [
        ["R1", "30%", 1, 2, "1w", "A, B", "G1", "ground", 0.1],  # 1w = 5 working days
        ["R2", 30, "10%", "20%", "40%", "B", "G1", None, 10],  # 30 read as 30%
        ["R3", 1, None, "16h", None, "A", None, None, None],  # fixed, 16h = 2 days
    ]
    schedule, problems = run(register(tmp_path, rows, header, "Risk register"))
    assert not [p for p in problems if p.severity == ERROR], problems
    r1, r2, r3 = schedule.risks
    assert (r1.probability, r1.low, r1.likely, r1.high, r1.activities) == (
        0.3,
        1.0,
        2.0,
        5.0,
        ("A", "B"),
    )
    assert (r1.group, r1.description, r1.mitigated_probability) == ("G1", "ground", 0.1)
    assert r2.percent and (r2.low, r2.likely, r2.high) == pytest.approx((0.1, 0.2, 0.4))
    assert (r3.low, r3.likely, r3.high, r3.probability) == (2.0, 2.0, 2.0, 1.0)
    assert schedule.sheet == "Activities" and schedule.risk_sheet == "Risk register"


def test_every_register_problem_names_its_cell(tmp_path):
    header = [*RISK_HEADER, "Group"]
    rows = [
        ["R1", 0, 1, 2, 3, "A", None],  # row 2: probability 0 -> B2
        ["R2", 1.5, 1, 2, 3, "A", None],  # row 3: 1.5 -> 1.5% (fine)
        ["R3", "120%", 1, 2, 3, "A", None],  # row 4: above 100% -> B4
        ["R4", 0.2, 3, 2, 1, "A", None],  # row 5: low > likely -> C5
        ["R5", 0.2, 1, "20%", 3, "A", None],  # row 6: mixed % and units -> D6
        ["R6", 0.2, 1, 2, 3, "A; Z", None],  # row 7: unknown activity -> F7
        ["R7", 0.2, 1, 2, 3, None, None],  # row 8: no activities -> F8
        ["R1", 0.2, 1, 2, 3, "A", None],  # row 9: duplicate ID -> A9
        [None, 0.2, 1, 2, 3, "A", None],  # row 10: no ID -> A10
        ["R8", 0.2, 1, "2 months", 3, "A", None],  # row 11: months refused -> D11
        ["R9", 0.2, 1, 2, 3, "A", "G"],  # row 12: group G, p 0.2
        ["R10", 0.3, 1, 2, 3, "B", "G"],  # row 13: same group, other p -> B13
    ]
    _, problems = run(register(tmp_path, rows, header))
    assert errors(problems) == {
        ("risk-probability", "Risks", "B2", "R1"),
        ("risk-probability", "Risks", "B4", "R3"),
        ("risk-impact-order", "Risks", "C5", "R4"),
        ("risk-impact-mixed", "Risks", "D6", "R5"),
        ("risk-unknown-activity", "Risks", "F7", "R6"),
        ("risk-no-activities", "Risks", "F8", "R7"),
        ("risk-duplicate-id", "Risks", "A9", "R1"),
        ("risk-blank-id", "Risks", "A10", None),
        ("risk-impact", "Risks", "D11", "R8"),
        ("risk-group-probability", "Risks", "B13", "R10"),
    }


def test_without_a_register_there_are_no_risks(tmp_path):
    schedule, _ = run(write_xlsx(tmp_path / "plain.xlsx", {"Activities": ACTIVITIES}))
    assert schedule.risks == [] and schedule.risk_sheet is None


@pytest.mark.parametrize(
    ("cell", "expected"), [(0.25, 0.25), ("25%", 0.25), (25, 0.25), (1, 1.0), ("100%", 1.0)]
)
def test_probability_spellings(cell, expected):
    # the rule: 0-1, a percentage, or a number above 1 read as percent
    assert parse_probability(cell) == pytest.approx(expected)
