"""The Timeline sheet: a native bar chart of early start to early finish, total float
drawn after each bar, critical activities in their own colour."""

from __future__ import annotations

from converter.write.workbook.layout import TIMELINE, Layout
from converter.write.workbook.styles import PALETTE


def write_timeline(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(TIMELINE)
    rows, cut = a.timeline, a.timeline_cut
    ws.write_string(0, 0, "Timeline: early start to early finish, then total float", fmt.title)
    note = ("Dark bars: critical activities; green bars: the others; amber: total float "
            "(how far the activity can slip without moving the finish).")
    milestones = [a.ids[i] for i in rows if a.te[i] == 0]
    if milestones:
        shown = ", ".join(milestones[:10]) + (" ..." if len(milestones) > 10 else "")
        note += f" Milestones (zero duration, no bar): {shown}."
    if cut:
        note += (f" The schedule has {len(a.ids):,} activities: only the {len(rows)} on the "
                 "listed near-critical paths or with the least float are charted.")
    ws.write_string(1, 0, note, fmt.subtitle)
    heads = ["Activity", "Early start", "Critical duration", "Other duration", "Total float"]
    top = 3
    for col, h in enumerate(heads):
        ws.write_string(top, col, h, fmt.header)
    ws.set_column(0, 0, 12)
    ws.set_column(1, 4, 12)
    ws.set_row(top, 30)
    crit_cell = lambda i: lay.cell(i, "crit", True)  # noqa: E731
    for k, i in enumerate(rows):
        r = top + 1 + k
        critical = bool(a.cpm.critical[i])
        te = float(a.te[i])
        ws.write_formula(r, 0, "=" + lay.cell(i, "id", True), fmt.text, a.ids[i])
        ws.write_formula(r, 1, "=" + lay.cell(i, "es", True), fmt.num, float(a.cpm.es[i]))
        ws.write_formula(r, 2, f'=IF({crit_cell(i)}="Yes",{lay.cell(i, "te", True)},0)',
                         fmt.num, te if critical else 0.0)
        ws.write_formula(r, 3, f'=IF({crit_cell(i)}="Yes",0,{lay.cell(i, "te", True)})',
                         fmt.num, 0.0 if critical else te)
        ws.write_formula(r, 4, f"=MAX(0,{lay.cell(i, 'tf', True)})", fmt.num,
                         max(0.0, float(a.cpm.total_float[i])))
    first, last = top + 1, top + len(rows)
    chart = wb.add_chart({"type": "bar", "subtype": "stacked"})
    cats = [TIMELINE, first, 0, last, 0]
    chart.add_series({"name": "Early start", "categories": cats,
                      "values": [TIMELINE, first, 1, last, 1],
                      "fill": {"none": True}, "border": {"none": True}})
    chart.add_series({"name": "Critical", "categories": cats,
                      "values": [TIMELINE, first, 2, last, 2],
                      "fill": {"color": PALETTE["ink"]}, "border": {"none": True}, "gap": 35})
    chart.add_series({"name": "Not critical", "categories": cats,
                      "values": [TIMELINE, first, 3, last, 3],
                      "fill": {"color": PALETTE["moss"]}, "border": {"none": True}})
    chart.add_series({"name": "Total float", "categories": cats,
                      "values": [TIMELINE, first, 4, last, 4],
                      "fill": {"color": PALETTE["amber"], "transparency": 45},
                      "border": {"color": PALETTE["amber"], "dash_type": "dash"}})
    chart.set_title({"name": "Schedule on expected times", "name_font": {"size": 12,
                                                                        "bold": True}})
    chart.set_y_axis({"reverse": True, "num_font": {"size": 8}})
    chart.set_x_axis({"name": f"Time ({a.schedule.settings.time_unit}) from the start",
                      "min": 0,
                      "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}})
    chart.set_legend({"none": True})  # a key in cells instead: viewers drop legend entries
    key = [("Critical", PALETTE["ink"], "#FFFFFF"), ("Not critical", PALETTE["moss"], "#FFFFFF"),
           ("Total float", PALETTE["amber"], "#000000")]
    for k, (label, fill, ink) in enumerate(key):
        ws.merge_range(2, 6 + 2 * k, 2, 7 + 2 * k, label,
                       wb.add_format({"bg_color": fill, "font_color": ink, "bold": True,
                                      "align": "center"}))
    height = max(320, 18 * len(rows) + 120)
    chart.set_size({"width": 900, "height": min(height, 4000)})
    ws.insert_chart(top, 6, chart)
