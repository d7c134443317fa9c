"""The Timeline sheet: a native bar chart of early start to early finish, total float
drawn after each bar, critical activities in their own colour, milestones as a marker.

With a start date the axis is in dates (the bars run from the start of the early start
day to the end of the early finish day); without one, in schedule units from the start.
Each bar is labelled with the activity's ID and description, shortened to one line.
"""

from __future__ import annotations

import math

from converter.write.workbook import pages
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import TIMELINE, Layout
from converter.write.workbook.rows import merged_width, row_height, rows_spanned, shorten
from converter.write.workbook.styles import PALETTE, TABLE_HEAD_SIZE, TITLE_ROW

HEADS = [
    "Activity",
    "Early start",
    "Critical",
    "Not critical",
    "Total float",
    "Milestone",
    "Label on the chart",
]
WIDTHS = [9.0, 10.5, 9.0, 9.0, 9.0, 9.0, 30.0]
CHART_COL = len(WIDTHS) + 1  # past a gap column
LABEL_CHARS = 30
TOP = 3  # the header row (the table's first row is the sheet's row 5)


def _note(a, rows: list[int], cut: bool) -> str:
    note = (
        "Dark bars: critical activities; green: the others; amber: total float (how far "
        "the activity can slip without moving the finish)."
    )
    if any(float(a.te[i]) == 0.0 for i in rows):
        note += " A short red mark: a milestone."
    if cut:
        note += (
            f" The schedule has {len(a.ids):,} activities: only the {len(rows)} on the "
            "listed near-critical paths or with the least float are charted."
        )
    return note


def write_timeline(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(TIMELINE)
    rows, cut = a.timeline, a.timeline_cut
    ws.write_string(0, 0, "Timeline: early start to early finish, then total float", fmt.title)
    ws.set_row(0, TITLE_ROW)
    note = _note(a, rows, cut)
    ws.merge_range(1, 0, 1, len(WIDTHS) - 1, note, fmt.subtitle_wrap)
    ws.set_row(1, row_height([(note, merged_width(WIDTHS))]))
    for col, (h, width) in enumerate(zip(HEADS, WIDTHS)):
        style = fmt.th if col == 0 else (fmt.th_indent if col == 6 else fmt.th_center)
        ws.write_string(TOP, col, h, style)
        ws.set_column(col, col, width)
    ws.set_row(TOP, row_height([(h, w, TABLE_HEAD_SIZE, True) for h, w in zip(HEADS, WIDTHS)]))
    ws.set_column(len(WIDTHS), len(WIDTHS), 2.0)
    for k, i in enumerate(rows):
        _write_row(ws, fmt, a, lay, TOP + 1 + k, k, i)
    first, last = TOP + 1, TOP + len(rows)
    height = _chart_height(len(rows))
    ws.insert_chart(TOP, CHART_COL, _chart(wb, a, first, last, height))
    _key(wb, ws, any(float(a.te[i]) == 0.0 for i in rows))
    chart_rows = (TOP, TOP + rows_spanned(height))
    pages.set_up(ws, header_rows=(TOP, TOP), keep=[chart_rows], bands=[CHART_COL])


def _write_row(ws, fmt, a, lay: Layout, r: int, k: int, i: int) -> None:
    """One charted activity: start, bar lengths (formulas on the Activities sheet)."""
    bars = a.timeline_bars
    critical = bool(a.cpm.critical[i])
    crit = lay.cell(i, "crit", True)
    te = lay.cell(i, "te", True)
    ws.write_formula(r, 0, "=" + lay.cell(i, "id", True), fmt.text, a.ids[i])
    if bars.dates:
        es, ef, lf = (lay.cell(i, key, True) for key in ("es_date", "ef_date", "lf_date"))
        ws.write_formula(r, 1, "=" + es, fmt.date, bars.start[k])
        length = f"IF({te}>0,MAX(0,{ef}-{es}+1),0)"
        slack = f"MAX(0,{lf}-{ef})"
    else:
        ws.write_formula(r, 1, "=" + lay.cell(i, "es", True), fmt.num, bars.start[k])
        length = te
        slack = f"MAX(0,{lay.cell(i, 'tf', True)})"
    ws.write_formula(
        r, 2, f'=IF({crit}="Yes",{length},0)', fmt.num, bars.length[k] if critical else 0.0
    )
    ws.write_formula(
        r, 3, f'=IF({crit}="Yes",0,{length})', fmt.num, 0.0 if critical else bars.length[k]
    )
    ws.write_formula(r, 4, "=" + slack, fmt.num, bars.float_[k])
    milestone = float(a.te[i]) == 0.0
    ws.write_formula(
        r, 5, f"=IF({te}=0,{bars.marker!r},0)", fmt.num, bars.marker if milestone else 0.0
    )
    name = a.schedule.activities[i].name
    ws.write_string(r, 6, shorten(f"{a.ids[i]} {name}".strip(), LABEL_CHARS), fmt.text_indent)


def _chart_height(n: int) -> int:
    """Pixels: one page tall (below the title rows) for a few dozen bars, then at least
    13 px a bar, on top of about 170 px of title, rotated dates and axis title: so every
    bar's 8 pt label has room (a renderer drops labels that would touch, leaving every
    other bar unnamed)."""
    return int(170 + _per_bar(n) * n)


def _per_bar(n: int) -> float:
    return max(13.0, min(22.0, 410.0 / max(n, 1)))


def _label_size(n: int) -> float:
    """Points of the bars' labels: 8, or 7 where the bars stand closer than 16 px (a
    renderer drops labels that would touch: 7 pt still names every bar on the page)."""
    return 8.0 if _per_bar(n) >= 16.0 else 7.0


def _chart(wb, a, first: int, last: int, height: int):
    bars = a.timeline_bars
    cats = [TIMELINE, first, 6, last, 6]

    def series(name: str, col: int, **look) -> None:
        chart.add_series(
            {"name": name, "categories": cats, "values": [TIMELINE, first, col, last, col], **look}
        )

    chart = wb.add_chart({"type": "bar", "subtype": "stacked"})
    series("Early start", 1, fill={"none": True}, border={"none": True})
    series("Milestone", 5, fill={"color": PALETTE["clay"]}, border={"none": True}, gap=35)
    series("Critical", 2, fill={"color": PALETTE["ink"]}, border={"none": True})
    series("Not critical", 3, fill={"color": PALETTE["moss"]}, border={"none": True})
    series(
        "Total float",
        4,
        fill={"color": PALETTE["amber"], "transparency": 45},
        border={"color": PALETTE["amber"], "dash_type": "dash"},
    )
    grid = {"visible": True, "line": {"color": "#E3E3E3"}}
    if bars.dates:
        span = max(
            (s + n + f for s, n, f in zip(bars.start, bars.length, bars.float_)), default=0.0
        ) - serial(a.calendar.start)
        x_axis = {
            "name": "Date",
            "min": serial(a.calendar.start),
            "num_format": "d mmm yy",
            "major_unit": 7 * max(1, math.ceil(span / 7 / 12)),
            "num_font": {"rotation": -45, "size": 9},
        }
    else:
        x_axis = {"name": f"Time ({a.schedule.settings.time_unit}) from the start", "min": 0}
    chart.set_x_axis({**x_axis, "major_gridlines": grid})
    chart.set_y_axis(
        {
            "reverse": True,
            "crossing": "max",
            "name": "Activity",
            "num_font": {"size": _label_size(last - first + 1)},
            "interval_unit": 1,
        }
    )  # the first at the top, the dates below; every bar labelled
    chart.set_title({"name": "Schedule on expected times", "name_font": {"size": 12, "bold": True}})
    chart.set_legend({"none": True})  # a key in cells instead: viewers drop legend entries
    chart.set_size({"width": 900, "height": height})
    return chart


def _key(wb, ws, milestones: bool) -> None:
    """The colour key, in cells above the chart."""
    key = [
        ("Critical", PALETTE["ink"], "#FFFFFF"),
        ("Not critical", PALETTE["moss"], "#FFFFFF"),
        ("Total float", PALETTE["amber"], "#000000"),
    ]
    if milestones:
        key.append(("Milestone", PALETTE["clay"], "#FFFFFF"))
    for k, (label, fill, ink) in enumerate(key):
        col = CHART_COL + 2 * k
        ws.merge_range(
            2,
            col,
            2,
            col + 1,
            label,
            wb.add_format({"bg_color": fill, "font_color": ink, "bold": True, "align": "center"}),
        )
