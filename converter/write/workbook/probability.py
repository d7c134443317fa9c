"""The Probability sheet: chance of finishing by each duration, durations at confidence,
interim targets, and the finish-probability curve."""

from __future__ import annotations

from converter.write.workbook import formulas as f
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import FIRST, PROBABILITY, Layout
from converter.write.workbook.styles import PALETTE


def write_probability(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(PROBABILITY)
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    sim = a.simulation
    ws.write_string(0, 0, "Probability of finishing", fmt.title)
    ws.write_string(1, 0, "Analytic columns are NORM.S.DIST / NORM.S.INV formulas on the "
                    "critical path's mean and sd; simulated columns are values from the Monte "
                    "Carlo run (see Simulation).", fmt.subtitle)
    ws.set_column(0, 0, 14)
    ws.set_column(1, 4, 16)
    ws.set_column(6, 6, 14)
    ws.set_column(7, 11, 16)
    heads = ["Duration", "Date (finish by end of)", "Chance of finishing by (analytic)",
             "Chance of finishing by (simulated)"]
    for col, h in enumerate(heads):
        ws.write_string(FIRST - 1, col, h, fmt.header)
    ws.set_row(FIRST - 1, 45)
    r = FIRST
    for t, p_an, p_sim, when in a.finish_table:
        ws.write_number(r, 0, t, fmt.num)
        if when is not None:
            ws.write_formula(r, 1, "=" + cal.finish_date_formula(f.ref(r, 0), "ProjectStart",
                                                                 holidays),
                             fmt.date, serial(when))
        ws.write_formula(r, 2, f.p_meet(f.ref(r, 0), "ProjectMean", "ProjectSD"), fmt.prob2,
                         p_an)
        if p_sim is not None:
            ws.write_number(r, 3, p_sim, fmt.prob2)
        r += 1
    last = r - 1
    chart = wb.add_chart({"type": "scatter", "subtype": "straight"})
    chart.add_series({
        "name": "Analytic (critical path, normal)",
        "categories": [PROBABILITY, FIRST, 0, last, 0],
        "values": [PROBABILITY, FIRST, 2, last, 2],
        "line": {"color": PALETTE["ink"], "width": 2.25},
    })
    if sim is not None:
        chart.add_series({
            "name": "Simulated (all paths)",
            "categories": [PROBABILITY, FIRST, 0, last, 0],
            "values": [PROBABILITY, FIRST, 3, last, 3],
            "line": {"color": PALETTE["amber"], "width": 2.25, "dash_type": "dash"},
        })
    chart.set_title({"name": "Chance of finishing by each duration",
                     "name_font": {"size": 12, "bold": True}})
    chart.set_x_axis({"name": f"Duration ({a.schedule.settings.time_unit})",
                      "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}})
    chart.set_y_axis({"name": "Chance", "min": 0, "max": 1, "num_format": "0%",
                      "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}})
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": 620, "height": 340})
    ws.insert_chart(FIRST - 1, 13, chart)

    # inverse table: confidence -> duration
    c0 = 6
    heads = ["Confidence", "Duration (analytic)", "Date (analytic)", "Duration (simulated)",
             "Date (simulated)"]
    for col, h in enumerate(heads):
        ws.write_string(FIRST - 1, c0 + col, h, fmt.header)
    r = FIRST
    for conf, d_an, d_sim, date_an, date_sim in a.confidence_table:
        ws.write_number(r, c0, conf, fmt.prob)
        ws.write_formula(r, c0 + 1, f.duration_at(f.ref(r, c0)), fmt.num, d_an)
        if date_an is not None:
            ws.write_formula(r, c0 + 2, "=" + cal.finish_date_formula(
                f.ref(r, c0 + 1), "ProjectStart", holidays), fmt.date, serial(date_an))
        if d_sim is not None:
            ws.write_number(r, c0 + 3, d_sim, fmt.num)
            if date_sim is not None:
                ws.write_formula(r, c0 + 4, "=" + cal.finish_date_formula(
                    f.ref(r, c0 + 3), "ProjectStart", holidays), fmt.date, serial(date_sim))
        r += 1
    r = max(r, last + 1) + 2
    if a.targets:
        _write_targets(ws, fmt, a, lay, r)


def _write_targets(ws, fmt, a, lay: Layout, r: int) -> None:
    cal = a.calendar
    ws.write_string(r, 0, "Interim targets", fmt.title)
    r += 1
    heads = ["Activity", "Target (time units)", "Target date", "Expected early finish",
             "Variance of the longest path to it", "Chance of meeting (analytic)",
             "Chance of meeting (simulated)"]
    for col, h in enumerate(heads):
        ws.write_string(r, col, h, fmt.header)
    ws.set_row(r, 45)
    r += 1
    for t in a.targets:
        ws.write_string(r, 0, a.ids[t.activity])
        if t.target_date is not None and cal is not None:
            holidays = "Holidays" if cal.holidays else None
            ws.write_number(r, 2, serial(t.target_date), fmt.input_date)
            ws.write_formula(r, 1, "=" + cal.offset_of_formula(f.ref(r, 2), "ProjectStart",
                                                               holidays), fmt.num, t.target)
        else:
            ws.write_number(r, 1, t.target, fmt.input_num)
        ws.write_formula(r, 3, "=" + lay.cell(t.activity, "ef", True), fmt.num, t.mean)
        ws.write_number(r, 4, t.variance, fmt.num4)
        ws.write_formula(r, 5, f.p_meet(f.ref(r, 1), f.ref(r, 3), f"SQRT({f.ref(r, 4)})"),
                         fmt.prob, t.p_analytic)
        if t.p_simulated is not None:
            ws.write_number(r, 6, t.p_simulated, fmt.prob)
        r += 1
