"""The template's Risks sheet: headers the reader knows, the example row it skips, the
checks on the probability cells (evaluated by LibreOffice), and a filled register that
reads. Read back with openpyxl."""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest
import xlsxwriter
from recalc import compare_recalculated, recalculate

from converter.read.risks import RISK_ALIASES
from converter.values import normalise
from converter.write.template import write_template
from converter.write.template_risks import PROBABILITY_RULE, RISK_COLUMNS


@pytest.fixture(scope="module")
def fresh(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("template") / "template.xlsx"
    write_template(path)
    return path


def test_risks_sheet_headers_example_and_checks(fresh):
    ws = openpyxl.load_workbook(fresh)["Risks"]
    heads = [c.value for c in ws[1] if c.value]
    assert heads == [h for h, _, _ in RISK_COLUMNS]
    assert all(normalise(h) in RISK_ALIASES for h in heads)  # every header is read
    assert ws["A2"].value.startswith("Example") and ws["A2"].font.i  # marked as an example
    rules = {str(dv.sqref): dv for dv in ws.data_validations.dataValidation}
    assert rules["C3:C202"].formula1 == "AND(ISNUMBER(C3),C3>0,C3<=100)"
    assert rules["H3:H202"].formula1 == "AND(ISNUMBER(H3),H3>0,H3<=100)"


def test_filled_register_reads_and_the_example_row_is_skipped(tmp_path, fresh):
    from converter.api import load

    wb = openpyxl.load_workbook(fresh)
    ws = wb["Activities"]
    for r, row in enumerate([("A3", "dig", None, 1, 2, 3), ("A4", "pour", "A3", 2, 3, 5)], 2):
        for c, v in enumerate(row, start=1):
            ws.cell(r, c).value = v
    wb["Risks"].append(["R1", "rain", 0.25, 1, 2, 4, "A3; A4"])
    # openpyxl appends below the formatted rows: move it up to row 3 instead
    risks = wb["Risks"]
    for c in range(1, 8):
        risks.cell(3, c).value = risks.cell(risks.max_row, c).value
        risks.cell(risks.max_row, c).value = None
    filled = tmp_path / "filled.xlsx"
    wb.save(filled)
    schedule, problems = load(filled)
    assert schedule is not None, "\n".join(map(str, problems))
    assert [r.id for r in schedule.risks] == ["R1"]  # the example row is not read


@pytest.mark.libreoffice
def test_probability_rule_evaluates_as_intended(tmp_path, soffice):
    # Outside check: LibreOffice evaluates the rule's formula on sample values
    path = tmp_path / "rule.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet()
    cases = [(0.3, True), (1, True), (30, True), (100, True), (0, False), (-0.1, False)]
    cases += [(150, False), ("x", False)]
    for r, (value, expected) in enumerate(cases):
        if isinstance(value, str):
            ws.write_string(r, 0, value)
        else:
            ws.write_number(r, 0, value)
        ws.write_formula(r, 1, "=" + PROBABILITY_RULE.format(c=f"A{r + 1}"), None, expected)
    wb.close()
    report = compare_recalculated(path, recalculate(path, tmp_path / "out", soffice=soffice))
    assert list(report) == [], "\n".join(report)
