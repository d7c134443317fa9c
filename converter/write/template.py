"""A blank input workbook to fill in: activity sheet, settings sheet, risk register,
instructions.

Written with xlsxwriter; deterministic (fixed document dates), so a freshly written
template equals the committed ``templates/pertbook-template.xlsx``. Column headers and
setting labels are the ones the reader recognises first.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import xlsxwriter

from converter.model import (
    DEFAULT_CONFIDENCE,
    DEFAULT_ITERATIONS,
    DEFAULT_PATHS,
    DEFAULT_SEED,
    DISTRIBUTIONS,
    Settings,
)
from converter.write.template_risks import write_risks_sheet

ROWS = 500  # formatted, validated input rows below the header
HOLIDAY_ROWS = 30  # blank-labelled rows below "Holidays" for more dates
CREATED = dt.datetime(2024, 1, 1)  # fixed document date: same bytes on every run

COLUMNS: tuple[tuple[str, int, str, str], ...] = (
    # header, width, cell kind, input message
    (
        "ID",
        10,
        "text",
        "A short unique code for the activity, e.g. A3 or FIT-2. Letters, digits, dots, "
        "+ and - are all fine.",
    ),
    ("Description", 48, "text", "What the work is, in plain words."),
    (
        "Predecessors",
        30,
        "text",
        "IDs this activity follows, separated by commas. A3 = finish-to-start; A3[+2] = two "
        "units of lag; A3[-1] = one unit of lead; A3[SS], A3[SS+3], A3[FF-1], A3[SF] for the "
        "other link types.",
    ),
    (
        "Optimistic",
        12,
        "number",
        "Shortest credible duration in the time unit of the Settings sheet: a number, 0 or more.",
    ),
    (
        "Most likely",
        12,
        "number",
        "The duration you expect most often: from Optimistic up to Pessimistic.",
    ),
    (
        "Pessimistic",
        12,
        "number",
        "Longest credible duration (not the worst imaginable): at least Optimistic and "
        "Most likely.",
    ),
    (
        "Distribution",
        13,
        "text",
        "Optional: pert, triangular or uniform. Blank = the Distribution on the Settings sheet.",
    ),
    (
        "Group",
        14,
        "text",
        "Optional: activities with the same group name (same crew, supplier or risk) are "
        "sampled with the Correlation on the Settings sheet.",
    ),
    (
        "Target",
        13,
        "date",
        "Optional interim target for this activity's finish: a date (needs a Start date on "
        "the Settings sheet) or a number of time units from the start.",
    ),
    (
        "Duration",
        11,
        "number",
        "Optional: one planned duration instead of three estimates (e.g. 10, 3d, 16h, 2w). "
        "With Optimistic, Most likely and Pessimistic left blank, the Range makes them.",
    ),
    (
        "Range",
        12,
        "text",
        "Optional: a range class from the Ranges sheet (e.g. Medium) or inline percentages "
        "low/likely/high such as 80/100/120. Blank = the Default range on the Settings sheet.",
    ),
)

#: Example range classes for the template's Ranges sheet: (name, low %, likely %, high %).
#: Invented for illustration, to be replaced by the team's own.
EXAMPLE_RANGES: tuple[tuple[str, int, int, int], ...] = (
    ("Low", 95, 100, 110),
    ("Medium", 90, 100, 125),
    ("High", 80, 105, 150),
    ("Very high", 75, 110, 200),
)
RANGE_ROWS = 50  # validated rows for classes on the Ranges sheet
RANGES_NOTE = (
    "EXAMPLES ONLY: replace these classes with your team's own. Each class gives the "
    "optimistic, most likely and pessimistic durations in percent of an activity's Duration "
    "(90 = 90%): O = Duration x Low % / 100, and so on. Low % <= Likely % <= High %."
)

# Validation rules as formulas for the first input row (Excel adjusts them down the
# range). A rule fires only when its own cell is edited; blanks in the other two
# estimates are allowed so the row can be filled in any order.
MOST_LIKELY_RULE = "AND(ISNUMBER({m}),{m}>=0,OR(ISBLANK({o}),{m}>={o}),OR(ISBLANK({p}),{m}<={p}))"
PESSIMISTIC_RULE = "AND(ISNUMBER({p}),{p}>=0,OR(ISBLANK({o}),{p}>={o}),OR(ISBLANK({m}),{p}>={m}))"

TIME_UNITS = ("working days", "weeks", "calendar days", "working hours")

INSTRUCTIONS: tuple[tuple[str, str], ...] = (
    ("title", "How to fill in this workbook"),
    ("head", "Activities sheet"),
    (
        "text",
        "One row per activity. ID and either Optimistic, Most likely and Pessimistic or a "
        "Duration (with a Range) are required; the other columns are optional. Leave "
        "unused rows empty.",
    ),
    (
        "text",
        "Estimates are durations in the time unit set on the Settings sheet "
        "(working days unless you change it). Optimistic <= Most likely <= Pessimistic. "
        "A milestone has all three estimates 0.",
    ),
    ("head", "Links between activities"),
    (
        "text",
        "List in Predecessors the IDs of the activities that must come first, "
        "separated by commas. Type and lag go in square brackets after the ID:",
    ),
    ("code", "A3          finish-to-start: starts when A3 finishes"),
    ("code", "A3[+2]      finish-to-start with two units of lag (waiting time)"),
    ("code", "A3[-1]      finish-to-start with one unit of lead (overlap)"),
    ("code", "A3[SS]      start-to-start: starts no earlier than A3 starts"),
    ("code", "A3[SS+3]    start-to-start, three units after A3 starts"),
    ("code", "A3[FF-1]    finish-to-finish, finishing no earlier than one unit before A3 finishes"),
    ("code", "A3[SF]      start-to-finish: finishes no earlier than A3 starts"),
    ("code", "A3[SS+4h]   a lag with a unit: h hours, d days, w weeks (A3[+2d], A3[FF-1w])"),
    (
        "text",
        "IDs may contain + and - (for example PH1-04 or C+2): only the part in square "
        "brackets is read as a link type and lag.",
    ),
    (
        "text",
        "Links can instead go on an optional sheet named Links with the columns "
        "Predecessor, Successor, Type (FS, SS, FF or SF) and Lag (negative = lead).",
    ),
    ("head", "Ranges from a single duration"),
    (
        "text",
        "Instead of three estimates, an activity may have one Duration and a Range: a class "
        "of the Ranges sheet (e.g. Medium) or inline percentages such as 80/100/120 (low / "
        "most likely / high in percent of the Duration). Leave Optimistic, Most likely and "
        "Pessimistic blank on that row: filled-in estimates always win over a range. The "
        "Default range on the Settings sheet applies to a Duration with no Range. The "
        "classes on the Ranges sheet are examples: replace them with your team's own.",
    ),
    ("head", "Settings sheet"),
    (
        "text",
        "Each row is a label in column A and its value in column B; column C explains it. "
        "Holidays: one date per cell in column B, on the Holidays row and the rows below "
        "it with column A left blank. Values given on the command line override this "
        "sheet.",
    ),
    ("head", "Results"),
    (
        "text",
        "The converter writes a separate analysis workbook next to this file; this "
        "file is only read, never changed.",
    ),
    ("head", "Caution"),
    (
        "text",
        "The results are estimates from the figures you enter, not promises. Dates "
        "that are contractual or safety-critical need review by a competent "
        "professional under the local rules and the terms of the contract.",
    ),
)


def _confidence_text(levels: tuple[float, ...]) -> str:
    return ", ".join(f"{round(c * 100):d}%" for c in levels)


def _settings_rows() -> list[tuple[str, object, str]]:
    defaults = Settings()
    return [
        (
            "Start date",
            None,
            "First working day of the project (a date). Needed for dates in the results.",
        ),
        (
            "Time unit",
            defaults.time_unit,
            "Unit of every estimate and lag: working days, weeks, calendar days or working hours.",
        ),
        (
            "Working days",
            "Mon-Fri",
            "Days of the week that are worked, e.g. Mon-Fri, Mon-Sat or Sun-Thu.",
        ),
        (
            "Hours per day",
            defaults.hours_per_day,
            "Working hours in one day (above 0, at most 24): converts a lag such as A3[+4h] "
            "and dates a schedule in working hours.",
        ),
        ("Due date", None, "Optional: a date, or a number of time units from the start."),
        ("Iterations", DEFAULT_ITERATIONS, "Number of Monte Carlo iterations."),
        ("Seed", DEFAULT_SEED, "Random seed: the same seed gives the same results."),
        (
            "Distribution",
            defaults.distribution,
            "Shape for activities with no Distribution entry: pert, triangular or uniform.",
        ),
        (
            "Correlation",
            defaults.correlation,
            "Rank correlation between activities of the same Group, from 0 up to "
            "(not including) 1.",
        ),
        (
            "Confidence levels",
            _confidence_text(DEFAULT_CONFIDENCE),
            "Probabilities at which finish durations and dates are reported.",
        ),
        ("Paths", DEFAULT_PATHS, "How many of the longest paths to list."),
        (
            "Default range",
            None,
            "Optional: the range class (Ranges sheet) of activities with a Duration and no "
            "Range. Blank: such a Duration is fixed (no spread).",
        ),
        (
            "Holidays",
            None,
            "Non-working dates: one per cell here and in the rows below (column A blank).",
        ),
    ]


def _activities(wb, ws, bold, fmt) -> None:
    last = ROWS  # 0-based index of the last input row (sheet row ROWS + 1)
    for c, (head, width, kind, message) in enumerate(COLUMNS):
        ws.set_column(c, c, width)
        ws.write_string(0, c, head, bold)
        ws.data_validation(
            0,
            c,
            0,
            c,
            {
                "validate": "any",
                "input_title": head,
                "input_message": message,
            },
        )
        for r in range(1, last + 1):
            ws.write_blank(r, c, None, fmt[kind])
    ws.freeze_panes(1, 0)
    o, m, p = "D2", "E2", "F2"
    ws.data_validation(
        1,
        3,
        last,
        3,
        {
            "validate": "decimal",
            "criteria": ">=",
            "value": 0,
            "error_title": "Optimistic",
            "error_message": "Enter a number, 0 or more.",
        },
    )
    ws.data_validation(
        1,
        4,
        last,
        4,
        {
            "validate": "custom",
            "value": "=" + MOST_LIKELY_RULE.format(o=o, m=m, p=p),
            "error_title": "Most likely",
            "error_message": "Enter a number from Optimistic up to Pessimistic.",
        },
    )
    ws.data_validation(
        1,
        5,
        last,
        5,
        {
            "validate": "custom",
            "value": "=" + PESSIMISTIC_RULE.format(o=o, m=m, p=p),
            "error_title": "Pessimistic",
            "error_message": "Enter a number no smaller than Optimistic and Most likely.",
        },
    )
    ws.data_validation(
        1,
        6,
        last,
        6,
        {
            "validate": "list",
            "source": list(DISTRIBUTIONS),
            "error_title": "Distribution",
            "error_message": "Choose pert, triangular or uniform (or leave blank).",
        },
    )


def _settings(wb, ws, bold, fmt, wrap) -> None:
    ws.set_column(0, 0, 20)
    ws.set_column(1, 1, 22)
    ws.set_column(2, 2, 80)
    for c, head in enumerate(("Setting", "Value", "Note")):
        ws.write_string(0, c, head, bold)
    ws.freeze_panes(1, 0)
    rows = _settings_rows()
    for r, (label, value, note) in enumerate(rows, start=1):
        ws.write_string(r, 0, label)
        ws.write_string(r, 2, note, wrap)
        is_date = label in ("Start date", "Holidays")
        cell_fmt = fmt["date"] if is_date else None
        if value is None:
            ws.write_blank(r, 1, None, cell_fmt or fmt["general"])
        elif isinstance(value, str):
            ws.write_string(r, 1, value)
        else:
            ws.write_number(r, 1, value)
    row_of = {label: r for r, (label, _, _) in enumerate(rows, start=1)}
    holidays = row_of["Holidays"]
    for r in range(holidays + 1, holidays + 1 + HOLIDAY_ROWS):
        ws.write_blank(r, 1, None, fmt["date"])
    _settings_rules(ws, row_of, holidays)


def _settings_rules(ws, row_of: dict[str, int], holidays: int) -> None:
    """Data-validation rules of the settings' value cells (what the reader accepts)."""
    date_rule = {
        "validate": "date",
        "criteria": "between",
        "minimum": dt.date(1900, 3, 1),
        "maximum": dt.date(9999, 12, 31),
        "error_message": "Enter a date.",
    }
    ws.data_validation(row_of["Start date"], 1, row_of["Start date"], 1, date_rule)
    ws.data_validation(holidays, 1, holidays + HOLIDAY_ROWS, 1, date_rule)
    rules = {
        "Due date": {
            "validate": "decimal",
            "criteria": ">=",
            "value": 0,
            "error_message": "Enter a date or a number of time units, 0 or more.",
        },
        "Time unit": {"validate": "list", "source": list(TIME_UNITS)},
        "Hours per day": {
            "validate": "decimal",
            "criteria": "between",
            "minimum": 0.01,
            "maximum": 24,
            "error_message": "Enter a number of hours above 0 and at most 24.",
        },
        "Distribution": {"validate": "list", "source": list(DISTRIBUTIONS)},
        "Iterations": _whole_number(1, 10_000_000, "from 1 to 10,000,000"),
        "Seed": {
            "validate": "integer",
            "criteria": ">=",
            "value": 0,
            "error_message": "Enter a whole number, 0 or more.",
        },
        "Correlation": {
            "validate": "decimal",
            "criteria": "between",
            "minimum": 0,
            "maximum": 0.99,
            "error_message": "Enter a number from 0 to 0.99.",
        },
        "Paths": _whole_number(1, 1000, "from 1 to 1000"),
    }
    for label, rule in rules.items():
        r = row_of[label]
        ws.data_validation(r, 1, r, 1, rule)


def _whole_number(low: int, high: int, words: str) -> dict:
    return {
        "validate": "integer",
        "criteria": "between",
        "minimum": low,
        "maximum": high,
        "error_message": f"Enter a whole number {words}.",
    }


def _ranges(ws, bold, fmt, wrap) -> None:
    """The Ranges sheet: example classes, marked as examples, and checks on the percents."""
    for c, width in enumerate((16, 10, 10, 10, 60)):
        ws.set_column(c, c, width)
    ws.write_string(0, 0, "Range classes: the examples below are for your team to replace", bold)
    ws.merge_range(1, 0, 1, 4, RANGES_NOTE, wrap)
    ws.set_row(1, 48)
    head = 3
    for c, title in enumerate(("Range", "Low %", "Likely %", "High %", "Note")):
        ws.write_string(head, c, title, bold)
    ws.freeze_panes(head + 1, 0)
    for r in range(head + 1, head + 1 + RANGE_ROWS):
        ws.write_blank(r, 0, None, fmt["text"])
        for c in (1, 2, 3):
            ws.write_blank(r, c, None, fmt["number"])
    for k, (name, low, likely, high) in enumerate(EXAMPLE_RANGES):
        r = head + 1 + k
        ws.write_string(r, 0, name, fmt["text"])
        for c, x in ((1, low), (2, likely), (3, high)):
            ws.write_number(r, c, x, fmt["number"])
        ws.write_string(r, 4, "Example: replace with your own class", wrap)
    ws.data_validation(
        head + 1,
        1,
        head + RANGE_ROWS,
        3,
        {
            "validate": "decimal",
            "criteria": ">=",
            "value": 0,
            "error_title": "Percent of the duration",
            "error_message": "Enter a percentage of the Duration, 0 or more (90 for 90%).",
        },
    )


def _instructions(wb, ws) -> None:
    styles = {
        "title": wb.add_format({"bold": True, "font_size": 14}),
        "head": wb.add_format({"bold": True, "font_size": 11}),
        "text": wb.add_format({"text_wrap": True, "valign": "top"}),
        "code": wb.add_format({"font_name": "Consolas"}),
    }
    ws.set_column(0, 0, 100)
    r = 0
    for kind, text in INSTRUCTIONS:
        if kind == "head":
            r += 1
        ws.write_string(r, 0, text, styles[kind])
        r += 1


def write_template(path: Path) -> None:
    """Write the blank input workbook to ``path`` (overwriting it)."""
    wb = xlsxwriter.Workbook(str(path))
    wb.set_properties(
        {
            "title": "pertbook input template",
            "author": "pertbook",
            "created": CREATED,
        }
    )
    bold = wb.add_format({"bold": True, "bottom": 1})
    fmt = {
        "text": wb.add_format({"num_format": "@"}),
        "number": wb.add_format({"num_format": "0.##"}),
        "date": wb.add_format({"num_format": "yyyy-mm-dd"}),
        "general": wb.add_format({}),
    }
    wrap = wb.add_format({"text_wrap": True})
    _activities(wb, wb.add_worksheet("Activities"), bold, fmt)
    _settings(wb, wb.add_worksheet("Settings"), bold, fmt, wrap)
    _ranges(wb.add_worksheet("Ranges"), bold, fmt, wrap)
    write_risks_sheet(wb, wb.add_worksheet("Risks"), bold, fmt)
    _instructions(wb, wb.add_worksheet("Instructions"))
    wb.close()
