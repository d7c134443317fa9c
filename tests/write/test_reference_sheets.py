"""The Health check, Method, Settings used, Input as read and Warnings sheets, read back.

Read with openpyxl (an independent reader; the converter writes with XlsxWriter) and
compared with the JSON summary. Outside references: the published sources the checks
cite (DCMA-EA PAM 200.1, October 2012; GAO-16-89G, December 2015: titles as given in the
project's brief, from memory); the layout rules (wrapped text fits, values apart, labels
at the top) are checked over every sheet by tests/write/test_pages.py.
"""

from __future__ import annotations

import json

import openpyxl
import pytest
from helpers import HEADER, write_xlsx

from converter.write.workbook.health import SHOWN

#: 12 chains of 3 activities, never joined: 11 extra starts, 11 extra ends, 11 groups
#: outside the largest (well over SHOWN offenders each).
CHAINS = 12


@pytest.fixture(scope="module")
def converted(tmp_path_factory):
    from converter.api import ConvertOptions, convert

    root = tmp_path_factory.mktemp("reference")
    rows = [HEADER]
    for c in range(CHAINS):
        for k in range(3):
            pred = f"C{c:02d}-{k - 1}" if k else None
            rows.append(
                [
                    f"C{c:02d}-{k}",
                    f"Step {k} of chain {c} with a long description that wraps in its column",
                    pred,
                    1,
                    2,
                    4,
                ]
            )
    source = write_xlsx(root / "chains.xlsx", {"Activities": rows})
    result = convert(source, ConvertOptions(json=True, simulate=False), outdir=root)
    assert result.ok, [str(p) for p in result.problems]
    data = json.loads(result.json_path.read_text(encoding="utf-8"))
    return openpyxl.load_workbook(result.workbook), data


def _column(ws, header: str) -> int:
    for row in ws.iter_rows(min_row=1, max_row=6):
        for cell in row:
            if cell.value == header:
                return cell.column
    raise AssertionError(f"no column {header!r} on {ws.title}")


def test_health_sheet_cites_published_sources_not_memory(converted):
    wb, _ = converted
    ws = wb["Health check"]
    texts = [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]
    assert not any("from memory" in t for t in texts)
    assert any("DCMA-EA PAM 200.1" in t and "October 2012" in t for t in texts)
    assert any("GAO-16-89G" in t and "December 2015" in t for t in texts)
    source = _column(ws, "Source")
    cited = [ws.cell(r, source).value for r in range(5, ws.max_row + 1)]
    assert any(v and v.startswith("DCMA 2012, check 1 (logic)") for v in cited)


def test_long_offender_lists_are_cut_in_the_table_and_given_in_full_below(converted):
    wb, data = converted
    ws = wb["Health check"]
    name_col, off_col = _column(ws, "Check"), _column(ws, "Offending activities or links")
    by_name = {c["name"]: c for c in data["checks"]}
    table = {
        ws.cell(r, name_col).value: ws.cell(r, off_col).value
        for r in range(5, ws.max_row + 1)
        if ws.cell(r, name_col).value in by_name
    }
    long = [n for n, c in by_name.items() if c["count"] > SHOWN]
    assert {"more than one start activity", "more than one end activity"} <= set(long)
    for name in long:
        shown = table[name].split("\n")[0]
        count = by_name[name]["count"]
        assert shown.endswith(f"and {count - SHOWN} more (all listed below the table)")
        assert shown.split(" and ")[0].split(", ") == by_name[name]["activities"][:SHOWN]
    # the block below: a labelled first row per check, continued on unlabelled rows
    listed: dict[str, str] = {}
    current = None
    for r in range(5, ws.max_row + 1):
        label, text = ws.cell(r, 1).value, ws.cell(r, 2).value
        if label == "Sources":
            break
        if isinstance(label, str) and label.endswith(")") and label.split(" (")[0] in long:
            current = label.split(" (")[0]
            listed[current] = text
        elif current and label in (None, "") and text:
            listed[current] += " " + text
    assert set(listed) == set(long)
    for name in long:
        assert listed[name].split(", ") == by_name[name]["activities"]


def test_input_as_read_values_sit_under_their_headers(converted):
    wb, _ = converted
    ws = wb["Input as read"]
    header_row = 3  # sheet row of the header (title, note, header)
    assert [ws.cell(header_row, c).value for c in range(1, 7)] == HEADER
    for r in range(header_row + 1, ws.max_row + 1):
        for c in range(1, 7):
            cell = ws.cell(r, c)
            if isinstance(cell.value, (int, float)):
                # left, like the header above it (common practice for a mixed table)
                assert cell.alignment.horizontal == "left", cell.coordinate
            elif isinstance(cell.value, str):
                assert cell.alignment.wrap_text, cell.coordinate


def test_method_labels_sit_at_the_top_and_link_types_is_a_paragraph(converted):
    wb, _ = converted
    ws = wb["Method"]
    labels = [ws.cell(r, 1) for r in range(2, ws.max_row + 1) if ws.cell(r, 1).value]
    assert [c.value for c in labels][:3] == ["Expected time", "Variance", "Link types"]
    assert all(c.alignment.vertical == "top" for c in labels)
    assert all(ws.cell(c.row, 2).value for c in labels)  # no label without its paragraph


def test_settings_values_are_left_aligned(converted):
    wb, _ = converted
    ws = wb["Settings used"]
    values = [ws.cell(r, 2) for r in range(5, 15) if ws.cell(r, 2).value is not None]
    assert any(isinstance(c.value, (int, float)) for c in values)
    assert all(c.alignment.horizontal == "left" for c in values)


def test_input_longer_than_a_sheet_goes_on_in_a_second_sheet(tmp_path, monkeypatch):
    """No input row is lost when the input has more rows than one sheet holds (1,048,576
    rows, the OOXML sheet limit): here the capacity is made 5 rows to show the rule."""
    from converter.api import ConvertOptions, convert
    from converter.write.workbook import reference

    monkeypatch.setattr(reference, "INPUT_ROWS_PER_SHEET", 5)
    rows = [HEADER] + [[f"A{i}", f"step {i}", "", 1, 2, 3] for i in range(1, 13)]
    rows[2][2] = "A1"
    src = write_xlsx(tmp_path / "long.xlsx", {"Activities": rows})
    result = convert(src, ConvertOptions(simulate=False), outdir=tmp_path / "out")
    assert result.ok, [str(p) for p in result.problems]
    wb = openpyxl.load_workbook(result.workbook, read_only=True)
    parts = ["Input as read", "Input as read (2)", "Input as read (3)"]
    assert [n for n in wb.sheetnames if n.startswith("Input as read")] == parts
    ids = [
        row[0]
        for name in parts
        for row in wb[name].iter_rows(min_row=4, values_only=True)
        if row and row[0] is not None
    ]
    assert ids == [f"A{i}" for i in range(1, 13)]
