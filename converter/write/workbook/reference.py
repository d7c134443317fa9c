"""Supporting sheets: settings used, method, input as read, warnings."""

from __future__ import annotations

import datetime as dt

from converter.analyse.calendar import conversion_words
from converter.analyse.simulate.inverse import ACCURACY
from converter.model import LINK_TYPES
from converter.write.workbook import formulas as f
from converter.write.workbook import pages, progress_cols, rows
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import INPUT, METHOD, SETTINGS, WARNINGS, Layout
from converter.write.workbook.ranges import METHOD_ROW as RANGE_METHOD_ROW
from converter.write.workbook.risks_sheet import METHOD_RISKS
from converter.write.workbook.summary import CAUTION

WEEKDAY_NAMES = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


def _weekdays(days) -> str:
    return ", ".join(WEEKDAY_NAMES[d] for d in days)


#: The Settings used sheet's rows: each setting's key and its label, in sheet order (the
#: comparison reads a workbook's settings back by these labels).
SETTING_ROWS = {
    "start_date": "Start date",
    "time_unit": "Time unit",
    "working_days": "Working days",
    "hours_per_day": "Hours per day",
    "due": "Due",
    "iterations": "Iterations",
    "seed": "Seed",
    "distribution": "Distribution",
    "correlation": "Correlation",
    "confidence_levels": "Confidence levels",
    "paths": "Paths listed",
    "default_range": "Default range",
    "status_date": "Status date",
}


def write_settings(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(SETTINGS)
    st = a.schedule.settings
    ws.write_string(0, 0, "Settings used and where each came from", fmt.title)
    ws.write_string(
        1,
        0,
        "Order of precedence: command line, then the input's settings sheet, "
        "then pertbook's defaults.",
        fmt.subtitle,
    )
    for col, h in enumerate(["Setting", "Value", "Came from"]):
        ws.write_string(3, col, h, fmt.header)
    ws.set_column(0, 0, 22)
    ws.set_column(1, 1, 26)
    ws.set_column(2, 2, 58)
    values = {
        "start_date": st.start_date,
        "time_unit": st.time_unit,
        "working_days": _weekdays(st.working_days),
        "hours_per_day": st.hours_per_day,
        "due": st.due,
        "iterations": st.iterations,
        "seed": st.seed,
        "distribution": st.distribution,
        "correlation": st.correlation,
        "confidence_levels": ", ".join(f"{c:.0%}" for c in st.confidence_levels),
        "paths": st.paths,
    }
    if st.default_range is not None or a.schedule.ranges:
        values["default_range"] = st.default_range
    if st.status_date is not None:
        values["status_date"] = st.status_date
    items = [(key, SETTING_ROWS[key], value) for key, value in values.items()]
    r = 4
    for key, label, value in items:
        ws.write_string(r, 0, label, fmt.label)
        # values left-aligned, like their header and the text values beside them
        if value is None:
            ws.write_string(r, 1, "(none)", fmt.left)
        elif isinstance(value, dt.date):
            ws.write_number(r, 1, serial(value), fmt.date_left)
        elif isinstance(value, (int, float)):
            ws.write_number(r, 1, value, fmt.num_left)
        else:
            ws.write_string(r, 1, str(value), fmt.left)
        ws.write_string(r, 2, st.source_of(key), fmt.left)
        r += 1
    if a.calendar is not None:
        ws.write_string(r, 0, "Weekend code", fmt.label)
        ws.write_string(r, 1, a.calendar.weekend_code, fmt.left)
        ws.write_string(r, 2, "WORKDAY.INTL weekend string: Monday first, 1 = not worked", fmt.left)
        r += 1
    r += 1
    holidays_head = r
    ws.write_string(r, 0, "Holidays", fmt.header)
    ws.write_string(r, 1, "", fmt.header)
    r += 1
    hol_first = r
    for d in st.holidays:
        ws.write_number(r, 0, serial(d), fmt.date_left)
        r += 1
    if st.holidays:
        wb.define_name("Holidays", f"='{SETTINGS}'!$A${hol_first + 1}:$A${r}")
    else:
        ws.write_string(r, 0, "(none)")
    pages.set_up(ws, header_rows=(3, 3), keep=[(holidays_head, holidays_head + 1)])


METHOD_TEXT = [
    ("How the figures are computed", None),
    (
        "Expected time",
        "TE = (O + 4M + P) / 6 for each activity, from its optimistic (O), most "
        "likely (M) and pessimistic (P) estimates. Source: Malcolm, Roseboom, Clark & Fazar, "
        "Operations Research 7(5), 1959.",
    ),
    (
        "Variance",
        "((P - O) / 6)^2 per activity (same source): the spread is taken as one sixth of "
        "the range.",
    ),
    (
        "Link types",
        ", ".join(LINK_TYPES) + " (finish-to-start, start-to-start, finish-to-finish, "
        "start-to-finish). In the predecessors cell: A3 (FS), A3[+2] (lag 2), A3[-1] (lead 1), "
        "A3[SS], A3[SS+3], A3[FF-1]. Two links of different types may join one pair "
        "(A3[SS+2], A3[FF+3]: a ladder); each is a row of the Links sheet, bounds the "
        "passes on its own and counts as one link in the health checks.",
    ),
    (
        "Forward pass",
        "Early start (ES) = the largest start allowed by the incoming links, and "
        "never before 0 (the project start). FS: after the predecessor's finish + lag; SS: "
        "after its "
        "start + lag; FF: so that the finish comes after the predecessor's finish + lag; SF: "
        "so that "
        "the finish comes after the predecessor's start + lag. Early finish EF = ES + TE. "
        "Durations "
        "are fixed: an activity is not stretched or split.",
    ),
    (
        "Backward pass",
        "Late finish (LF) = the smallest finish allowed by the outgoing links, and "
        "never after the project finish (the largest EF). Late start LS = LF - TE.",
    ),
    (
        "Float",
        "Total float = LS - ES. Free float = the least slack over the activity's outgoing "
        "links, and to the project finish. Critical = total float zero "
        f"({f.TOLERANCE_WORDS}).",
    ),
    (
        "Project mean and variance",
        "The expected finish is the longest path on TE. Its variance is "
        "the sum of the variances of the activities on that path (an activity skipped by SS/FF "
        "links counts with its coefficient squared). Where several paths tie for longest, the one "
        "with the largest variance is used: the cautious choice.",
    ),
    (
        "Probability",
        "The project duration is taken as normal with that mean and variance (central "
        "limit theorem): z = (due - mean) / sd and P = NORM.S.DIST(z). The duration met at "
        "confidence c is mean + NORM.S.INV(c) x sd. With sd 0 the chance is 1 or 0.",
    ),
    (
        "Near-critical paths",
        "The K longest paths are found by a k-best dynamic programme over the "
        "network (Bellman & Kalaba 1960), not by listing every path. The chance that all listed "
        "paths meet the due date lies between the product of their chances (a lower bound because "
        "paths that share independent activities are positively associated: Esary, Proschan & "
        "Walkup 1967) and the smallest of them.",
    ),
    (
        "Monte Carlo simulation",
        "Each iteration samples every duration (PERT-beta with alpha = 1 + "
        "4(M-O)/(P-O), beta = 1 + 4(P-M)/(P-O) on [O, P] by default; or triangular, or uniform), "
        "runs the forward and backward pass and records the finish and which activities were "
        "critical. Criticality index = share of iterations in which an activity was critical. "
        "Sensitivity = Spearman rank correlation of its duration with the project duration. "
        "Correlation within a group is induced on ranks (Iman & Conover 1982). Every duration "
        "is the inverse distribution function of one random number u, so an iteration is "
        "fully described by its random numbers (correlation re-orders them, not the "
        "durations); the Trace sheet recomputes chosen iterations from theirs, named risks "
        "(occurrence and impact random numbers, the delays added) and a project in flight "
        "(finished work fixed, remaining work sampled, the start floors) included. The "
        "PERT-beta "
        "inverse is interpolated from a table of the exact one (scipy's betaincinv): the "
        f"sampled duration is within {ACCURACY:g} x (P - O) of the exact quantile over the "
        "whole range of u, tails included; samples are kept to single precision (about 7 "
        "digits).",
    ),
    (
        "Why simulation differs",
        "Merge bias: where paths merge, the finish is the latest of several "
        "uncertain paths; the mean of a maximum is above the largest mean, so the single-path PERT "
        "figure is optimistic (MacCrimmon & Ryavec 1964). The spread differs too: the PERT-beta's "
        "variance is (mu - O)(P - mu) / 7, which the rounder ((P - O) / 6)^2 only approximates, "
        "and the finish's spread is shaped by every path, not the critical one alone.",
    ),
    (
        "Calendar",
        "With a start date, time 0 is the start of the first working day on or after it. "
        "A start at offset t falls on working day INT(t) + 1; a finish at offset t is at the "
        "END of "
        "working day ROUNDUP(t) (a finish at 0 is on day 1). A start never falls after its finish: "
        "a milestone (zero duration) starts and finishes on the same date, the working day on "
        "which the work before it is finished (the first working day for a milestone at the "
        "start). Dates are WORKDAY.INTL formulas with "
        "the weekend code and the holiday list on the Settings used sheet. Weeks count as working "
        "weeks; calendar days ignore weekends and holidays. In working hours a working day "
        "holds Hours per day hours (Settings used) and dates show the day, not the hour: work "
        "at hour offset t falls on working day INT(t / hours per day) + 1, a finish at the end "
        "of hour t on working day ROUNDUP(t / hours per day).",
    ),
    (
        "Assumptions",
        "Activity durations are independent unless grouped for correlation; the "
        "three-point estimates describe beta-shaped durations; the project duration is normal in "
        "the analytic view; the single-path view underestimates the finish when parallel paths "
        "merge; the logic (links) is complete and correct; resources are unlimited.",
    ),
    ("Caution", CAUTION),
]


#: The Method sheet's word on WBS summary rows (only when the schedule has them).
SUMMARY_METHOD = (
    "Summary rows (WBS)",
    "A row whose WBS code is the parent of other rows' codes (1.2 of 1.2.1) is a summary: it "
    "is not scheduled. Its start is the MIN of the early starts under it, its finish the MAX "
    "of their early finishes, its span the finish less the start. A link to a summary is a "
    "link to each of its activities with no predecessor inside it; a link from a summary, "
    "from each of its activities with no successor inside it (the Links sheet's Via summary "
    "column). Common practice.",
)


def _method_text(a) -> list[tuple[str, str | None]]:
    """The Method sheet's rows; the paragraph on ranges after Variance when ranges were used."""
    if not a.schedule.ranges:
        return METHOD_TEXT
    at = next(k for k, (label, _) in enumerate(METHOD_TEXT) if label == "Variance") + 1
    return [*METHOD_TEXT[:at], RANGE_METHOD_ROW, *METHOD_TEXT[at:]]


#: Widths of the Method sheet's two columns (characters): one landscape page at full size.
METHOD_WIDTHS = (22, 84)


def units_text(settings) -> str:
    """The Method sheet's note on durations and lags written with a unit: the factors used."""
    words = conversion_words(settings.time_unit, settings.hours_per_day, len(settings.working_days))
    return (
        "An estimate, target or lag may be typed with a unit: hours (16h, 4 hrs), days (3d, "
        "3 days) or weeks (2w, 1.5 wks, 2 weeks); a bare number is in the schedule's time "
        f"unit. Factors used, {words}. A day is one day of the schedule's calendar, a week "
        "its working days (7 days for calendar days). The Activities and Links sheets show "
        "the converted numbers the formulas use; Input as read keeps the text as typed. "
        "Months and years are refused: the working time in them varies."
    )


def write_method(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(METHOD)
    label_width, text_width = METHOD_WIDTHS
    ws.set_column(0, 0, label_width)
    ws.set_column(1, 1, text_width)
    items = list(_method_text(a))
    if a.summaries is not None:
        items.insert(
            next(k for k, (lb, _) in enumerate(items) if lb == "Assumptions"), SUMMARY_METHOD
        )
    at = next(k for k, (label, _) in enumerate(items) if label == "Calendar") + 1
    items.insert(at, ("Units", units_text(a.schedule.settings)))
    items = items[:-2] + progress_cols.method_rows(a) + items[-2:]
    if a.risk_view is not None:  # before the assumptions and the caution, which close it
        items = items[:-2] + METHOD_RISKS + items[-2:]
    for r, (label, text) in enumerate(items):
        if text is None:
            ws.write_string(r, 0, label, fmt.title)
            continue
        ws.write_string(r, 0, label, fmt.label_top)
        ws.write_string(r, 1, text, fmt.caution if label == "Caution" else fmt.wrap)
        ws.set_row(r, rows.row_height([(text, text_width), (label, label_width, 11.0, True)]))
    pages.set_up(ws)


#: Widest column of the Input as read sheet, in characters; longer text wraps.
INPUT_MAX_WIDTH = 50.0

#: Rows sampled to size the Input as read columns.
INPUT_SAMPLE = 2000


def _shown(v) -> str:
    """Roughly how a value of the input shows in a cell (for sizing its column)."""
    if isinstance(v, (dt.date, dt.datetime)):
        return "0000-00-00"
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def _input_widths(headers: list[str], values: list[list[object]]) -> list[float]:
    """Each column as wide as its header and values need: 6 to INPUT_MAX_WIDTH characters."""
    widths = []
    for col, head in enumerate(headers):
        need = rows.text_width(head, bold=True)
        for row in values[:INPUT_SAMPLE]:
            if col < len(row) and row[col] is not None:
                need = max(need, rows.text_width(_shown(row[col])))
        widths.append(min(INPUT_MAX_WIDTH, max(6.0, need + 1.0)))
    return widths


#: Rows of the input that one sheet holds under its three head rows (a sheet has 1,048,576).
INPUT_ROWS_PER_SHEET = 1_048_576 - 3


def write_input(wb, fmt, a, lay: Layout) -> None:
    """The input as read; a sheet of more rows than one sheet holds goes on in
    "Input as read (2)", "(3)", ... so no row is lost."""
    raw = a.schedule.raw
    widths = _input_widths(raw.headers, raw.rows)
    chunks = range(0, max(1, len(raw.rows)), INPUT_ROWS_PER_SHEET)
    for n, first in enumerate(chunks):
        name = INPUT if n == 0 else f"{INPUT} ({n + 1})"
        ws = wb.add_worksheet(name)
        _input_head(ws, fmt, raw, widths, n)
        _input_rows(ws, fmt, raw.rows[first : first + INPUT_ROWS_PER_SHEET], widths)
        ws.freeze_panes(3, 1)
        pages.set_up(ws, header_rows=(2, 2), title_cols=(0, min(1, len(widths) - 1)))


def _input_head(ws, fmt, raw, widths: list[float], n: int) -> None:
    ws.write_string(0, 0, "Input as read" if n == 0 else f"Input as read, part {n + 1}", fmt.title)
    note = (
        f"Values only, from {raw.sheet} as the converter read it; the header is on sheet "
        f"row {raw.header_row}."
    )
    if len(widths) > 1:
        ws.merge_range(1, 0, 1, len(widths) - 1, note, fmt.subtitle_wrap)
    else:
        ws.write_string(1, 0, note, fmt.subtitle_wrap)
    ws.set_row(1, rows.row_height([(note, rows.merged_width(widths))], minimum=15.0))
    for col, (h, w) in enumerate(zip(raw.headers, widths, strict=True)):
        ws.write_string(2, col, h, fmt.header)
        ws.set_column(col, col, w)
    ws.set_row(2, rows.row_height([(h, w, 11.0, True) for h, w in zip(raw.headers, widths)]))


def _input_rows(ws, fmt, input_rows, widths: list[float]) -> None:
    """Every value left-aligned under its left-aligned header; text wraps in its column."""
    for k, row in enumerate(input_rows):
        r = 3 + k
        wrapped = []
        for col, v in enumerate(row):
            if v is None:
                continue
            if isinstance(v, bool):
                ws.write_boolean(r, col, v, fmt.left)
            elif isinstance(v, (int, float)):
                ws.write_number(r, col, v, fmt.num_left)
            elif isinstance(v, dt.datetime):
                ws.write_number(
                    r,
                    col,
                    serial(v.date())
                    + (v - dt.datetime.combine(v.date(), dt.time())).total_seconds() / 86400,
                    fmt.date_left,
                )
            elif isinstance(v, dt.date):
                ws.write_number(r, col, serial(v), fmt.date_left)
            else:
                text = str(v)
                ws.write_string(r, col, text, fmt.wrap)
                if col < len(widths) and 2.0 * len(text) > widths[col]:  # may not fit
                    wrapped.append((text, widths[col]))
        if wrapped:
            height = rows.row_height(wrapped, minimum=15.0)
            if height > 15.0:
                ws.set_row(r, height)


#: Widths of the Warnings sheet's columns (characters).
WARNING_WIDTHS = (16, 12, 56, 44)


def write_warnings(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(WARNINGS)
    s = a.schedule
    ws.write_string(0, 0, "Warnings and notes on the input", fmt.title)
    for col, (h, w) in enumerate(
        zip(["Where", "Activity", "Warning", "What to do"], WARNING_WIDTHS, strict=True)
    ):
        ws.write_string(2, col, h, fmt.header)
        ws.set_column(col, col, w)
    r = 3
    for p in s.warnings:
        cells = [
            (p.where, WARNING_WIDTHS[0]),
            (p.activity or "", WARNING_WIDTHS[1]),
            (p.message, WARNING_WIDTHS[2]),
            (p.fix or "", WARNING_WIDTHS[3]),
        ]
        for col, (text, _) in enumerate(cells):
            ws.write_string(r, col, text, fmt.wrap)
        ws.set_row(r, rows.row_height(cells, minimum=15.0))
        r += 1
    if not s.warnings:
        ws.write_string(r, 0, "No warnings.")
        r += 1
    r += 1
    width = rows.merged_width(WARNING_WIDTHS)
    for note in s.notes:
        ws.merge_range(r, 0, r, len(WARNING_WIDTHS) - 1, note, fmt.wrap)
        ws.set_row(r, rows.row_height([(note, width)], minimum=15.0))
        r += 1
    pages.set_up(ws, header_rows=(2, 2))
