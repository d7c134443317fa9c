"""Corpus cases: the risk register (Risks sheet) and the range classes (Ranges sheet).

Every text cell of both sheets with a formula-like payload, error values, absurd numbers
(1e308 as a probability, an impact or a percentage; negative percentages) and 32,767
characters of text. What must happen is worked out from the README ("The risk register",
"Ranges from a single duration") and the corpus's own rules (``hostile_text``): a text
that looks like a formula is read and written as the text it is; a number that cannot
be a probability (outside (0, 1]), an impact (beyond the 10,000,000 time units every
duration is held to) or a percentage of a duration (negative, or above 10,000: a hundred
times the duration) is refused at its own cell; an error value is refused at its cell.

Expected figures are worked by hand: the base rows' TE (``hostile_corpus.BASE_TE``), a
risk's expected delay p x (low + 4 likely + high) / 6 added to the TE of the activity it
hits (README, "Analytic view"; the PERT mean, Malcolm et al. 1959), and a range class's
TE = Duration x (low + 4 likely + high) / 600. Cells: header on row 1, the first risk or
class on row 2; Risks columns A to L as in ``RISK_HEADER``, Ranges columns A to D.
"""

from __future__ import annotations

from pathlib import Path

from hostile_corpus import BASE, BASE_TE, invalid, valid
from hostile_files import Error, Formula, write_xlsx
from hostile_text import PAYLOADS

RISK_HEADER = [
    "Risk",
    "Description",
    "Probability",
    "Impact low",
    "Impact likely",
    "Impact high",
    "Activities",
    "Mitigated probability",
    "Mitigated impact low",
    "Mitigated impact likely",
    "Mitigated impact high",
    "Group",
]
RANGE_HEADER = ["Range", "Low %", "Likely %", "High %"]
#: A formula-like payload with no "/" (a "/" in a class name marks inline percentages).
NO_SLASH = "=cmd|' -C calc'!A0"
HUGE = ("Long register text " * 1725)[:32755] + "end of 32767"  # 32,767 characters
#: T2's TE with one risk of probability 0.3 and impact 1 / 2 / 3 (mean 2): + 0.6.
T2_WITH_RISK = BASE_TE["T2"] + 0.3 * 2.0


def risk_row(**cells: object) -> list[object]:
    """One register row: risk R1 on T2, probability 0.3, impact 1 / 2 / 3, with ``cells``
    (by header, spaces as underscores) replaced."""
    row: dict[str, object] = dict.fromkeys(RISK_HEADER)
    row.update(
        {
            "Risk": "R1",
            "Description": "Utility strike",
            "Probability": 0.3,
            "Impact low": 1,
            "Impact likely": 2,
            "Impact high": 3,
            "Activities": "T2",
        }
    )
    for key, value in cells.items():
        row[key.replace("_", " ")] = value
    return list(row.values())


def with_risks(*rows: list[object]):
    def make(path: Path) -> Path:
        return write_xlsx(path, {"Plan": BASE, "Risks": [RISK_HEADER, *rows]})

    return make


def ranged_plan(range_cell: object = "Tight") -> list[list[object]]:
    """The base rows with Duration and Range columns (G, H): T1 is 10 units of ``range_cell``
    and has no O, M, P."""
    rows = [list(r) + [None, None] for r in BASE]
    rows[0][6:] = ["Duration", "Range"]
    rows[1][3:] = [None, None, None, 10, range_cell]
    return rows


def with_ranges(*classes: list[object], range_cell: object = "Tight"):
    def make(path: Path) -> Path:
        sheets = {"Plan": ranged_plan(range_cell)}
        if classes:
            sheets["Ranges"] = [RANGE_HEADER, *classes]
        return write_xlsx(path, sheets)

    return make


RISKS = [
    valid(
        "register-risk-payloads-in-text-cells",
        "plan.xlsx",
        with_risks(
            risk_row(
                Risk=PAYLOADS["dde-equals"],
                Description=PAYLOADS["hyperlink"],
                Group=PAYLOADS["webservice"],
            )
        ),
        {"T2": {"te": T2_WITH_RISK}},
        texts=(PAYLOADS["dde-equals"], PAYLOADS["hyperlink"], PAYLOADS["webservice"]),
    ),
    valid(
        "register-risk-formulas-read-by-value",
        "plan.xlsx",
        with_risks(
            risk_row(
                Description=Formula('HYPERLINK("http://example.invalid","x")', "Strike"),
                Probability=Formula("0.1+0.2", 0.3),
                Activities=Formula('"T"&"2"', "T2"),
            )
        ),
        {"T2": {"te": T2_WITH_RISK}},
    ),
    valid(
        "register-risk-32767-char-text",
        "plan.xlsx",
        with_risks(risk_row(Description=HUGE, Group=HUGE, Activities="T2; " * 6000 + "T2")),
        {"T2": {"te": T2_WITH_RISK}},  # T2 named 6,001 times is hit once
    ),
    invalid(
        "register-risk-payload-as-probability",
        "plan.xlsx",
        with_risks(risk_row(Probability=PAYLOADS["dde-equals"])),
        "Risks!C2",
        "not a plain number",
    ),
    invalid(
        "register-risk-payload-as-impact",
        "plan.xlsx",
        with_risks(risk_row(Impact_low=PAYLOADS["dde-at"], Mitigated_impact_high="+1+1")),
        "Risks!D2",
        "Risks!K2",
    ),
    invalid(
        "register-risk-payload-as-activity",
        "plan.xlsx",
        with_risks(risk_row(Activities=PAYLOADS["dde-equals"])),
        "Risks!G2",
        "unknown activity",
    ),
    invalid(
        "register-risk-error-values",
        "plan.xlsx",
        with_risks(
            risk_row(
                Description=Error("#N/A"),
                Probability=Error("#DIV/0!"),
                Impact_likely=Error("#REF!"),
                Mitigated_probability=Error("#VALUE!"),
            )
        ),
        "Risks!B2",
        "Risks!C2",
        "Risks!E2",
        "Risks!H2",
        "the Impact likely cell",  # the header as written, not an internal key
        "#REF!",
    ),
    invalid(
        "register-risk-1e308-everywhere",
        "plan.xlsx",
        with_risks(risk_row(Probability=1e308, Impact_low=1e308, Impact_likely=1e308)),
        "Risks!C2",
        "Risks!D2",
        "Risks!E2",
    ),
    invalid(
        "register-risk-1e308-percent-impact",
        "plan.xlsx",
        with_risks(risk_row(Impact_low="10%", Impact_likely="20%", Impact_high="1e308%")),
        "Risks!F2",
    ),
    invalid(
        "register-risk-negative-percentages",
        "plan.xlsx",
        with_risks(
            risk_row(
                Probability="-30%",
                Impact_low="-10%",
                Impact_likely="5%",
                Impact_high="10%",
                Mitigated_probability="-5%",
            )
        ),
        "Risks!C2",
        "Risks!D2",
        "Risks!H2",
    ),
]

RANGES = [
    valid(
        "register-range-payload-as-class-name",
        "plan.xlsx",
        with_ranges([NO_SLASH, 90, 100, 110], range_cell=NO_SLASH),
        {"T1": {"te": 10.0}},  # 10 x (90 + 400 + 110) / 600
        texts=(NO_SLASH,),
    ),
    valid(
        "register-range-32767-char-class-name",
        "plan.xlsx",
        with_ranges([HUGE, 80, 100, 150], range_cell=HUGE),
        {"T1": {"te": 10.5}},  # 10 x (80 + 400 + 150) / 600
    ),
    invalid(
        "register-range-payload-with-slash-as-class-name",
        "plan.xlsx",
        with_ranges([PAYLOADS["dde-equals"], 90, 100, 110], ["Tight", 90, 100, 110]),
        "Ranges!A2",
        "inline percentages",
    ),
    invalid(
        "register-range-payloads-as-percentages",
        "plan.xlsx",
        with_ranges(["Tight", PAYLOADS["dde-equals"], 100, PAYLOADS["dde-at"]]),
        "Ranges!B2",
        "Ranges!D2",
        "Tight",
    ),
    invalid(
        "register-range-error-values",
        "plan.xlsx",
        with_ranges(["Tight", Error("#N/A"), Error("#DIV/0!"), 110]),
        "Ranges!B2",
        "Ranges!C2",
        "#DIV/0!",
    ),
    invalid(
        "register-range-1e308-percentages",
        "plan.xlsx",
        with_ranges(["Tight", 90, 100, 1e308]),
        "Ranges!D2",
        "10,000",
    ),
    invalid(
        "register-range-negative-percentage",
        "plan.xlsx",
        with_ranges(["Tight", -90, 100, 110]),
        "Ranges!B2",
        "negative",
    ),
    invalid(
        "register-range-inline-1e308",
        "plan.xlsx",
        with_ranges(range_cell="1e308/1e308/1e308"),
        "Plan!H2",
        "T1",
        "10,000",
    ),
]

CASES = RISKS + RANGES
