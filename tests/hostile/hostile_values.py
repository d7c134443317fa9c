"""Corpus cases: numbers, dates, IDs, links and settings that are odd or hostile.

Expected outcomes come from the project's issue and README:

- numbers: only plain decimal numbers are numbers (issue: "Accept only plain decimal
  numbers"; so not ``1_0``, ``0x10``, ``1,5``, ``nan``, ``inf``, other scripts' digits), a
  documented sane range for durations and lags (README "Limits"; the validation branch
  sets 10,000,000 time units), error cells are reported with their cell (README "Cells
  as written"), an estimate must be a non-negative number with O <= M <= P;
- dates: from 1900-03-01 (spreadsheet serials agree between programs only from then:
  the 1900 date system counts a 29 February 1900 that never was, ECMA-376 Part 1,
  18.17.4.1) to 9999-12-31 (the last date a spreadsheet holds), and every date the
  analysis computes must stay inside that calendar;
- IDs: one normalisation wherever an ID appears (issue: ``1``, ``1.0`` and ``'1'`` are one
  ID; a date-time ID reads the same as ID and as predecessor); text keeps leading zeros;
- links: the README's bracket notation (``A3[SS+3]``), a cycle, a link to itself and an
  unknown ID are problems naming the cell; the very same link twice is a warning, one type
  twice with two lags an error (issue 11); SS and FF links between the same two
  activities are a valid pair in precedence diagramming (Fondahl 1961);
- settings: README's settings table (values and their ranges); repeated labels are a
  warning naming both cells (issue).

Cells in the places are worked out by hand: base rows on sheet rows 2 to 5 (T1..T4),
columns A ID, B description, C predecessors, D/E/F optimistic/most likely/pessimistic;
settings from row 2 with the label in column A and the value in column B.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from hostile_corpus import BASE, BASE_TE, HEADER, invalid, replaced, rows_with, valid, write_csv
from hostile_files import Error, write_xlsx


def book(rows, **sheets):
    def make(path: Path) -> Path:
        return write_xlsx(path, {"Plan": rows, **sheets})

    return make


def estimates(row: int, o: object, m: object, p: object) -> list[list[object]]:
    rows = replaced(row, 3, o)
    rows[row - 1][4:6] = [m, p]
    return rows


def bad_number(name: str, text: object, *places: str, column: int = 4, **kw):
    """T2's estimate in ``column`` (D=3, E=4, F=5) replaced by ``text``."""
    cell = f"Plan!{'DEF'[column - 3]}3"
    return invalid(
        f"num-{name}", "plan.xlsx", book(replaced(3, column, text)), cell, "T2", *places, **kw
    )


def with_settings(*rows: list[object], base=None):
    return book(base or BASE, Settings=[["Setting", "Value"], *[list(r) for r in rows]])


def bad_setting(name: str, label: str, value: object, *places: str, **kw):
    return invalid(
        f"set-{name}", "plan.xlsx", with_settings([label, value]), "Settings!B2", *places, **kw
    )


def bad_link(name: str, text: str, **kw):
    return invalid(f"link-{name}", "plan.xlsx", book(replaced(3, 2, text)), "Plan!C3", "T2", **kw)


def chain(n: int, prefix: str, ring: bool = False) -> list[list[object]]:
    """``n`` activities in a chain (closed into a ring when ``ring``)."""
    rows = [HEADER]
    for k in range(1, n + 1):
        pred = f"{prefix}{k - 1}" if k > 1 else (f"{prefix}{n}" if ring else None)
        rows.append([f"{prefix}{k}", None, pred, 1, 2, 3])
    return rows


def links(*rows: list[object], base=None):
    activities = [list(r) for r in (base or BASE)]
    for row in activities[1:]:
        row[2] = None
    return book(activities, Links=[["Predecessor", "Successor", "Type", "Lag"], *rows])


NUMBERS = [
    valid(
        "num-largest-duration", "plan.xlsx", book(estimates(3, 1e7, 1e7, 1e7)), {"T2": {"te": 1e7}}
    ),
    bad_number(
        "just-past-largest",
        10_000_001,
        "10000001",
        column=5,
    ),
    valid(
        "num-negative-zero-milestone",
        "plan.xlsx",
        book(estimates(4, -0.0, -0.0, -0.0)),
        {"T3": {"te": 0.0}},
    ),
    valid(
        "num-subnormal",
        "plan.xlsx",
        book(estimates(4, 5e-324, 5e-324, 5e-324)),
        {"T3": {"te": 0.0}},
    ),
    valid(
        "num-exponent-and-sign-text",
        "plan.xlsx",
        book(estimates(3, "+1", " 2e0 ", "4.")),
        {"T2": {"te": BASE_TE["T2"]}},
    ),
    bad_number("underscore", "1_0", "1_0"),
    bad_number("hexadecimal", "0x10", "0x10"),
    bad_number("decimal-comma", "1,5", "1,5"),
    bad_number("nan-word", "nan", "nan"),
    bad_number("inf-word", "inf", "inf"),
    bad_number("minus-infinity", "-Infinity", "-Infinity", column=3),
    bad_number("overflow-exponent", "1e999", "1e999", column=5),
    bad_number("arabic-indic-digit", "\u0663", "\u0663"),
    bad_number("fullwidth-digit", "\uff13"),
    bad_number("negative-pessimistic", -0.5, "-0.5", column=5),
    bad_number("400-digits", "9" * 400, column=5),
    bad_number("1e15", 1e15, column=5),
    bad_number("boolean-cell", True, "TRUE"),
    bad_number("div0-error-cell", Error("#DIV/0!"), "#DIV/0!"),
    bad_number("na-error-cell", Error("#N/A"), "#N/A", column=3),
    bad_number("percent", "50%", "50%"),
    bad_number(
        "datetime-in-pessimistic", dt.datetime(2024, 3, 1, 10, 30), "2024-03-01 10:30", column=5
    ),
    bad_number("time-in-optimistic", dt.time(8, 0), "08:00", column=3),
    invalid("num-1e308-lag", "plan.xlsx", book(replaced(3, 2, "T1[+1e308]")), "Plan!C3", "T2"),
    invalid("num-huge-lead", "plan.xlsx", book(replaced(3, 2, "T1[FF-99999999]")), "Plan!C3", "T2"),
    valid(
        "num-largest-lag",
        "plan.xlsx",
        book(replaced(3, 2, "T1[+10000000]")),
        {"T2": {"es": 1e7 + BASE_TE["T1"]}},
    ),
    invalid("num-nan-lag", "plan.xlsx", book(replaced(3, 2, "T1[SS+nan]")), "Plan!C3", "T2"),
    invalid("num-inf-lag", "plan.xlsx", book(replaced(3, 2, "T1[+inf]")), "Plan!C3", "T2"),
    invalid("num-underscore-lag", "plan.xlsx", book(replaced(3, 2, "T1[+1_0]")), "Plan!C3", "T2"),
    invalid("num-hex-lag", "plan.xlsx", book(replaced(3, 2, "T1[+0x10]")), "Plan!C3", "T2"),
    invalid(
        "num-links-sheet-minus-1e308", "plan.xlsx", links(["T1", "T2", "FS", -1e308]), "Links!D2"
    ),
    invalid("num-links-sheet-nan-text", "plan.xlsx", links(["T1", "T2", "FS", "NaN"]), "Links!D2"),
]

DATES = [
    invalid(
        "date-start-9999-12-30",
        "plan.xlsx",
        with_settings(["Start date", dt.date(9999, 12, 30)]),
        "Settings!B2",
    ),
    invalid(
        "date-start-1899-12-31",
        "plan.xlsx",
        with_settings(["Start date", dt.date(1899, 12, 31)]),
        "Settings!B2",
    ),
    invalid(
        "date-start-1900-02-29-text",
        "plan.xlsx",
        with_settings(["Start date", "1900-02-29"]),
        "Settings!B2",
    ),
    valid(
        "date-start-1900-03-01",
        "plan.xlsx",
        with_settings(["Start date", dt.date(1900, 3, 1)]),
        {"T1": {"early_start_date": "1900-03-01"}},
    ),
    invalid(
        "date-start-day-first-text",
        "plan.xlsx",
        with_settings(["Start date", "31/12/2025"]),
        "Settings!B2",
    ),
    invalid(
        "date-start-february-30",
        "plan.xlsx",
        with_settings(["Start date", "2025-02-30"]),
        "Settings!B2",
    ),
    valid(
        "date-start-with-time-of-day",
        "plan.xlsx",
        with_settings(["Start date", dt.datetime(2025, 1, 6, 10, 30)]),
        {"T1": {"early_start_date": "2025-01-06"}},
    ),
    invalid(
        "date-due-month-13",
        "plan.xlsx",
        with_settings(["Start date", dt.date(2025, 1, 6)], ["Due date", "2025-13-01"]),
        "Settings!B3",
    ),
    invalid(
        "date-holiday-word",
        "plan.xlsx",
        with_settings(["Start date", dt.date(2025, 1, 6)], ["Holidays", "Christmas"]),
        "Settings!B3",
    ),
    valid(
        "date-holiday-9999-12-31",
        "plan.xlsx",
        with_settings(["Start date", dt.date(2025, 1, 6)], ["Holidays", dt.date(9999, 12, 31)]),
        {"T1": {"early_start_date": "2025-01-06"}},
    ),
    valid(
        "date-due-before-start",
        "plan.xlsx",
        with_settings(["Start date", dt.date(2025, 1, 6)], ["Due date", dt.date(2024, 12, 2)]),
        {"T1": {"te": BASE_TE["T1"]}},
        places=("2024-12-02",),
    ),
    valid(
        "date-cell-as-id",
        "plan.xlsx",
        book(
            rows_with(
                [dt.date(2024, 1, 2), "dated", "T4", 1, 1, 1],
                ["T6", "after", "2024-01-02", 1, 1, 1],
            )
        ),
        {"2024-01-02": {"name": "dated"}, "T6": {"te": 1.0}},
    ),
]

IDS = [
    valid(
        "id-1-1.0-and-text-1",
        "plan.xlsx",
        book(
            [
                HEADER,
                [1, "one", None, 1, 2, 3],
                [2.0, "two", "1.0", 1, 2, 3],
                ["3", "three", 2, 1, 2, 3],
            ]
        ),
        {"1": {"name": "one"}, "2": {"name": "two"}, "3": {"name": "three"}},
    ),
    valid(
        "id-decimal-number",
        "plan.xlsx",
        book(rows_with([1.5, "one and a half", "T4", 1, 1, 1], ["T6", "x", "1.5", 1, 1, 1])),
        {"1.5": {"name": "one and a half"}},
    ),
    valid(
        "id-negative-number",
        "plan.xlsx",
        book(rows_with([-5, "minus five", "T4", 1, 1, 1], ["T6", "x", "-5", 1, 1, 1])),
        {"-5": {"name": "minus five"}},
    ),
    invalid(
        "id-leading-zero-kept",
        "plan.xlsx",
        book(rows_with(["01", "zero one", "T4", 1, 1, 1], ["T6", "x", "1", 1, 1, 1])),
        "Plan!C7",
        "T6",
    ),
    invalid(
        "id-duplicate-number-and-text",
        "plan.xlsx",
        book(rows_with([7, "seven", None, 1, 1, 1], ["7", "again", None, 1, 1, 1])),
        "Plan!A7",
    ),
    invalid(
        "id-duplicate-with-spaces",
        "plan.xlsx",
        book(rows_with([" T1 ", "again", None, 1, 1, 1])),
        "Plan!A6",
        "T1",
    ),
    invalid(
        "id-whitespace-only",
        "plan.xlsx",
        book(rows_with(["   ", "no id", "T4", 1, 1, 1])),
        "Plan!A6",
    ),
    invalid("id-tab-only", "plan.xlsx", book(rows_with(["\t", "no id", "T4", 1, 1, 1])), "Plan!A6"),
    invalid(
        "id-with-brackets",
        "plan.xlsx",
        book(rows_with(["T[1]", "bracketed", "T4", 1, 1, 1], ["T6", "x", "T[1]", 1, 1, 1])),
        "Plan!C7",
    ),
]

LINKS = [
    bad_link("self-with-lag", "T2[SS+1]"),
    invalid("link-two-cycle", "plan.xlsx", book(replaced(3, 2, "T1, T3")), "T2", "T3"),
    invalid("link-300-cycle", "plan.xlsx", book(chain(300, "R", ring=True)), "R1", "R300"),
    invalid(
        "link-start-to-start-cycle", "plan.xlsx", book(replaced(3, 2, "T1; T3[SS]")), "T2", "T3"
    ),
    invalid(
        "link-cycle-on-links-sheet",
        "plan.xlsx",
        links(["T1", "T2", "FS", 0], ["T2", "T3", "FS", 0], ["T3", "T1", "FF", 0]),
        "T1",
        "T2",
        "T3",
    ),
    invalid(
        "link-unknown-successor-sheet",
        "plan.xlsx",
        links(["T1", "T2", "FS", 0], ["T2", "Q9", "FS", 0]),
        "Links!B3",
        "Q9",
    ),
    *[
        bad_link(f"garbage-{k}", text)
        for k, text in enumerate(
            [
                "T1[",
                "T1]",
                "T1[[SS]]",
                "T1[SS+]",
                "T1[XX+2]",
                "T1[+2",
                "T1[+2][SS]",
                "[SS]",
                "T1[FS+2mo]",  # months refused; "T1[FS+2d]" is read (issue 11)
                "T1[SS+1+1]",
                "T1[SS+-1]",
            ],
            start=1,
        )
    ],
    # issue 11: the very same link twice is a warning naming the second place (and the
    # first), counted once; the same pair and type with another lag is an error
    valid(
        "link-repeated",
        "plan.xlsx",
        book(replaced(3, 2, "T1, T1")),
        {"T2": {"es": BASE_TE["T1"]}},
        places=("Plan!C3", "given twice"),
    ),
    valid(
        "link-repeated-on-links-sheet",
        "plan.xlsx",
        links(["T1", "T2", "FS", 0], ["T1", "T2", "FS", 0]),
        {"T2": {"es": BASE_TE["T1"]}},
        places=("Links!A3", "Links!A2"),
    ),
    invalid(
        "link-same-type-two-lags",
        "plan.xlsx",
        book(replaced(3, 2, "T1[SS+1], T1[SS+2]")),
        "Plan!C3",
        "T2",
        "+1",
        "+2",
    ),
    invalid(
        "link-same-type-two-lags-on-links-sheet",
        "plan.xlsx",
        links(["T1", "T2", "FF", 1], ["T2", "T3", "FS", 0], ["T1", "T2", "FF", 2]),
        "Links!A2",
        "Links!A4",
    ),
    # a ladder (SS and FF between one pair; Fondahl 1961): both links hold. By hand:
    # SS+0 gives ES_T2 >= 0; FF+0 gives EF_T2 >= EF_T1, ES_T2 >= 19/6 - 13/6 = 1.
    valid(
        "link-ss-and-ff-same-pair",
        "plan.xlsx",
        book(replaced(3, 2, "T1[SS], T1[FF]")),
        {"T2": {"es": 1.0}},
    ),
    valid(
        "link-empty-brackets",
        "plan.xlsx",
        book(replaced(3, 2, "T1[]")),
        {"T2": {"es": BASE_TE["T1"]}},
    ),
    valid(
        "link-empty-tokens",
        "plan.xlsx",
        book(replaced(3, 2, " T1 ,, ;")),
        {"T2": {"es": BASE_TE["T1"]}},
    ),
    bad_link("5000-unknown", ", ".join(f"U{k}" for k in range(5000))),
    valid(
        "link-type-words",
        "plan.xlsx",
        links(["T1", "T2", "finish-to-start", 0], ["T2", "T3", "ss", 1], ["T3", "T4", "FS", None]),
        {"T3": {"es": BASE_TE["T1"] + 1}},
    ),
    invalid("link-type-garbage", "plan.xlsx", links(["T1", "T2", "XX", 0]), "Links!C2"),
    valid("link-300-chain", "plan.xlsx", book(chain(300, "C")), {"C300": {"es": 299 * 2.0}}),
]

SETTINGS = [
    valid(
        "set-due-twice",
        "plan.xlsx",
        with_settings(["Due", 20], ["Due", 30]),
        {"T1": {"te": BASE_TE["T1"]}},
        places=("Settings!B2", "Settings!B3"),
    ),
    valid(
        "set-start-twice",
        "plan.xlsx",
        with_settings(["Start date", dt.date(2025, 1, 6)], ["Start date", dt.date(2025, 2, 3)]),
        {"T1": {"te": BASE_TE["T1"]}},
        places=("Settings!B2", "Settings!B3"),
    ),
    valid(
        "set-unknown-label",
        "plan.xlsx",
        with_settings(["Colour", "blue"]),
        {"T1": {"te": BASE_TE["T1"]}},
        places=("Settings!A2", "Colour"),
    ),
    bad_setting("iterations-word", "Iterations", "many", "many"),
    bad_setting("iterations-zero", "Iterations", 0),
    bad_setting("iterations-negative", "Iterations", -3),
    bad_setting("iterations-1e308", "Iterations", 1e308),
    bad_setting("iterations-past-largest", "Iterations", 10_000_001),
    bad_setting("iterations-fraction", "Iterations", 2.5),
    bad_setting("seed-word", "Seed", "lucky"),
    bad_setting("seed-1e400-text", "Seed", "1e400"),
    bad_setting("distribution-unknown", "Distribution", "gaussian", "gaussian"),
    bad_setting("correlation-one", "Correlation", 1),
    bad_setting("correlation-negative", "Correlation", -0.5),
    bad_setting("correlation-nan", "Correlation", "nan"),
    bad_setting("confidence-0-and-100", "Confidence levels", "0, 100"),
    bad_setting("confidence-mixed", "Confidence levels", "0.5, 80"),
    bad_setting("confidence-nan", "Confidence levels", "nan"),
    bad_setting("confidence-101", "Confidence levels", "101"),
    bad_setting("paths-zero", "Paths", 0),
    bad_setting("paths-word", "Paths", "ten"),
    bad_setting("time-unit-unknown", "Time unit", "fortnights", "fortnights"),
    bad_setting("working-days-unknown", "Working days", "Mon-Funday", "working days"),
    bad_setting("due-word", "Due date", "soon", "soon"),
    bad_setting("due-nan", "Due date", "nan"),
    bad_setting("due-1e308", "Due date", 1e308),
    valid(
        "set-activity-list-on-options-sheet",
        "plan.xlsx",
        lambda p: write_xlsx(p, {"Options": BASE}),
        {"T4": {"te": BASE_TE["T4"]}},
    ),
    valid(
        "set-values-as-csv-text",
        "plan.csv",
        lambda p: write_csv(p, rows_with(["T5", "fifth", "T4", "1.0", "2.50", "4"])),
        {"T5": {"te": (1 + 10 + 4) / 6}},
    ),
]

CASES = NUMBERS + DATES + IDS + LINKS + SETTINGS
