"""Supporting sheets: health check, settings used, method, input as read, warnings."""

from __future__ import annotations

import datetime as dt

from converter.model import LINK_TYPES
from converter.write.workbook import formulas as f
from converter.write.workbook.activities import serial
from converter.write.workbook.formulas import ref
from converter.write.workbook.layout import HEALTH, INPUT, METHOD, SETTINGS, WARNINGS, Layout
from converter.write.workbook.summary import CAUTION

WEEKDAY_NAMES = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


#: Checks the sheet recounts with COUNTIF over the Links table: key -> (column, criterion).
_COUNTED_ON_LINKS = {
    "leads": ("lag", '"<0"'),
    "lags": ("lag", '">0"'),
}

#: Checks of a value per activity: key -> the Activities column holding the value.
_VALUE_COLUMN = {"high_float": "tf", "high_duration": "te"}


def _count_formula(c, a, lay: Layout) -> str | None:
    """A COUNTIF that recounts the check from the Activities / Links tables, if it can."""
    links = a.net.link_count
    if c.key in _COUNTED_ON_LINKS and links:
        key, crit = _COUNTED_ON_LINKS[c.key]
        return f"=COUNTIF({lay.link_column(key)},{crit})"
    if c.key == "link_types" and links:
        col = lay.link_column("type")
        return f'=COUNTA({col})-COUNTIF({col},"FS")'
    if c.above is not None and c.key in _VALUE_COLUMN:
        above = c.above
        return f.count_above(lay.column(_VALUE_COLUMN[c.key]), above.days, above.tolerance,
                             above.days_per_unit)
    return None


def write_health(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(HEALTH)
    ws.write_string(0, 0, "Schedule health check: can the logic be trusted?", fmt.title)
    failed = sum(1 for c in a.checks if not c.passed)
    ws.write_string(1, 0, f"{failed} of {len(a.checks)} checks failed. Counts of link types, "
                    "lags, long floats and long durations are COUNTIF formulas over the "
                    "Activities and Links sheets; the others are counted by pertbook, with "
                    "each offender listed so it can be looked up.", fmt.subtitle)
    heads = ["Group", "Check", "Threshold", "Count", "Out of", "Percent", "Result",
             "Offending activities", "Why it matters", "Source of the threshold"]
    for col, h in enumerate(heads):
        ws.write_string(3, col, h, fmt.header)
    widths = [10, 34, 22, 8, 8, 9, 8, 40, 50, 40]
    for col, w in enumerate(widths):
        ws.set_column(col, col, w)
    for k, c in enumerate(a.checks):
        r = 4 + k
        ws.write_string(r, 0, c.group)
        ws.write_string(r, 1, c.name, fmt.wrap)
        ws.write_string(r, 2, c.threshold, fmt.wrap)
        formula = _count_formula(c, a, lay)
        if formula:
            ws.write_formula(r, 3, formula, fmt.int, c.count)
        else:
            ws.write_number(r, 3, c.count, fmt.int)
        if c.out_of is not None and (c.limit.share_of is not None or c.percent is not None):
            ws.write_number(r, 4, c.out_of, fmt.int)
        if c.percent is not None:
            ws.write_formula(r, 5, f"={ref(r, 3)}/{ref(r, 4)}", fmt.prob, c.percent / 100.0)
        verdict = "pass" if c.passed else "FAIL"
        style = fmt.good if c.passed else fmt.flag
        if c.limit.share_of is not None:
            ws.write_formula(r, 6, f.share_passes(ref(r, 3), ref(r, 4), c.limit.most), style,
                             verdict)
        else:
            ws.write_formula(r, 6, f.count_passes(ref(r, 3), c.limit.most), style, verdict)
        shown = ", ".join(c.activities[:200])
        if len(c.activities) > 200:
            shown += f", ... ({len(c.activities)} in all)"
        if c.detail:
            shown = (shown + " " if shown else "") + f"({c.detail})"
        ws.write_string(r, 7, shown, fmt.wrap)
        ws.write_string(r, 8, c.matters, fmt.wrap)
        ws.write_string(r, 9, c.source, fmt.wrap)
    ws.freeze_panes(4, 2)


def _weekdays(days) -> str:
    return ", ".join(WEEKDAY_NAMES[d] for d in days)


def write_settings(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(SETTINGS)
    st = a.schedule.settings
    ws.write_string(0, 0, "Settings used and where each came from", fmt.title)
    ws.write_string(1, 0, "Order of precedence: command line, then the input's settings sheet, "
                    "then pertbook's defaults.", fmt.subtitle)
    for col, h in enumerate(["Setting", "Value", "Came from"]):
        ws.write_string(3, col, h, fmt.header)
    ws.set_column(0, 0, 22)
    ws.set_column(1, 1, 26)
    ws.set_column(2, 2, 40)
    due = st.due
    rows = [
        ("start_date", "Start date", st.start_date),
        ("time_unit", "Time unit", st.time_unit),
        ("working_days", "Working days", _weekdays(st.working_days)),
        ("due", "Due", due),
        ("iterations", "Iterations", st.iterations),
        ("seed", "Seed", st.seed),
        ("distribution", "Distribution", st.distribution),
        ("correlation", "Correlation", st.correlation),
        ("confidence_levels", "Confidence levels",
         ", ".join(f"{c:.0%}" for c in st.confidence_levels)),
        ("paths", "Paths listed", st.paths),
    ]
    r = 4
    for key, label, value in rows:
        ws.write_string(r, 0, label, fmt.label)
        if value is None:
            ws.write_string(r, 1, "(none)")
        elif isinstance(value, dt.date):
            ws.write_number(r, 1, serial(value), fmt.date)
        elif isinstance(value, (int, float)):
            ws.write_number(r, 1, value)
        else:
            ws.write_string(r, 1, str(value))
        ws.write_string(r, 2, st.source_of(key))
        r += 1
    if a.calendar is not None:
        ws.write_string(r, 0, "Weekend code", fmt.label)
        ws.write_string(r, 1, a.calendar.weekend_code)
        ws.write_string(r, 2, "WORKDAY.INTL weekend string: Monday first, 1 = not worked")
        r += 1
    r += 1
    ws.write_string(r, 0, "Holidays", fmt.header)
    ws.write_string(r, 1, "", fmt.header)
    r += 1
    hol_first = r
    for d in st.holidays:
        ws.write_number(r, 0, serial(d), fmt.date)
        r += 1
    if st.holidays:
        wb.define_name("Holidays", f"='{SETTINGS}'!$A${hol_first + 1}:$A${r}")
    else:
        ws.write_string(r, 0, "(none)")


METHOD_TEXT = [
    ("How the figures are computed", None),
    ("Expected time", "TE = (O + 4M + P) / 6 for each activity, from its optimistic (O), most "
     "likely (M) and pessimistic (P) estimates. Source: Malcolm, Roseboom, Clark & Fazar, "
     "Operations Research 7(5), 1959."),
    ("Variance", "((P - O) / 6)^2 per activity (same source): the spread is taken as one sixth of "
     "the range."),
    ("Forward pass", "Early start (ES) = the largest start allowed by the incoming links, and "
     "never before 0 (the project start). FS: after the predecessor's finish + lag; SS: after its "
     "start + lag; FF: so that the finish comes after the predecessor's finish + lag; SF: so that "
     "the finish comes after the predecessor's start + lag. Early finish EF = ES + TE. Durations "
     "are fixed: an activity is not stretched or split."),
    ("Backward pass", "Late finish (LF) = the smallest finish allowed by the outgoing links, and "
     "never after the project finish (the largest EF). Late start LS = LF - TE."),
    ("Float", "Total float = LS - ES. Free float = the least slack over the activity's outgoing "
     "links, and to the project finish. Critical = total float zero "
     f"({f.TOLERANCE_WORDS})."),
    ("Project mean and variance", "The expected finish is the longest path on TE. Its variance is "
     "the sum of the variances of the activities on that path (an activity skipped by SS/FF "
     "links counts with its coefficient squared). Where several paths tie for longest, the one "
     "with the largest variance is used: the cautious choice."),
    ("Probability", "The project duration is taken as normal with that mean and variance (central "
     "limit theorem): z = (due - mean) / sd and P = NORM.S.DIST(z). The duration met at "
     "confidence c is mean + NORM.S.INV(c) x sd. With sd 0 the chance is 1 or 0."),
    ("Near-critical paths", "The K longest paths are found by a k-best dynamic programme over the "
     "network (Bellman & Kalaba 1960), not by listing every path. The chance that all listed "
     "paths meet the due date lies between the product of their chances (a lower bound because "
     "paths that share independent activities are positively associated: Esary, Proschan & "
     "Walkup 1967) and the smallest of them."),
    ("Monte Carlo simulation", "Each iteration samples every duration (PERT-beta with alpha = 1 + "
     "4(M-O)/(P-O), beta = 1 + 4(P-M)/(P-O) on [O, P] by default; or triangular, or uniform), "
     "runs the forward and backward pass and records the finish and which activities were "
     "critical. Criticality index = share of iterations in which an activity was critical. "
     "Sensitivity = Spearman rank correlation of its duration with the project duration. "
     "Correlation within a group is induced on ranks (Iman & Conover 1982)."),
    ("Why simulation differs", "Merge bias: where paths merge, the finish is the latest of several "
     "uncertain paths; the mean of a maximum is above the largest mean, so the single-path PERT "
     "figure is optimistic (MacCrimmon & Ryavec 1964). The spread differs too: the PERT-beta's "
     "variance is (mu - O)(P - mu) / 7, which the rounder ((P - O) / 6)^2 only approximates, "
     "and the finish's spread is shaped by every path, not the critical one alone."),
    ("Calendar", "With a start date, time 0 is the start of the first working day on or after it. "
     "A start at offset t falls on working day INT(t) + 1; a finish at offset t is at the END of "
     "working day ROUNDUP(t) (a finish at 0 is on day 1). Dates are WORKDAY.INTL formulas with "
     "the weekend code and the holiday list on the Settings used sheet. Weeks count as working "
     "weeks; calendar days ignore weekends and holidays."),
    ("Assumptions", "Activity durations are independent unless grouped for correlation; the "
     "three-point estimates describe beta-shaped durations; the project duration is normal in "
     "the analytic view; the single-path view underestimates the finish when parallel paths "
     "merge; the logic (links) is complete and correct; resources are unlimited."),
    ("Caution", CAUTION),
]


def write_method(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(METHOD)
    ws.set_column(0, 0, 26)
    ws.set_column(1, 1, 110)
    r = 0
    for label, text in METHOD_TEXT:
        if text is None:
            ws.write_string(r, 0, label, fmt.title)
        else:
            ws.write_string(r, 0, label, fmt.label)
            ws.write_string(r, 1, text, fmt.caution if label == "Caution" else fmt.wrap)
            ws.set_row(r, 15 * max(1, len(text) // 100 + 1))
        r += 1
    r += 1
    ws.write_string(r, 0, "Link types", fmt.label)
    ws.write_string(r, 1, ", ".join(LINK_TYPES) + " (finish-to-start, start-to-start, "
                    "finish-to-finish, start-to-finish). In the predecessors cell: A3 (FS), "
                    "A3[+2] (lag 2), A3[-1] (lead 1), A3[SS], A3[SS+3], A3[FF-1].", fmt.wrap)


def write_input(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(INPUT)
    raw = a.schedule.raw
    ws.write_string(0, 0, f"Input as read from {raw.sheet} (values only; header on sheet row "
                    f"{raw.header_row})", fmt.title)
    for col, h in enumerate(raw.headers):
        ws.write_string(2, col, h, fmt.header)
    ws.set_column(0, max(len(raw.headers) - 1, 0), 14)
    for k, row in enumerate(raw.rows):
        r = 3 + k
        for col, v in enumerate(row):
            if v is None:
                continue
            if isinstance(v, bool):
                ws.write_boolean(r, col, v)
            elif isinstance(v, (int, float)):
                ws.write_number(r, col, v)
            elif isinstance(v, dt.datetime):
                ws.write_number(r, col, serial(v.date()) + (v - dt.datetime.combine(
                    v.date(), dt.time())).total_seconds() / 86400, fmt.date)
            elif isinstance(v, dt.date):
                ws.write_number(r, col, serial(v), fmt.date)
            else:
                ws.write_string(r, col, str(v))


def write_warnings(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(WARNINGS)
    s = a.schedule
    ws.write_string(0, 0, "Warnings and notes on the input", fmt.title)
    for col, h in enumerate(["Where", "Activity", "Warning", "What to do"]):
        ws.write_string(2, col, h, fmt.header)
    ws.set_column(0, 1, 16)
    ws.set_column(2, 3, 70)
    r = 3
    for p in s.warnings:
        ws.write_string(r, 0, p.where)
        ws.write_string(r, 1, p.activity or "")
        ws.write_string(r, 2, p.message, fmt.wrap)
        ws.write_string(r, 3, p.fix or "", fmt.wrap)
        r += 1
    if not s.warnings:
        ws.write_string(r, 0, "No warnings.")
        r += 1
    r += 1
    for note in s.notes:
        ws.write_string(r, 0, note)
        r += 1
