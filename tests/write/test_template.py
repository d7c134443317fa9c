"""The fill-in template: structure (read back with openpyxl), validation rules (evaluated
by LibreOffice), the committed copy, and that a filled-in template reads and converts."""

from __future__ import annotations

import datetime as dt
import itertools
from pathlib import Path

import openpyxl
import pytest
import xlsxwriter
from recalc import compare_recalculated, recalculate

from converter.write.template import (
    COLUMNS,
    MOST_LIKELY_RULE,
    PESSIMISTIC_RULE,
    ROWS,
    write_template,
)

COMMITTED = Path(__file__).resolve().parents[2] / "templates" / "pertbook-template.xlsx"
HEADERS = [
    "ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic",
    "Distribution", "Group", "Target", "Duration", "Range",
]  # fmt: skip


@pytest.fixture(scope="module")
def fresh(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("template") / "template.xlsx"
    write_template(path)
    return path


def _validations(ws) -> dict[str, object]:
    return {str(dv.sqref): dv for dv in ws.data_validations.dataValidation}


def test_activity_sheet_layout(fresh):
    wb = openpyxl.load_workbook(fresh)
    assert wb.sheetnames == ["Activities", "Settings", "Ranges", "Risks", "Instructions"]
    ws = wb["Activities"]
    assert [c.value for c in ws[1]] == HEADERS
    assert all(c.font.b for c in ws[1])
    assert ws.freeze_panes == "A2"
    assert ws.max_row == ROWS + 1 >= 501
    assert ws.cell(ROWS + 1, 4).number_format == "0.##"  # last input row is formatted
    assert ws.cell(2, 9).number_format == "yyyy-mm-dd"
    assert ws.cell(2, 1).number_format == "@"  # IDs stay text (e.g. 1-2 is not a date)
    prompts = {str(dv.sqref): dv.prompt for dv in ws.data_validations.dataValidation if dv.prompt}
    assert set(prompts) == {f"{chr(65 + i)}1" for i in range(len(HEADERS))}
    assert all(0 < len(p) <= 255 for p in prompts.values())  # Excel's input message limit


def test_estimate_validations_present(fresh):
    dvs = _validations(openpyxl.load_workbook(fresh)["Activities"])
    last = ROWS + 1
    o = dvs[f"D2:D{last}"]
    assert (o.type, o.operator, o.formula1) == ("decimal", "greaterThanOrEqual", "0")
    m = dvs[f"E2:E{last}"]
    assert m.type == "custom" and m.formula1 == MOST_LIKELY_RULE.format(o="D2", m="E2", p="F2")
    p = dvs[f"F2:F{last}"]
    assert p.type == "custom" and p.formula1 == PESSIMISTIC_RULE.format(o="D2", m="E2", p="F2")
    dist = dvs[f"G2:G{last}"]
    assert dist.type == "list" and dist.formula1 == '"pert,triangular,uniform"'
    for dv in (o, m, p, dist):
        assert dv.showErrorMessage and dv.error


def test_settings_defaults():
    wb = openpyxl.load_workbook(COMMITTED)
    ws = wb["Settings"]
    values = {r[0].value: r[1].value for r in ws.iter_rows(min_row=2) if r[0].value}
    assert values == {
        "Start date": None, "Time unit": "working days", "Working days": "Mon-Fri",
        "Hours per day": 8,
        "Due date": None, "Iterations": 10000, "Seed": 20240611, "Distribution": "pert",
        "Correlation": 0, "Confidence levels": "50%, 80%, 90%, 95%", "Paths": 10,
        "Default range": None, "Holidays": None,
    }  # fmt: skip
    assert all(r[2].value for r in ws.iter_rows(min_row=2) if r[0].value)  # every row noted
    dvs = _validations(ws)
    unit = next(dv for dv in dvs.values() if dv.type == "list" and "weeks" in dv.formula1)
    assert unit.formula1 == '"working days,weeks,calendar days,working hours"'
    text = " ".join(str(c.value) for c in wb["Instructions"]["A"] if c.value)
    for token in ("A3[+2]", "A3[-1]", "A3[SS]", "A3[SS+3]", "A3[FF-1]", "A3[SF]", "Links"):
        assert token in text
    assert "competent professional" in text and "not promises" in text


def test_committed_template_equals_a_fresh_one(fresh):
    old = openpyxl.load_workbook(COMMITTED)
    new = openpyxl.load_workbook(fresh)
    assert old.sheetnames == new.sheetnames
    for name in new.sheetnames:
        a, b = old[name], new[name]
        assert (a.max_row, a.max_column) == (b.max_row, b.max_column), name
        for ra, rb in zip(a.iter_rows(), b.iter_rows(), strict=True):
            for ca, cb in zip(ra, rb, strict=True):
                assert (ca.value, ca.number_format) == (cb.value, cb.number_format), (
                    f"{name}!{ca.coordinate}: regenerate templates/pertbook-template.xlsx "
                    "with converter.write.template.write_template"
                )
        da = {(k, v.type, v.formula1, v.formula2, v.prompt) for k, v in _validations(a).items()}
        db = {(k, v.type, v.formula1, v.formula2, v.prompt) for k, v in _validations(b).items()}
        assert da == db, name
    assert old.properties.created == new.properties.created == dt.datetime(2024, 1, 1)


def test_write_template_is_deterministic(tmp_path, fresh):
    again = tmp_path / "again.xlsx"
    write_template(again)
    assert again.read_bytes() == fresh.read_bytes()


@pytest.mark.libreoffice
def test_estimate_rules_evaluate_as_intended(tmp_path, soffice):
    """LibreOffice evaluates the two custom rules over a grid of O, M, P (blank allowed).

    Expected: a value passes when it is a number >= 0 and keeps O <= M <= P with the
    other estimates that are filled in (the rule stated in the template's messages).
    """
    src = tmp_path / "rules.xlsx"
    wb = xlsxwriter.Workbook(src)
    ws = wb.add_worksheet("Rules")
    grid = [None, 0, 2, 5, 9]
    r = 0
    for o, m, p in itertools.product(grid, repeat=3):
        if m is None and p is None:
            continue
        row = r + 1
        for c, v in enumerate((o, m, p)):
            if v is not None:
                ws.write_number(r, c, v)
        known = [x for x in (o,) if x is not None]
        if m is not None:
            ok_m = m >= 0 and all(m >= x for x in known) and (p is None or m <= p)
            rule = MOST_LIKELY_RULE.format(o=f"A{row}", m=f"B{row}", p=f"C{row}")
            ws.write_formula(r, 3, "=" + rule, None, ok_m)
        if p is not None:
            ok_p = p >= 0 and all(p >= x for x in known) and (m is None or p >= m)
            rule = PESSIMISTIC_RULE.format(o=f"A{row}", m=f"B{row}", p=f"C{row}")
            ws.write_formula(r, 4, "=" + rule, None, ok_p)
        r += 1
    wb.close()
    report = compare_recalculated(src, recalculate(src, tmp_path / "out", soffice=soffice))
    assert report.compared > 150
    assert list(report) == []


def _fill(template: Path, target: Path) -> None:
    wb = openpyxl.load_workbook(template)
    ws = wb["Activities"]
    rows = [
        ("A1", "Strip out existing fittings", None, 2, 3, 5, None, "crew", None),
        ("A2", "First-fix wiring", "A1[SS+1]", 4, 5, 9, "triangular", "crew", None),
        ("A3", "Plaster and make good", "A2", 3, 4, 7, None, None, None),
        ("B+1", "Client sign-off", "A1, A3[FF-1]", 0, 0, 0, None, None, dt.date(2027, 3, 22)),
    ]
    for r, row in enumerate(rows, start=2):
        for c, v in enumerate(row, start=1):
            ws.cell(r, c).value = v
    st = wb["Settings"]
    st["B2"] = dt.date(2027, 3, 1)  # Start date
    holidays = next(c.row for c in st["A"] if c.value == "Holidays")
    st.cell(holidays, 2).value = dt.date(2027, 3, 12)  # its row and the blank-labelled one
    st.cell(holidays + 1, 2).value = dt.date(2027, 3, 15)
    wb.save(target)


def test_filled_template_reads(tmp_path, fresh):
    from converter.api import load

    filled = tmp_path / "filled.xlsx"
    _fill(fresh, filled)
    sched, problems = load(filled)
    assert sched is not None, "\n".join(map(str, problems))
    assert not [p for p in problems if p.severity == "error"]
    assert not [p for p in problems if p.code == "unknown-setting"]
    assert [a.id for a in sched.activities] == ["A1", "A2", "A3", "B+1"]
    assert {(k.pred, k.succ, k.type, k.lag) for k in sched.links} == {
        ("A1", "A2", "SS", 1.0), ("A2", "A3", "FS", 0.0),
        ("A1", "B+1", "FS", 0.0), ("A3", "B+1", "FF", -1.0),
    }  # fmt: skip
    s = sched.settings
    assert s.start_date == dt.date(2027, 3, 1)
    assert s.holidays == (dt.date(2027, 3, 12), dt.date(2027, 3, 15))
    assert (s.iterations, s.seed, s.paths, s.distribution) == (10000, 20240611, 10, "pert")
    assert s.confidence_levels == (0.5, 0.8, 0.9, 0.95)
    assert s.source_of("seed").startswith("settings sheet")


def test_filled_template_converts(tmp_path, fresh, convert_api):
    convert, ConvertOptions = convert_api
    filled = tmp_path / "filled.xlsx"
    _fill(fresh, filled)
    before = filled.read_bytes()
    result = convert(filled, ConvertOptions(json=True, iterations=500), outdir=tmp_path / "out")
    assert result.ok, "\n".join(map(str, result.problems))
    assert result.workbook is not None and result.workbook.is_file()
    assert openpyxl.load_workbook(result.workbook, read_only=True).sheetnames
    assert filled.read_bytes() == before  # the input is only read


def test_columns_table_matches_headers():
    assert [c[0] for c in COLUMNS] == HEADERS


@pytest.mark.libreoffice
def test_template_opens_in_libreoffice(tmp_path, fresh, soffice):
    """LibreOffice loads and re-saves the template (a proxy for 'opens without repair')."""
    out = recalculate(fresh, tmp_path / "out", soffice=soffice)
    wb = openpyxl.load_workbook(out)
    assert wb.sheetnames == ["Activities", "Settings", "Ranges", "Risks", "Instructions"]
    assert [c.value for c in wb["Activities"][1]] == HEADERS
    kinds = {dv.type for dv in wb["Activities"].data_validations.dataValidation}
    assert {"decimal", "custom", "list"} <= kinds


# --------------------------------------------------------------------------- ranges
def test_ranges_sheet_holds_example_classes_marked_as_examples(fresh):
    """The Ranges sheet's classes are read back as the template wrote them, each marked
    as an example to replace; its percent cells are checked (0 or more)."""
    from converter.write.template import EXAMPLE_RANGES, RANGE_ROWS

    ws = openpyxl.load_workbook(fresh)["Ranges"]
    assert "replace" in ws["A1"].value and "EXAMPLES" in ws["A2"].value
    assert [c.value for c in ws[4]] == ["Range", "Low %", "Likely %", "High %", "Note"]
    rows = [tuple(c.value for c in r[:4]) for r in ws.iter_rows(min_row=5) if r[0].value]
    assert rows == list(EXAMPLE_RANGES)
    assert all(ws.cell(5 + k, 5).value.startswith("Example") for k in range(len(rows)))
    assert all(low <= likely <= high for _, low, likely, high in rows)  # common practice
    dv = _validations(ws)[f"B5:D{4 + RANGE_ROWS}"]
    assert (dv.type, dv.operator, dv.formula1) == ("decimal", "greaterThanOrEqual", "0")


def test_empty_template_is_refused_only_for_its_empty_rows(tmp_path, fresh):
    """As before the Ranges sheet: the blank template has no activities, and that is the
    only problem (its example classes, used by nothing, are a note)."""
    from converter.api import load

    sched, problems = load(fresh)
    assert sched is None
    assert [(p.code, p.where) for p in problems] == [("empty", "Activities!A2")]


def test_template_filled_with_durations_and_ranges_converts(tmp_path, fresh, convert_api):
    """A template filled in with Durations and the example classes only (no O/M/P):
    the estimates are the percentages applied by hand (hand arithmetic beside each)."""
    from converter.api import load

    convert, ConvertOptions = convert_api
    wb = openpyxl.load_workbook(fresh)
    ws = wb["Activities"]
    rows = [  # J = Duration, K = Range
        ("S1", "Survey", None, "10", "Medium"),
        ("S2", "Design", "S1", "2w", "High"),
        ("S3", "Review", "S2", 4, "80/100/150"),
        ("S4", "Handover", "S3", 2, None),  # the Default range: Low
    ]
    for r, (ident, name, pred, dur, rng) in enumerate(rows, start=2):
        ws.cell(r, 1).value, ws.cell(r, 2).value, ws.cell(r, 3).value = ident, name, pred
        ws.cell(r, 10).value, ws.cell(r, 11).value = dur, rng
    st = wb["Settings"]
    st.cell(next(c.row for c in st["A"] if c.value == "Default range"), 2).value = "Low"
    filled = tmp_path / "durations.xlsx"
    wb.save(filled)
    sched, problems = load(filled)
    assert sched is not None, "\n".join(map(str, problems))
    got = {a.id: (a.optimistic, a.most_likely, a.pessimistic, a.range) for a in sched.activities}
    assert got == {
        "S1": (9.0, 10.0, 12.5, "Medium"),  # 10 x 90/100/125 %
        "S2": (8.0, 10.5, 15.0, "High"),  # 2w = 10 working days; 10 x 80/105/150 %
        "S3": (3.2, 4.0, 6.0, "80/100/150"),  # 4 x 80/100/150 %
        "S4": (1.9, 2.0, 2.2, "Low"),  # 2 x 95/100/110 %
    }
    result = convert(filled, ConvertOptions(json=True, iterations=200), outdir=tmp_path / "out")
    assert result.ok, "\n".join(map(str, result.problems))
