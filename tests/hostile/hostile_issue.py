"""Corpus cases: the examples of the project's issue "Hostile and messy input" itself.

Each is named ``issue-...`` and built as the issue describes it; what pertbook must make of
it is what the issue requires (refused with exit 2 and a message naming the limit or the
cell, or read as written). The rest of the corpus goes beyond these.
"""

from __future__ import annotations

import codecs
import datetime as dt
from pathlib import Path

from hostile_corpus import BASE, BASE_TE, HEADER, invalid, replaced, rows_with, valid, write_csv
from hostile_files import Error, Formula, sheet_xml, write_xlsx
from hostile_structure import MB, SHEET, base_xlsx, bomb_xlsx, sheet_with

READ = {"T1": {"te": BASE_TE["T1"]}, "T4": {"te": BASE_TE["T4"]}}
FAR = '<row r="{row}"><c r="{ref}"><v>1</v></c></row>'


def stray(ref: str, row: int):
    def make(path: Path) -> Path:
        return base_xlsx(path, change={SHEET: sheet_with(FAR.format(row=row, ref=ref)).encode()})

    return make


def book(rows, **sheets):
    def make(path: Path) -> Path:
        return write_xlsx(path, {"Plan": rows, **sheets})

    return make


def start(day: dt.date):
    return [["Setting", "Value"], ["Start date", day]]


def every_estimate(value: object) -> list[list[object]]:
    rows = [list(r) for r in BASE]
    for row in rows[1:]:
        row[3:6] = [value, value, value]
    return rows


def cells_bomb(path: Path) -> Path:
    """A sheet that unpacks to 3 GB of cells, from about 3 MB."""
    head = sheet_xml(BASE).replace("</sheetData></worksheet>", "").encode()
    row = b'<row><c t="inlineStr"><is><t>x</t></is></c><c><v>1</v></c></row>'
    return bomb_xlsx(path, SHEET, head, row * (MB // len(row)), 3072, b"</sheetData></worksheet>")


def padded_bomb(path: Path) -> Path:
    """A sheet padded with 3 GB of whitespace."""
    head = sheet_xml(BASE).replace("</sheetData></worksheet>", "").encode()
    return bomb_xlsx(path, SHEET, head, b" " * MB, 3072, b"</sheetData></worksheet>")


def header_on_row_34(path: Path) -> Path:
    rows = [["Project X schedule"]] + [[None]] * 32 + [list(r) for r in BASE]
    return write_xlsx(path, {"Plan": rows})


DATE_TIME = dt.datetime(2024, 1, 2, 10, 30)

CASES = [
    invalid(
        "issue-stray-cell-XFD1048576",
        "plan.xlsx",
        stray("XFD1048576", 1048576),
        "Plan!XFD1048576",
        "300,000",
        resource=True,
    ),
    invalid(
        "issue-stray-cell-ZZZZZ99999999",
        "plan.xlsx",
        stray("ZZZZZ99999999", 99999999),
        "ZZZZZ99999999",
        "limit",
        resource=True,
    ),
    invalid(
        "issue-stray-cell-XFD12000",
        "plan.xlsx",
        stray("XFD12000", 12000),
        "Plan!XFD12000",
        "1,000",
        resource=True,
    ),
    invalid(
        "issue-3mb-sheet-of-3gb-cells", "plan.xlsx", cells_bomb, "plan.xlsx", "limit", resource=True
    ),
    invalid(
        "issue-3gb-whitespace-padding",
        "plan.xlsx",
        padded_bomb,
        "plan.xlsx",
        "limit",
        resource=True,
    ),
    invalid(
        "issue-activity-on-row-1048576",
        "plan.xlsx",
        stray("A1048576", 1048576),
        "Plan!A1048576",
        "limit",
        resource=True,
    ),
    invalid("issue-1e308-estimates", "plan.xlsx", book(every_estimate(1e308)), "Plan!D2", "T1"),
    invalid("issue-1e155-pessimistic", "plan.xlsx", book(replaced(3, 5, 1e155)), "Plan!F3", "T2"),
    invalid(
        "issue-1e308-lag-on-links-sheet",
        "plan.xlsx",
        book(
            [r[:2] + [None] + r[3:] for r in BASE],
            Links=[["Predecessor", "Successor", "Type", "Lag"], ["T1", "T2", "FS", 1e308]],
        ),
        "Links!D2",
    ),
    invalid(
        "issue-400-digit-lag",
        "plan.xlsx",
        book(replaced(3, 2, "T1[+" + "9" * 400 + "]")),
        "Plan!C3",
        "T2",
    ),
    invalid(
        "issue-start-9999-12-31",
        "plan.xlsx",
        book(BASE, Settings=start(dt.date(9999, 12, 31))),
        "Settings!B2",
    ),
    invalid(
        "issue-3-million-day-durations",
        "plan.xlsx",
        book(every_estimate(3_000_000), Settings=start(dt.date(2025, 1, 6))),
        "Plan!F2",
        "T1",
    ),
    valid(
        "issue-predecessor-written-1.0",
        "plan.xlsx",
        book([HEADER, [1.0, "one", None, 1, 2, 3], [2, "two", "1.0", 1, 2, 3]]),
        {"1": {"name": "one"}, "2": {"es": 2.0}},
    ),
    valid(
        "issue-date-time-id",
        "plan.xlsx",
        book(rows_with([DATE_TIME, "timed", "T4", 1, 1, 1], ["T6", "after", DATE_TIME, 1, 1, 1])),
        {"2024-01-02 10:30": {"name": "timed"}, "T6": {"te": 1.0}},
    ),
    valid(
        "issue-na-none-null-nan-in-cells",
        "plan.xlsx",
        book(rows_with(["NA", "None", "T4", 1, 1, 1], ["NULL", "NaN", "NA", 1, 1, 1])),
        {"NA": {"name": "None"}, "NULL": {"name": "NaN"}},
    ),
    invalid("issue-nan-text-estimate", "plan.xlsx", book(replaced(4, 5, "NaN")), "Plan!F4", "T3"),
    valid(
        "issue-two-most-likely-columns",
        "plan.xlsx",
        book(rows_with(header=HEADER + ["Most likely"])),
        READ,
        places=("E1", "G1"),
    ),
    invalid("issue-header-below-row-30", "plan.xlsx", header_on_row_34, "row 34", "30"),
    valid(
        "issue-only-sheet-named-settings",
        "plan.xlsx",
        lambda p: write_xlsx(p, {"Settings": BASE}),
        READ,
    ),
    invalid(
        "issue-error-cells",
        "plan.xlsx",
        book(replaced(3, 4, Formula("1/0", Error("#DIV/0!")))),
        "Plan!E3",
        "#DIV/0!",
    ),
    invalid("issue-workbook-named-csv", "plan.csv", base_xlsx, "plan.csv", "workbook"),
    valid(
        "issue-utf16-csv-with-bom",
        "plan.csv",
        lambda p: p.write_bytes(codecs.BOM_UTF16_LE + _csv_text().encode("utf-16-le")),
        READ,
    ),
    valid(
        "issue-quoted-line-break-in-predecessors",
        "plan.csv",
        lambda p: write_csv(p, replaced(4, 2, "T1\nT2")),
        {"T3": {"es": BASE_TE["T1"] + BASE_TE["T2"]}},
    ),
    valid(
        "issue-line-separator-in-csv-cell",
        "plan.csv",
        lambda p: write_csv(p, replaced(3, 1, "Lay\u2028pipe")),
        {"T2": {"name": "Lay\u2028pipe"}},
    ),
]


def _csv_text() -> str:
    return "".join(",".join("" if v is None else str(v) for v in row) + "\r\n" for row in BASE)
