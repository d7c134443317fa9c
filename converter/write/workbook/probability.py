"""The Probability sheet: the finish-probability curve, chance of finishing by each
duration, durations at confidence, and interim targets.

The chart comes first, across the page: both curves over their whole course (the table
spans the analytic and the simulated P1 to P99) and the due date as a vertical line.
"""

from __future__ import annotations

import math

from converter.analyse.figures import nice_step
from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import PROBABILITY, Layout
from converter.write.workbook.rows import merged_width, row_height, rows_spanned
from converter.write.workbook.styles import PALETTE, TABLE_HEAD_SIZE, TITLE_ROW

#: Columns: finish table A-D, a gap, confidence table F-J.
WIDTHS = [10.0, 11.0, 12.0, 12.0, 3.0, 11.0, 11.0, 11.0, 11.0, 11.0]
CONF = 5  # first column of the confidence table
CHART_TOP = 2  # the chart's row
CHART_SIZE = (780, 340)  # pixels
TABLE_HEAD = CHART_TOP + rows_spanned(CHART_SIZE[1]) + 1  # the tables' header, below the chart
INTRO = (
    "Analytic columns are NORM.S.DIST / NORM.S.INV formulas on the critical path's mean "
    "and sd; simulated columns are values from the Monte Carlo run (see Simulation)."
)
FINISH_HEADS = [
    "Duration",
    "Date (finish by end of)",
    "Chance of finishing by (analytic)",
    "Chance of finishing by (simulated)",
]
CONF_HEADS = [
    "Confidence",
    "Duration (analytic)",
    "Date (analytic)",
    "Duration (simulated)",
    "Date (simulated)",
]


def _heads(ws, fmt, row: int, first: int, heads: list[str]) -> list[tuple]:
    """Heads centred over their numbers, so neighbouring heads do not run together."""
    cells = []
    for k, h in enumerate(heads):
        ws.write_string(row, first + k, h, fmt.th_center)
        cells.append((h, WIDTHS[first + k], TABLE_HEAD_SIZE, True))
    return cells


def write_probability(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(PROBABILITY)
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.write_string(0, 0, "Probability of finishing", fmt.title)
    ws.set_row(0, TITLE_ROW)
    ws.merge_range(1, 0, 1, len(WIDTHS) - 1, INTRO, fmt.subtitle_wrap)
    ws.set_row(1, row_height([(INTRO, merged_width(WIDTHS))]))
    head = TABLE_HEAD
    cells = _heads(ws, fmt, head, 0, FINISH_HEADS) + _heads(ws, fmt, head, CONF, CONF_HEADS)
    ws.set_row(head, row_height(cells))
    last = _write_finish_table(ws, fmt, a, head + 1)
    end = _write_confidence_table(ws, fmt, a, head + 1)
    due_rows = _write_due_line(ws, fmt, a, end + 2)
    chart = _chart(wb, a, head + 1, last, due_rows)
    ws.insert_chart(CHART_TOP, 0, chart, {"x_offset": 4, "y_offset": 6})
    r = max(last, end + 5) + 2
    if a.targets:
        r = _write_targets(ws, fmt, a, lay, r)
    pages.set_up(ws, header_rows=(head, head), keep=[(0, head)])


def _write_finish_table(ws, fmt, a, first: int) -> int:
    """Chance of finishing by each duration; returns the last row."""
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    r = first
    for t, p_an, p_sim, when in a.finish_table:
        ws.write_number(r, 0, t, fmt.num)
        if when is not None:
            ws.write_formula(
                r,
                1,
                "=" + cal.finish_date_formula(f.ref(r, 0), "ProjectStart", holidays),
                fmt.date,
                serial(when),
            )
        ws.write_formula(r, 2, f.p_meet(f.ref(r, 0), "ProjectMean", "ProjectSD"), fmt.prob2, p_an)
        if p_sim is not None:
            ws.write_number(r, 3, p_sim, fmt.prob2)
        r += 1
    return r - 1


def _write_confidence_table(ws, fmt, a, first: int) -> int:
    """Durations (and dates) at each confidence level; returns the last row."""
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    c0 = CONF
    r = first
    for conf, d_an, d_sim, date_an, date_sim in a.confidence_table:
        ws.write_number(r, c0, conf, fmt.prob)
        ws.write_formula(r, c0 + 1, f.duration_at(f.ref(r, c0)), fmt.num, d_an)
        if date_an is not None:
            ws.write_formula(
                r,
                c0 + 2,
                "=" + cal.finish_date_formula(f.ref(r, c0 + 1), "ProjectStart", holidays),
                fmt.date,
                serial(date_an),
            )
        if d_sim is not None:
            ws.write_number(r, c0 + 3, d_sim, fmt.num)
            if date_sim is not None:
                ws.write_formula(
                    r,
                    c0 + 4,
                    "=" + cal.finish_date_formula(f.ref(r, c0 + 3), "ProjectStart", holidays),
                    fmt.date,
                    serial(date_sim),
                )
        r += 1
    return r - 1


def _write_due_line(ws, fmt, a, top: int) -> tuple[int, int] | None:
    """Two points, (due, 0) and (due, 1), that draw the due date on the chart."""
    if a.due is None:
        return None
    ws.merge_range(top, CONF, top, CONF + 1, "Due date line (chart)", fmt.th)
    ws.write_string(top, CONF + 2, "Chance", fmt.th_center)
    for k in (0, 1):
        ws.write_formula(top + 1 + k, CONF + 1, "=DueDuration", fmt.num, a.due)
        ws.write_number(top + 1 + k, CONF + 2, float(k), fmt.prob)
    return top + 1, top + 2


def _chart(wb, a, first: int, last: int, due_rows):
    sim = a.simulation
    chart = wb.add_chart({"type": "scatter", "subtype": "straight"})
    chart.add_series(
        {
            "name": "Critical path (analytic, normal)",
            "categories": [PROBABILITY, first, 0, last, 0],
            "values": [PROBABILITY, first, 2, last, 2],
            "line": {"color": PALETTE["ink"], "width": 2.25},
        }
    )
    if sim is not None:
        chart.add_series(
            {
                "name": "Simulated (all paths)",
                "categories": [PROBABILITY, first, 0, last, 0],
                "values": [PROBABILITY, first, 3, last, 3],
                "line": {"color": PALETTE["moss"], "width": 2.25, "dash_type": "dash"},
            }
        )
    if due_rows is not None:
        top, bottom = due_rows
        when = (
            a.due_date.isoformat()
            if a.due_date is not None
            else f"{a.due:g} {a.schedule.settings.time_unit}"
        )
        chart.add_series(
            {
                "name": f"Due date ({when})",
                "categories": [PROBABILITY, top, CONF + 1, bottom, CONF + 1],
                "values": [PROBABILITY, top, CONF + 2, bottom, CONF + 2],
                "line": {"color": PALETTE["clay"], "width": 1.75, "dash_type": "long_dash"},
            }
        )
    grid = {"visible": True, "line": {"color": "#E3E3E3"}}
    chart.set_title(
        {"name": "Chance of finishing by each duration", "name_font": {"size": 12, "bold": True}}
    )
    low, high = a.finish_table[0].duration, a.finish_table[-1].duration
    step = nice_step(high - low, rows=8)  # round ticks over the table's range
    chart.set_x_axis(
        {
            "name": f"Duration ({a.schedule.settings.time_unit})",
            "min": math.floor(low / step) * step,
            "max": math.ceil(high / step) * step,
            "major_unit": step,
            "major_gridlines": grid,
        }
    )
    chart.set_y_axis(
        {
            "name": "Chance of finishing by then",
            "min": 0,
            "max": 1,
            "num_format": "0%",
            "major_gridlines": grid,
        }
    )
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": CHART_SIZE[0], "height": CHART_SIZE[1]})
    return chart


def _write_targets(ws, fmt, a, lay: Layout, r: int) -> int:
    cal = a.calendar
    ws.write_string(r, 0, "Interim targets", fmt.title)
    ws.set_row(r, TITLE_ROW)
    r += 1
    heads = [
        "Activity",
        "Target (time units)",
        "Target date",
        "Expected early finish",
        "Variance of the longest path to it",
        "Chance of meeting (analytic)",
        "Chance of meeting (simulated)",
    ]
    cols = [0, 1, 2, 3, 5, 6, 7]  # past the gap column
    for col, h in zip(cols, heads):
        ws.write_string(r, col, h, fmt.th if col == 0 else fmt.th_center)
    ws.set_row(r, row_height([(h, WIDTHS[c], TABLE_HEAD_SIZE, True) for c, h in zip(cols, heads)]))
    r += 1
    for t in a.targets:
        ws.write_string(r, 0, a.ids[t.activity])
        if t.target_date is not None and cal is not None:
            holidays = "Holidays" if cal.holidays else None
            ws.write_number(r, 2, serial(t.target_date), fmt.input_date)
            ws.write_formula(
                r,
                1,
                "=" + cal.offset_of_formula(f.ref(r, 2), "ProjectStart", holidays),
                fmt.num,
                t.target,
            )
        else:
            ws.write_number(r, 1, t.target, fmt.input_num)
        ws.write_formula(r, 3, "=" + lay.cell(t.activity, "ef", True), fmt.num, t.mean)
        ws.write_number(r, 5, t.variance, fmt.num4)
        ws.write_formula(
            r, 6, f.p_meet(f.ref(r, 1), f.ref(r, 3), f"SQRT({f.ref(r, 5)})"), fmt.prob, t.p_analytic
        )
        if t.p_simulated is not None:
            ws.write_number(r, 7, t.p_simulated, fmt.prob)
        r += 1
    return r
