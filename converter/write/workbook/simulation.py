"""The Simulation sheet: run settings, simulated figures (values), histogram and
driver charts.

Page 1 states the run and its results; the histogram, the most often critical activities
and the risk drivers each begin a page, a full-width chart above its table (the drivers'
table, listing every activity, last: its head repeats on the pages it runs over). The due
date is a dashed vertical line where it falls, named with its date in the key, not a bar;
activities are labelled on the charts by ID and description, shortened to one line.
"""

from __future__ import annotations

import math
from pathlib import Path

from converter.values import printable
from converter.write.workbook import pages
from converter.write.workbook.layout import SIMULATION, Layout
from converter.write.workbook.rows import (
    fit_row,
    merged_width,
    row_height,
    rows_spanned,
    shorten,
)
from converter.write.workbook.styles import PALETTE, TABLE_HEAD_SIZE, TITLE_ROW
from converter.write.workbook.trace import trace_sentences

TOP_DRIVERS = 15
#: Columns: labels / bins / activities, then figures; E-G also hold the percentiles.
WIDTHS = [52.0, 11.0, 11.0, 11.0, 11.0, 11.0, 11.0]
LAST = len(WIDTHS) - 1
CHART_WIDTH = 850  # pixels: columns A-G are 861
HISTOGRAM_HEIGHT = 340
LABEL_CHARS = 34  # an activity's label on a chart
DUE_LINE_OVER = 1.1  # the due-date line rises this far above the tallest bar
TABLE_START_ROWS = 3  # rows kept on one page with a table's head


def reproduce_command(a) -> str:
    """The command that reruns this simulation: iterations, seed and distribution always,
    plus every other setting that came from the command line (numbers in full)."""
    sim = a.simulation
    st = a.schedule.settings
    parts = [
        "pertbook convert",
        f'"{printable(Path(a.schedule.input_file).name)}"',
        f"--iterations {sim.iterations}",
        f"--seed {sim.seed}",
    ]
    if sim.distribution in ("pert", "triangular", "uniform"):
        parts.append(f"--distribution {sim.distribution}")
    parts.append(f"--correlation {sim.correlation!r}")
    given = {k for k, v in st.sources.items() if v == "command line"}
    if "start_date" in given and st.start_date is not None:
        parts.append(f"--start-date {st.start_date.isoformat()}")
    if "due" in given and st.due is not None:
        due = st.due.isoformat() if hasattr(st.due, "isoformat") else repr(float(st.due))
        parts.append(f"--due {due}")
    if "default_range" in given and st.default_range is not None:  # it makes estimates
        parts.append(f'--default-range "{printable(st.default_range)}"')
    if "time_unit" in given:  # the unit the durations were converted to
        parts.append(f'--time-unit "{st.time_unit}"')
    if "hours_per_day" in given:
        parts.append(f"--hours-per-day {st.hours_per_day!r}")
    return " ".join(parts)


def _heads(ws, fmt, row: int, heads: list[tuple[int, str, str]]) -> None:
    """Header cells ``(column, text, align)``; the row grows for wrapped heads."""
    styles = {"l": fmt.th, "r": fmt.th_center, "c": fmt.th_center, "i": fmt.th_indent}
    for col, text, how in heads:
        ws.write_string(row, col, text, styles[how])
    ws.set_row(row, row_height([(t, WIDTHS[c], TABLE_HEAD_SIZE, True) for c, t, _ in heads]))


def _label(a, i: int) -> str:
    return f"{a.ids[i]} {a.schedule.activities[i].name}".strip()


def write_simulation(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(SIMULATION)
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.write_string(0, 0, "Monte Carlo simulation", fmt.title)
    ws.set_row(0, TITLE_ROW)
    ws.write_string(
        1,
        0,
        "These figures are values from the run below, not formulas: rerun "
        "the command to reproduce every one of them.",
        fmt.subtitle,
    )
    r = _write_run(ws, fmt, a, 3)
    r = _write_results(ws, fmt, a, r + 1)
    starts = [r + 1]
    r = _write_histogram(wb, ws, fmt, a, r + 1)
    starts.append(r + 2)
    r = _write_most_critical(wb, ws, fmt, a, r + 2)
    starts.append(r + 2)
    head = _write_drivers(wb, ws, fmt, a, r + 2)
    # each table's head stays with its first rows (a page break never leaves it alone
    # under the chart)
    heads = [
        starts[0] + 2 + rows_spanned(HISTOGRAM_HEIGHT),
        starts[1] + 2 + rows_spanned(_bar_height(min(TOP_DRIVERS, len(a.ids)))),
        head,
    ]
    pages.set_up(
        ws, starts=starts, header_rows=(head, head), keep=[(h, h + TABLE_START_ROWS) for h in heads]
    )


def _write_run(ws, fmt, a, r: int) -> int:
    """The run's settings and the command that reproduces it; returns the next row."""
    sim = a.simulation
    rows = [
        ("Iterations", sim.iterations, fmt.int),
        ("Seed", sim.seed, fmt.int),
        ("Distribution", sim.distribution, None),
        ("Rank correlation within groups", sim.correlation, fmt.num),
    ]
    for label, value, style in rows:
        ws.write_string(r, 0, label, fmt.label)
        if isinstance(value, str):
            ws.write_string(r, 1, value, fmt.text_right)
        else:
            ws.write_number(r, 1, value, style)
        r += 1
    command = reproduce_command(a)
    ws.write_string(r, 0, "To reproduce", fmt.label)
    ws.merge_range(r, 1, r, LAST, command, fmt.wrap)
    ws.set_row(r, row_height([(command, merged_width(WIDTHS[1:]))]))
    for formula, text in trace_sentences(a):
        r += 1
        ws.write_string(r, 0, "Traced", fmt.label)
        ws.merge_range(r, 1, r, LAST, "", fmt.wrap)
        ws.write_formula(r, 1, formula, fmt.wrap, text)
        ws.set_row(r, row_height([(text, merged_width(WIDTHS[1:]))]))
    note = sensitivity_note(sim)
    if note is not None:
        r += 1
        ws.write_string(r, 0, "Sensitivities", fmt.label)
        ws.merge_range(r, 1, r, LAST, note, fmt.wrap)
        ws.set_row(r, row_height([(note, merged_width(WIDTHS[1:]))]))
    return r + 1


def sensitivity_note(sim) -> str | None:
    """Where the sensitivities come from when the memory budget kept only the first
    iterations' samples (None when they use every iteration)."""
    if sim.sensitivity_iterations >= sim.iterations:
        return None
    return (
        f"Sensitivities from the first {sim.sensitivity_iterations:,} of "
        f"{sim.iterations:,} iterations (memory budget {sim.memory_budget_mb:,} MB); "
        f"standard error about ±{sim.sensitivity_std_error:.2g} near 0 "
        "(Fieller, Hartley & Pearson 1957)"
    )


def _write_results(ws, fmt, a, r: int) -> int:
    """Simulated figures (A-C) beside the percentiles (E-G); returns the last row."""
    sim = a.simulation
    both = sim.independent is not None
    heads = [
        (0, "Result", "l"),
        (1, "Simulated", "r"),
        (4, "Percentile", "c"),
        (5, "Duration", "r"),
    ]
    if both:
        heads += [(2, "If independent", "r"), (6, "If independent", "r")]
    _heads(ws, fmt, r, heads)
    top = r + 1
    figures = [
        ("Mean finish", "mean", fmt.num),
        ("Standard deviation", "sd", fmt.num),
        ("Standard error of the mean", "std_error_mean", fmt.num4),
        ("Chance of meeting the due date", "p_meet_due", fmt.prob2),
        ("Standard error of that chance", "p_meet_due_std_error", fmt.prob2),
    ]
    r = top
    mean_row = r
    for label, attr, style in figures:
        value = getattr(sim, attr)
        if value is None:
            continue
        ws.write_string(r, 0, label, fmt.label)
        ws.write_number(r, 1, float(value), style)
        if both and getattr(sim.independent, attr) is not None:
            ws.write_number(r, 2, float(getattr(sim.independent, attr)), style)
        r += 1
    label = "Merge bias = simulated mean - PERT mean"
    ws.write_string(r, 0, label, fmt.label_wrap)
    fit_row(ws, r, [(label, WIDTHS[0], 10.0, True)])
    ws.write_formula(r, 1, f"=B{mean_row + 1}-ProjectMean", fmt.num, float(sim.merge_bias))
    r += 1
    p = top
    for q, v in sorted(sim.percentiles.items()):
        ws.write_string(p, 4, f"P{q * 100:g}", fmt.center)
        ws.write_number(p, 5, float(v), fmt.num)
        if both:
            ws.write_number(p, 6, float(sim.independent.percentiles[q]), fmt.num)
        p += 1
    r = max(r, p)
    note = (
        "Merge bias is positive where paths merge: the finish waits for the latest of "
        "several uncertain paths, and the mean of a maximum exceeds the largest mean."
    )
    ws.merge_range(r, 0, r, LAST, note, fmt.wrap)
    fit_row(ws, r, [(note, merged_width(WIDTHS))])
    return r


def _write_histogram(wb, ws, fmt, a, top: int) -> int:
    """A page: the histogram chart above its table; returns the table's last row."""
    hist = a.histogram
    ws.write_string(top, 0, "Histogram of simulated durations", fmt.title)
    ws.set_row(top, TITLE_ROW)
    chart_row = top + 1
    head = chart_row + rows_spanned(HISTOGRAM_HEIGHT) + 1
    _heads(
        ws,
        fmt,
        head,
        [
            (0, "Bin (up to)", "r"),
            (1, "Iterations", "r"),
            (2, "Share", "r"),
            (3, "Cumulative share", "r"),
        ],
    )
    first = head + 1
    total = hist.iterations
    for k, (edge, n) in enumerate(zip(hist.upper, hist.counts, strict=True)):
        r = first + k
        ws.write_number(r, 0, edge, fmt.num)
        ws.write_number(r, 1, n, fmt.int)
        ws.write_formula(r, 2, f"=B{r + 1}/{total}", fmt.prob2, hist.share[k])
        ws.write_formula(
            r, 3, f"=SUM($B${first + 1}:B{r + 1})/{total}", fmt.prob2, hist.cumulative[k]
        )
    last = first + len(hist.upper) - 1
    due = _write_due_line(ws, fmt, a, head, first, last)
    ws.insert_chart(chart_row, 0, _histogram_chart(wb, a, first, last, due))
    return last


def _write_due_line(ws, fmt, a, head: int, first: int, last: int) -> tuple[int, int] | None:
    """Two points that draw the due date on the histogram: where it falls among the bins
    (the first bin at 1), from the foot to a little above the tallest bar."""
    hist = a.histogram
    if hist.due_at is None:
        return None
    _heads(ws, fmt, head, [(5, "Due date on the chart: bin position", "r"), (6, "Height", "r")])
    for k, height in enumerate((0.0, DUE_LINE_OVER * hist.peak)):
        ws.write_number(first + k, 5, hist.due_at, fmt.num)
        formula = "=0" if k == 0 else f"={DUE_LINE_OVER!r}*MAX(B{first + 1}:B{last + 1})"
        ws.write_formula(first + k, 6, formula, fmt.int, height)
    return first, first + 1


def _histogram_chart(wb, a, first: int, last: int, due: tuple[int, int] | None):
    sim = a.simulation
    chart = wb.add_chart({"type": "column"})
    chart.add_series(
        {
            "name": "Iterations",
            "categories": [SIMULATION, first, 0, last, 0],
            "values": [SIMULATION, first, 1, last, 1],
            "fill": {"color": PALETTE["moss"]},
            "border": {"color": "#FFFFFF"},
            "gap": 15,
        }
    )
    if due is not None:
        # a scatter series over the columns: its x runs along the bins (the first at 1), so
        # the line stands where the due date falls inside its bin
        when = (
            a.due_date.isoformat()
            if a.due_date is not None
            else f"{a.due:g} {a.schedule.settings.time_unit}"
        )
        line = wb.add_chart({"type": "scatter", "subtype": "straight"})
        line.add_series(
            {
                "name": f"Due date ({when})",
                "categories": [SIMULATION, due[0], 5, due[1], 5],
                "values": [SIMULATION, due[0], 6, due[1], 6],
                "line": {"color": PALETTE["clay"], "width": 2.0, "dash_type": "dash"},
                "marker": {"type": "none"},
            }
        )
        chart.combine(line)
    unit = a.schedule.settings.time_unit
    chart.set_title(
        {
            "name": f"Simulated finish ({sim.iterations:,} iterations)",
            "name_font": {"size": 12, "bold": True},
        }
    )
    chart.set_x_axis(
        {
            "name": f"Duration, bin upper edge ({unit})",
            "num_format": "0.#",
            "num_font": {"rotation": -45},
        }
    )
    chart.set_y_axis(
        {"name": "Iterations", "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}}
    )
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": CHART_WIDTH, "height": HISTOGRAM_HEIGHT})
    chart.set_chartarea({"border": {"none": True}})
    return chart


def _bar_height(count: int) -> int:
    return 90 + 18 * count


def _bar_chart(
    wb,
    title: str,
    series_name: str,
    cats,
    values,
    color: str,
    axis: dict,
    axis_name: str,
    count: int,
):
    bar = wb.add_chart({"type": "bar"})
    bar.add_series(
        {
            "name": series_name,
            "categories": cats,
            "values": values,
            "fill": {"color": color},
            "gap": 40,
        }
    )
    bar.set_title({"name": title, "name_font": {"size": 12, "bold": True}})
    bar.set_y_axis(
        {
            "reverse": True,
            "crossing": "max",
            "name": "Activity",
            "num_font": {"size": 8},
            "interval_unit": 1,
        }
    )  # every bar labelled,
    # the first at the top, the scale below
    bar.set_x_axis(
        {
            **axis,
            "name": axis_name,
            "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}},
        }
    )
    bar.set_legend({"none": True})
    bar.set_size({"width": CHART_WIDTH, "height": _bar_height(count)})
    return bar


def _write_drivers(wb, ws, fmt, a, start: int) -> int:
    """A page: the tornado of the top drivers above every activity's sensitivity; returns
    the table's header row."""
    sim = a.simulation
    ws.write_string(start, 0, "Risk drivers: activities ranked by sensitivity", fmt.title)
    ws.set_row(start, TITLE_ROW)
    top = min(TOP_DRIVERS, len(a.ids))
    head = start + 2 + rows_spanned(_bar_height(top))
    _heads(
        ws,
        fmt,
        head,
        [
            (0, "Activity", "l"),
            (1, "Sensitivity (rank correlation)", "r"),
            (2, "Criticality index", "r"),
            (3, "Label on the chart", "i"),
        ],
    )
    base = head + 1
    for k, i in enumerate(a.drivers):
        r = base + k
        text = _label(a, i)
        ws.write_string(r, 0, text, fmt.wrap)
        s = float(sim.sensitivity[i])
        if math.isnan(s):
            ws.write_string(r, 1, "n/a (fixed)", fmt.text_right)
        else:
            ws.write_number(r, 1, s, fmt.num4)
        ws.write_number(r, 2, float(sim.criticality[i]), fmt.prob)
        if k < top:
            ws.write_string(r, 3, shorten(text, LABEL_CHARS), fmt.text_indent)
        fit_row(ws, r, [(text, WIDTHS[0])])
    negative = any(s < 0 for s in sim.sensitivity.tolist())  # NaN (fixed) is not
    bar = _bar_chart(
        wb,
        f"Top {top} risk drivers (sensitivity)",
        "Sensitivity",
        [SIMULATION, base, 3, base + top - 1, 3],
        [SIMULATION, base, 1, base + top - 1, 1],
        PALETTE["ink"],
        {"min": -1 if negative else 0, "max": 1, "num_format": "0.0"},
        "Sensitivity: rank correlation with the finish",
        top,
    )
    ws.insert_chart(start + 1, 0, bar)
    return head


def _write_most_critical(wb, ws, fmt, a, start: int) -> int:
    """A page: how often each activity was critical, the most often first; returns the
    table's last row."""
    sim = a.simulation
    top = min(TOP_DRIVERS, len(a.ids))
    ws.write_string(start, 0, "Most often critical", fmt.title)
    ws.set_row(start, TITLE_ROW)
    head = start + 2 + rows_spanned(_bar_height(top))
    _heads(
        ws,
        fmt,
        head,
        [(0, "Activity", "l"), (1, "Criticality index", "r"), (3, "Label on the chart", "i")],
    )
    for k, i in enumerate(a.most_critical[:top]):
        r = head + 1 + k
        text = _label(a, i)
        ws.write_string(r, 0, text, fmt.wrap)
        ws.write_number(r, 1, float(sim.criticality[i]), fmt.prob)
        ws.write_string(r, 3, shorten(text, LABEL_CHARS), fmt.text_indent)
        fit_row(ws, r, [(text, WIDTHS[0])])
    cbar = _bar_chart(
        wb,
        "Criticality index: share of iterations on the critical path",
        "Criticality index",
        [SIMULATION, head + 1, 3, head + top, 3],
        [SIMULATION, head + 1, 1, head + top, 1],
        PALETTE["amber"],
        {"min": 0, "max": 1, "num_format": "0%"},
        "Share of iterations on the critical path",
        top,
    )
    ws.insert_chart(start + 1, 0, cbar)
    return head + top


__all__ = ["reproduce_command", "sensitivity_note", "write_simulation"]
