"""The Simulation sheet: run settings, simulated figures (values), histogram and
driver charts."""

from __future__ import annotations

import math
from pathlib import Path

from converter.write.workbook.layout import SIMULATION, Layout
from converter.write.workbook.styles import PALETTE

TOP_DRIVERS = 15


def reproduce_command(a) -> str:
    """The command that reruns this simulation: iterations, seed and distribution always,
    plus every other setting that came from the command line (numbers in full)."""
    sim = a.simulation
    st = a.schedule.settings
    parts = ["pertbook convert", f'"{Path(a.schedule.input_file).name}"',
             f"--iterations {sim.iterations}", f"--seed {sim.seed}"]
    if sim.distribution in ("pert", "triangular", "uniform"):
        parts.append(f"--distribution {sim.distribution}")
    parts.append(f"--correlation {sim.correlation!r}")
    given = {k for k, v in st.sources.items() if v == "command line"}
    if "start_date" in given and st.start_date is not None:
        parts.append(f"--start-date {st.start_date.isoformat()}")
    if "due" in given and st.due is not None:
        due = st.due.isoformat() if hasattr(st.due, "isoformat") else repr(float(st.due))
        parts.append(f"--due {due}")
    return " ".join(parts)


def write_simulation(wb, fmt, a, lay: Layout) -> None:
    sim = a.simulation
    ws = wb.add_worksheet(SIMULATION)
    ws.set_column(0, 0, 40)
    ws.set_column(1, 3, 15)
    ws.set_column(5, 5, 12)
    ws.set_column(6, 9, 13)
    ws.write_string(0, 0, "Monte Carlo simulation", fmt.title)
    ws.write_string(1, 0, "These figures are values from the run below, not formulas: rerun the "
                    "command to reproduce every one of them.", fmt.subtitle)
    rows = [
        ("Iterations", sim.iterations, fmt.int),
        ("Seed", sim.seed, fmt.int),
        ("Distribution", sim.distribution, None),
        ("Rank correlation within groups", sim.correlation, fmt.num),
    ]
    r = 3
    for label, value, style in rows:
        ws.write_string(r, 0, label, fmt.label)
        if isinstance(value, str):
            ws.write_string(r, 1, value)
        else:
            ws.write_number(r, 1, value, style)
        r += 1
    ws.write_string(r, 0, "To reproduce", fmt.label)
    ws.write_string(r, 1, reproduce_command(a))
    r += 2
    both = sim.independent is not None
    ws.write_string(r, 0, "Result", fmt.header)
    ws.write_string(r, 1, "Simulated", fmt.header)
    if both:
        ws.write_string(r, 2, "If independent", fmt.header)
    r += 1
    figures = [
        ("Mean finish", "mean", fmt.num),
        ("Standard deviation", "sd", fmt.num),
        ("Standard error of the mean", "std_error_mean", fmt.num4),
        ("Chance of meeting the due date", "p_meet_due", fmt.prob2),
        ("Standard error of that chance", "p_meet_due_std_error", fmt.prob2),
    ]
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
    ws.write_string(r, 0, "Merge bias = simulated mean - PERT mean", fmt.label)
    ws.write_formula(r, 1, f"=B{mean_row + 1}-ProjectMean", fmt.num, float(sim.merge_bias))
    r += 1
    ws.merge_range(r, 0, r, 3, "Merge bias is positive where paths merge: the finish waits for "
                   "the latest of several uncertain paths, and the mean of a maximum exceeds "
                   "the largest mean.", fmt.wrap)
    ws.set_row(r, 30)
    r += 2
    ws.write_string(r, 0, "Percentile", fmt.header)
    ws.write_string(r, 1, "Duration", fmt.header)
    if both:
        ws.write_string(r, 2, "If independent", fmt.header)
    r += 1
    for q, v in sorted(sim.percentiles.items()):
        ws.write_string(r, 0, f"P{q * 100:g}")
        ws.write_number(r, 1, float(v), fmt.num)
        if both:
            ws.write_number(r, 2, float(sim.independent.percentiles[q]), fmt.num)
        r += 1
    r += 1
    r = _write_histogram(wb, ws, fmt, a, r)
    _write_drivers(wb, ws, fmt, a, r + 2)


def _write_histogram(wb, ws, fmt, a, top: int) -> int:
    sim = a.simulation
    hist = a.histogram
    ws.write_string(top, 0, "Histogram of simulated durations", fmt.title)
    heads = ["Bin (up to)", "Iterations", "Share", "Cumulative share",
             "Due date marker (chart)"]
    for col, h in enumerate(heads):
        ws.write_string(top + 1, col, h, fmt.header)
    ws.set_row(top + 1, 30)
    first = top + 2
    total, due_bin = hist.iterations, hist.due_bin
    for k, (edge, n) in enumerate(zip(hist.upper, hist.counts, strict=True)):
        r = first + k
        ws.write_number(r, 0, edge, fmt.num)
        ws.write_number(r, 1, n, fmt.int)
        ws.write_formula(r, 2, f"=B{r + 1}/{total}", fmt.prob2, hist.share[k])
        ws.write_formula(r, 3, f"=SUM($B${first + 1}:B{r + 1})/{total}", fmt.prob2,
                         hist.cumulative[k])
        # the marker column stands a little above the tallest bar so it shows behind it
        ws.write_number(r, 4, 1.1 * max(hist.counts) if k == due_bin else 0.0, fmt.int)
    last = first + len(hist.upper) - 1
    chart = wb.add_chart({"type": "column"})
    if due_bin is not None:  # drawn first, full height behind the counts
        chart.add_series({
            "name": "Due date falls in this bin",
            "categories": [SIMULATION, first, 0, last, 0],
            "values": [SIMULATION, first, 4, last, 4],
            "fill": {"color": PALETTE["clay"], "transparency": 30},
            "border": {"none": True},
            "gap": 15,
            "overlap": 100,
        })
    chart.add_series({
        "name": "Iterations",
        "categories": [SIMULATION, first, 0, last, 0],
        "values": [SIMULATION, first, 1, last, 1],
        "fill": {"color": PALETTE["moss"]},
        "border": {"color": "#FFFFFF"},
        "gap": 15,
        "overlap": 100,
    })
    line = wb.add_chart({"type": "line"})
    line.add_series({
        "name": "Cumulative share",
        "categories": [SIMULATION, first, 0, last, 0],
        "values": [SIMULATION, first, 3, last, 3],
        "y2_axis": True,
        "line": {"color": PALETTE["ink"], "width": 2.5},
    })
    chart.combine(line)
    chart.set_title({"name": f"Simulated finish ({sim.iterations:,} iterations)",
                     "name_font": {"size": 12, "bold": True}})
    chart.set_x_axis({"name": f"Duration, bin upper edge ({a.schedule.settings.time_unit})",
                      "num_format": "0.#", "num_font": {"rotation": -45}})
    chart.set_y_axis({"name": "Iterations", "major_gridlines": {"visible": True,
                                                                  "line": {"color": "#E3E3E3"}}})
    line.set_y2_axis({"name": "Cumulative share", "min": 0, "max": 1, "num_format": "0%"})
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": 720, "height": 360})
    chart.set_chartarea({"border": {"none": True}})
    ws.insert_chart(3, 6, chart)
    return last


def _write_drivers(wb, ws, fmt, a, start: int) -> None:
    sim = a.simulation
    col = 0
    ws.write_string(start, col, "Risk drivers: activities ranked by sensitivity", fmt.title)
    heads = ["Activity", "Description", "Sensitivity (rank correlation)", "Criticality index"]
    for k, h in enumerate(heads):
        ws.write_string(start + 1, col + k, h, fmt.header)
    ws.set_row(start + 1, 32)
    base = start + 2
    order = a.drivers
    acts = a.schedule.activities
    for k, i in enumerate(order):
        r = base + k
        ws.write_string(r, col, a.ids[i])
        ws.write_string(r, col + 1, acts[i].name)
        s = float(sim.sensitivity[i])
        if math.isnan(s):
            ws.write_string(r, col + 2, "n/a (fixed)")
        else:
            ws.write_number(r, col + 2, s, fmt.num4)
        ws.write_number(r, col + 3, float(sim.criticality[i]), fmt.prob)
    top = min(TOP_DRIVERS, len(order))
    bar = wb.add_chart({"type": "bar"})
    bar.add_series({
        "name": "Sensitivity",
        "categories": [SIMULATION, base, col, base + top - 1, col],
        "values": [SIMULATION, base, col + 2, base + top - 1, col + 2],
        "fill": {"color": PALETTE["ink"]},
        "gap": 40,
    })
    bar.set_title({"name": f"Top {top} risk drivers (sensitivity)",
                   "name_font": {"size": 12, "bold": True}})
    bar.set_y_axis({"reverse": True})
    negative = any(s < 0 for s in sim.sensitivity.tolist())  # NaN (fixed) is not
    bar.set_x_axis({"min": -1 if negative else 0, "max": 1, "num_format": "0.0",
                    "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}})
    bar.set_legend({"none": True})
    bar.set_size({"width": 720, "height": 380})
    ws.insert_chart(23, 6, bar)
    crit_order = a.most_critical[:top]
    c2 = col
    ctop = base + len(order) + 2
    ws.write_string(ctop - 1, c2, "Most often critical", fmt.title)
    ws.write_string(ctop, c2, "Activity", fmt.header)
    ws.write_string(ctop, c2 + 1, "Criticality index", fmt.header)
    for k, i in enumerate(crit_order):
        ws.write_string(ctop + 1 + k, c2, a.ids[i])
        ws.write_number(ctop + 1 + k, c2 + 1, float(sim.criticality[i]), fmt.prob)
    cbar = wb.add_chart({"type": "bar"})
    cbar.add_series({
        "name": "Criticality index",
        "categories": [SIMULATION, ctop + 1, c2, ctop + top, c2],
        "values": [SIMULATION, ctop + 1, c2 + 1, ctop + top, c2 + 1],
        "fill": {"color": PALETTE["amber"]},
        "gap": 40,
    })
    cbar.set_title({"name": "Criticality index: share of iterations on the critical path",
                    "name_font": {"size": 11, "bold": True}})
    cbar.set_y_axis({"reverse": True})
    cbar.set_x_axis({"min": 0, "max": 1, "num_format": "0%",
                     "major_gridlines": {"visible": True, "line": {"color": "#E3E3E3"}}})
    cbar.set_legend({"none": True})
    cbar.set_size({"width": 720, "height": 380})
    ws.insert_chart(43, 6, cbar)
