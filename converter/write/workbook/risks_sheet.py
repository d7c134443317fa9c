"""The Risks sheet: the register as read, each risk's impact moments as formulas, what it
did in the simulation, its deltas, the ranking chart and the mitigated comparison.

The moments are live formulas over the register's cells (mean and variance of the impact,
then p mu and p sigma^2 + p (1 - p) mu^2 per unit of weight); the Activities sheet's risk
delay and the Paths sheet's risk terms read them. The simulated columns (share occurred,
mean delay when occurred, sensitivity, deltas) are values from the run, as on the
Simulation sheet.
"""

from __future__ import annotations

import math

from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.layout import FIRST, RISKS
from converter.write.workbook.rows import (
    DEFAULT_ROW_HEIGHT,
    fit_row,
    merged_width,
    row_height,
    rows_spanned,
)
from converter.write.workbook.styles import PALETTE, TABLE_HEAD_SIZE, TITLE_ROW

BASE = [
    ("id", "Risk", 9.0),
    ("description", "Description", 34.0),
    ("activities", "Activities hit", 14.0),
    ("group", "Group", 8.0),
    ("p", "Probability", 9.5),
    ("low", "Impact low", 9.0),
    ("likely", "Impact likely", 9.0),
    ("high", "Impact high", 9.0),
    ("unit", "Impact in", 13.0),
    ("mean", "Impact mean", 9.0),
    ("var", "Impact variance", 9.5),
    ("dmean", "Expected delay per hit (p x mean)", 11.0),
    ("dvar", "Delay variance per hit", 11.0),
    ("occurred", "Occurred (share of iterations)", 10.5),
    ("delay", "Mean delay to the finish when it occurred", 11.5),
    ("sens", "Sensitivity (rank correlation)", 11.0),
    ("rank", "Rank", 6.0),
    ("d80", "P80 delta", 9.0),
    ("d50", "P50 delta", 9.0),
    ("dmean_sim", "Mean delta", 9.0),
]
WIDTH = {k: w for k, _, w in BASE}
MITIGATED = [
    ("mp", "Mitigated probability", 10.0),
    ("mlow", "Mitigated impact low", 9.5),
    ("mlikely", "Mitigated impact likely", 9.5),
    ("mhigh", "Mitigated impact high", 9.5),
    ("m80", "P80 delta after response", 10.0),
    ("mmean", "Mean delta after response", 10.0),
]
CURVE_NOTE = "The chart's figures, a row per percent, folded: the + at the left opens them."
SUBTITLE = "The register and what each risk does to the finish"
INTRO = (
    "Shaded cells are the register as read; the moments are formulas. Each iteration, each "
    "risk (one draw per group) occurs with its probability and adds one impact to every "
    "activity it hits (a % impact scales each sampled duration). See the Method sheet."
)


def columns(view, paths: int) -> dict[str, int]:
    """Column of each field; the path weights ``w1``.. ``wK`` last."""
    keys = [k for k, _, _ in BASE] + ([k for k, _, _ in MITIGATED] if view.any_mitigated else [])
    keys += [f"w{j + 1}" for j in range(paths)]
    return {k: c for c, k in enumerate(keys)}


def risk_cell(k: int, col: int, absolute: bool = True) -> str:
    """Risk ``k``'s cell in column ``col`` of the Risks sheet."""
    return f.ref(FIRST + k, col, RISKS, absolute)


def risk_column(view, col: int) -> str:
    return f.span(FIRST, FIRST + len(view.risks) - 1, col, RISKS)


def delay_terms(a, lay, i: int, rows_of: list[list[int]]) -> list[str]:
    """Activity ``i``'s expected delay terms: p mu per unit risk, p mu TE for a % one."""
    view = a.risk_view
    col = columns(view, len(a.paths))["dmean"]
    o, m, p = lay.cell(i, "o"), lay.cell(i, "m"), lay.cell(i, "p")
    terms = []
    for k in rows_of[i]:
        term = risk_cell(k, col)
        if view.risks[k].percent:
            term += "*" + f.expected_time(o, m, p)[1:]
        terms.append(term)
    return terms


def risks_by_activity(view, n: int) -> list[list[int]]:
    out: list[list[int]] = [[] for _ in range(n)]
    for k, rows in enumerate(view.rows):
        for i in rows:
            out[i].append(k)
    return out


def _heads(ws, fmt, cols: dict[str, int], paths: int) -> list[float]:
    spec = {k: (h, w) for k, h, w in BASE + MITIGATED}
    spec.update({f"w{j + 1}": (f"Weight on path {j + 1}", 8.0) for j in range(paths)})
    widths, heads = [], []
    for key, col in cols.items():
        head, width = spec[key]
        ws.write_string(FIRST - 1, col, head, fmt.th if col < 4 else fmt.th_center)
        ws.set_column(col, col, width)
        widths.append(width)
        heads.append((head, width, TABLE_HEAD_SIZE, True))
    ws.set_row(FIRST - 1, row_height(heads))
    return widths


def write_risks(wb, fmt, a, lay) -> None:
    view, sim = a.risk_view, a.simulation
    ws = wb.add_worksheet(RISKS)
    cols = columns(view, len(a.paths))
    widths = _heads(ws, fmt, cols, len(a.paths))
    _title(ws, fmt, cols, widths)
    rank = sim.risks if sim is not None else None
    after = view.mitigated.risks if view.mitigated is not None else None
    for k, risk in enumerate(view.risks):
        _register_row(ws, fmt, a, cols, k, risk)
        _moment_cells(ws, fmt, a, cols, k)
        _simulated_cells(ws, fmt, cols, k, rank, after)
        for j, w in enumerate(view.path_weights):
            _weight_cell(ws, fmt, a, lay, cols[f"w{j + 1}"], k, j, w[k])
    ws.freeze_panes(FIRST, 2)
    last = FIRST + len(view.risks)
    keep, bottom = [], _ranking(wb, ws, fmt, a, rank, last + 1)
    if bottom > last + 1:
        keep.append((last + 1, bottom - 1))
    if view.mitigated is not None:
        top, bottom = bottom + 1, _mitigated(wb, ws, fmt, a, bottom + 1)
        keep.append((top, bottom))
    # the register's head repeats only when the register itself runs on to a second page
    # (it would stand over the ranking and the chart otherwise); a band of the register's
    # columns begins at its simulated figures, its mitigated values and its path weights
    long = not pages.fits_one_page(ws, last - 1)
    pages.set_up(
        ws,
        header_rows=(FIRST - 1, FIRST - 1) if long else None,
        title_cols=(0, 1),
        keep=keep,
        bands=[cols[k] for k in ("dmean", "mp", "w1") if k in cols],
    )


def _title(ws, fmt, cols, widths: list[float]) -> None:
    """Title and subtitle over the ID and description (repeated on every band of columns),
    the introduction over the register's other columns (the first band)."""
    ws.write_string(0, 0, "Risks", fmt.title)
    ws.set_row(0, TITLE_ROW)
    ws.merge_range(1, 0, 2, cols["description"], SUBTITLE, fmt.subtitle_wrap)
    ws.merge_range(1, cols["activities"], 2, cols["var"], INTRO, fmt.subtitle_wrap)
    need = row_height(
        [
            (INTRO, merged_width(widths[cols["activities"] : cols["var"] + 1])),
            (SUBTITLE, merged_width(widths[: cols["description"] + 1])),
        ]
    )
    ws.set_row(2, max(DEFAULT_ROW_HEIGHT, need - DEFAULT_ROW_HEIGHT))


def _register_row(ws, fmt, a, cols, k: int, risk) -> None:
    r = FIRST + k
    style = fmt.prob if risk.percent else fmt.input_num
    ws.write_string(r, cols["id"], risk.id, fmt.wrap)
    ws.write_string(r, cols["description"], risk.description, fmt.wrap)
    acts = ", ".join(risk.activities)
    ws.write_string(r, cols["activities"], acts, fmt.wrap)
    ws.write_string(r, cols["group"], risk.group or "", fmt.wrap)
    ws.write_number(r, cols["p"], risk.probability, fmt.prob)
    for key, value in (("low", risk.low), ("likely", risk.likely), ("high", risk.high)):
        ws.write_number(r, cols[key], value, style)
    unit = "% of duration" if risk.percent else a.schedule.settings.time_unit
    ws.write_string(r, cols["unit"], unit, fmt.wrap_indent)  # apart from Impact high
    if "mp" in cols:
        after = risk.after_response()
        ws.write_number(r, cols["mp"], after.probability, fmt.prob)
        for key, value in (("mlow", after.low), ("mlikely", after.likely), ("mhigh", after.high)):
            ws.write_number(r, cols[key], value, style)
    fit_row(
        ws,
        r,
        [
            (risk.description, WIDTH["description"]),
            (acts, WIDTH["activities"]),
            (risk.group or "", WIDTH["group"]),
        ],
    )


def _moment_cells(ws, fmt, a, cols, k: int) -> None:
    view = a.risk_view
    kind = a.schedule.settings.distribution
    r = FIRST + k
    lo, li, hi, p = (f.ref(r, cols[c]) for c in ("low", "likely", "high", "p"))
    mean, var = f.ref(r, cols["mean"]), f.ref(r, cols["var"])
    style = fmt.num4
    ws.write_formula(
        r, cols["mean"], f.impact_mean(kind, lo, li, hi), style, float(view.impact_mean[k])
    )
    ws.write_formula(
        r,
        cols["var"],
        f.impact_variance(kind, lo, li, hi, mean),
        style,
        float(view.impact_variance[k]),
    )
    ws.write_formula(r, cols["dmean"], f.compound_mean(p, mean), style, float(view.delay_mean[k]))
    ws.write_formula(
        r, cols["dvar"], f.compound_variance(p, mean, var), style, float(view.delay_variance[k])
    )


def _number(ws, fmt, r: int, c: int, value: float, style=None) -> None:
    if value is None or math.isnan(value):
        ws.write_string(r, c, "n/a", fmt.text_right)
    else:
        ws.write_number(r, c, float(value), style or fmt.num)


def _simulated_cells(ws, fmt, cols, k: int, rank, after) -> None:
    r = FIRST + k
    if rank is None:
        for key in ("occurred", "delay", "sens", "rank", "d80", "d50", "dmean_sim"):
            ws.write_string(r, cols[key], "n/a", fmt.text_right)
        return
    _number(ws, fmt, r, cols["occurred"], rank.occurred[k], fmt.prob)
    _number(ws, fmt, r, cols["delay"], rank.mean_delay[k])
    _number(ws, fmt, r, cols["sens"], rank.sensitivity[k], fmt.num4)
    if k in rank.top:
        ws.write_number(r, cols["rank"], rank.top.index(k) + 1, fmt.int_center)
    else:
        ws.write_string(r, cols["rank"], "-", fmt.center)
    _number(ws, fmt, r, cols["d80"], rank.delta_p80[k])
    _number(ws, fmt, r, cols["d50"], rank.delta_p50[k])
    _number(ws, fmt, r, cols["dmean_sim"], rank.delta_mean[k])
    if after is not None and "m80" in cols:
        _number(ws, fmt, r, cols["m80"], after.delta_p80[k])
        _number(ws, fmt, r, cols["mmean"], after.delta_mean[k])


def _weight_cell(ws, fmt, a, lay, col: int, k: int, j: int, value: float) -> None:
    """Risk ``k``'s weight on path ``j``: its hit activities' coefficients on the path
    (times their TE without risk for a % impact)."""
    view, path = a.risk_view, a.paths[j].path
    coef = dict(zip(path.activities, path.coefficients, strict=True))
    r = FIRST + k
    hits = [(i, coef[i]) for i in view.rows[k] if coef.get(i, 0)]
    if not view.risks[k].percent or not hits:
        ws.write_number(r, col, float(value), fmt.num)
        return
    terms = [f"{c}*({lay.cell(i, 'te', True)}-{lay.cell(i, 'risk_delay', True)})" for i, c in hits]
    ws.write_formula(r, col, "=" + "+".join(terms), fmt.num, float(value))


def _ranking(wb, ws, fmt, a, rank, start: int) -> int:
    """The top risks by sensitivity with their P80 deltas, and the ranked bar chart."""
    if rank is None or not rank.top:
        return start
    view = a.risk_view
    cols = columns(view, len(a.paths))
    title = f"Ranking: the {len(rank.top)} risks of highest sensitivity, by P80 delta"
    ws.write_string(start, 0, title, fmt.title)
    ws.set_row(start, TITLE_ROW)
    chart_rows = rows_spanned(110 + 20 * len(rank.top))
    head = start + 2 + chart_rows
    for c, text in enumerate(("Risk", "P80 delta", "Mean delta")):
        ws.write_string(head, c, text, fmt.th if c == 0 else fmt.th_center)
    ws.write_string(head, 3, "Rank", fmt.th_center)
    for t, k in enumerate(rank.by_p80):
        r = head + 1 + t
        ws.write_formula(r, 0, "=" + risk_cell(k, cols["id"], False), fmt.wrap, view.risks[k].id)
        for c, key, value in ((1, "d80", rank.delta_p80[k]), (2, "dmean_sim", rank.delta_mean[k])):
            ws.write_formula(r, c, "=" + risk_cell(k, cols[key], False), fmt.num, float(value))
        ws.write_number(r, 3, rank.top.index(k) + 1, fmt.int_center)
    last = head + len(rank.top)
    bar = wb.add_chart({"type": "bar"})
    bar.add_series(
        {
            "name": "P80 delta",
            "categories": [RISKS, head + 1, 0, last, 0],
            "values": [RISKS, head + 1, 1, last, 1],
            "fill": {"color": PALETTE["clay"]},
            "gap": 40,
        }
    )
    unit = a.schedule.settings.time_unit
    bar.set_title({"name": "Risks ranked: P80 delta", "name_font": {"size": 12, "bold": True}})
    # the first bar at the top and the scale below it, as on the Simulation sheet
    bar.set_y_axis(
        {
            "reverse": True,
            "crossing": "max",
            "name": "Risk",
            "interval_unit": 1,
            "num_font": {"size": 8},
        }
    )
    bar.set_x_axis({"name": f"P80 with the risk minus without it ({unit})"})
    bar.set_legend({"none": True})
    bar.set_size({"width": 760, "height": 110 + 20 * len(rank.top)})
    ws.insert_chart(start + 1, 0, bar)
    return last + 1


def _mitigated(wb, ws, fmt, a, start: int) -> int:
    """P50/P80/P90 and the chance of meeting the due date before and after the responses,
    and both finish distributions (cumulative) on one chart."""
    view, sim, mit = a.risk_view, a.simulation, a.risk_view.mitigated
    ws.write_string(start, 0, "Mitigated: the register after the planned responses", fmt.title)
    ws.set_row(start, TITLE_ROW)
    head = start + 1
    for c, text in enumerate(("Figure", "Unmitigated", "Mitigated", "Difference"), start=1):
        ws.write_string(head, c, text, fmt.th if c == 1 else fmt.th_center)
    rows = [(f"P{round(q * 100)}", sim.percentiles[q], mit.percentiles[q]) for q in (0.5, 0.8, 0.9)]
    if sim.p_meet_due is not None:
        rows.append(("Chance of meeting the due date", sim.p_meet_due, mit.p_meet_due))
    for t, (label, before, now) in enumerate(rows):
        r = head + 1 + t
        style = fmt.prob if label.startswith("Chance") else fmt.num
        ws.write_string(r, 1, label, fmt.wrap)
        ws.write_number(r, 2, float(before), style)
        ws.write_number(r, 3, float(now), style)
        ws.write_formula(r, 4, f.minus(f.ref(r, 3), f.ref(r, 2)), style, float(now - before))
    chart_row = head + len(rows) + 2
    table = chart_row + rows_spanned(320) + 1
    for c, text in enumerate(("Probability", "Unmitigated finish", "Mitigated finish")):
        ws.write_string(table, c, text, fmt.th_center)
    ws.write_string(table, 3, CURVE_NOTE, fmt.subtitle)
    levels, before, now = view.curve
    # the chart's table, a row per percent, is folded (an outline group, hidden): it does
    # not print, and the plus sign beside the rows opens it
    for t, (q, x0, x1) in enumerate(zip(levels, before, now, strict=True)):
        r = table + 1 + t
        ws.set_row(r, None, None, {"level": 1, "hidden": True})
        ws.write_number(r, 0, float(q), fmt.prob)
        ws.write_number(r, 1, float(x0), fmt.num)
        ws.write_number(r, 2, float(x1), fmt.num)
    last = table + len(levels)
    chart = wb.add_chart({"type": "scatter", "subtype": "straight"})
    for c, name, color in ((1, "Unmitigated", PALETTE["clay"]), (2, "Mitigated", PALETTE["moss"])):
        chart.add_series(
            {
                "name": name,
                "categories": [RISKS, table + 1, c, last, c],
                "values": [RISKS, table + 1, 0, last, 0],
                "line": {"color": color, "width": 2.0},
                "marker": {"type": "none"},
            }
        )
    unit = a.schedule.settings.time_unit
    chart.set_title({"name": "Finish before and after the responses", "name_font": {"size": 12}})
    chart.set_x_axis({"name": f"Project finish ({unit})"})
    chart.set_y_axis(
        {"name": "Chance of finishing by then", "min": 0, "max": 1, "num_format": "0%"}
    )
    chart.show_hidden_data()  # its table is folded away (below)
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": 600, "height": 320})
    ws.insert_chart(chart_row, 0, chart)
    ws.set_row(last + 1, None, None, {"collapsed": True})
    return last + 1


def paths_extra(ws, fmt, a, row: int, n: int) -> str | None:
    """The Paths sheet's risk columns for path ``n`` (row ``row``); returns the risk
    variance cell for the path's variance formula (None without a register)."""
    view = a.risk_view
    if view is None:
        return None
    cols = columns(view, len(a.paths))
    weights = risk_column(view, cols[f"w{n + 1}"])
    mean = f.path_risk_mean(risk_column(view, cols["dmean"]), weights)
    ws.write_formula(row, 9, mean, fmt.num, float(view.path_mean[n]))
    var = f.path_risk_variance(risk_column(view, cols["dvar"]), weights)
    ws.write_formula(row, 10, var, fmt.num4, float(view.path_variance[n]))
    return f.ref(row, 10)


PATH_HEADS = ("Of which named risks (expected)", "Named risks' variance")


def _signed(x: float) -> str:
    return f"{x:+.2f}" if not math.isnan(x) else "n/a"


def summary_texts(a, shown: int = 5) -> list[tuple[str, str]]:
    """The Summary's plain words on the register: top risks, the mitigated headline, and
    the caution on the normal approximation (labels and texts)."""
    view, sim = a.risk_view, a.simulation
    if view is None:
        return []
    out = []
    rank = sim.risks if sim is not None else None
    if rank is not None and rank.top:
        words = "; ".join(
            f"{view.risks[k].id} {view.risks[k].description}".strip()
            + f" (P80 {_signed(rank.delta_p80[k])}, occurred in {rank.occurred[k]:.0%} of runs)"
            for k in rank.by_p80[:shown]
        )
        out.append(
            (
                "Top named risks (P80 delta)",
                words + ". Removing the risk (same random numbers otherwise) lowers the P80 "
                "by this much: respond to these first (Risks sheet).",
            )
        )
    mit = view.mitigated
    if mit is not None:
        unit = a.schedule.settings.time_unit
        text = ", ".join(
            f"P{round(q * 100)} {mit.percentiles[q]:.2f} (now {sim.percentiles[q]:.2f})"
            for q in (0.5, 0.8, 0.9)
        )
        if mit.p_meet_due is not None:
            text += (
                f"; chance of meeting the due date {mit.p_meet_due:.0%} (now {sim.p_meet_due:.0%})"
            )
        out.append(("After the planned responses (mitigated run)", f"{text}, in {unit}."))
    out.append(
        (
            "Named risks in the critical-path figures",
            "The critical-path figures add each risk's mean and variance to a normal "
            "approximation; with large risks that may or may not happen this is rough. The "
            "simulation is the figure to trust.",
        )
    )
    return out


#: The register's semantics, for the Method sheet (only with a register).
METHOD_RISKS = [
    (
        "Named risks",
        "In each iteration every risk (or risk group: one draw for the group) occurs with its "
        "probability, one draw per risk per iteration; when it occurs one impact is drawn from "
        "the PERT-beta over (low, likely, high) (the distribution setting applies likewise) and "
        "added to the duration of each activity it hits: the same draw for all of them. A "
        "percentage impact scales each hit activity's sampled duration. Risks are independent "
        "of each other and of the activity durations unless grouped. Each risk draws from its "
        "own random stream (common random numbers), so adding or removing a risk changes no "
        "other draw.",
    ),
    (
        "Risks in the critical-path figures",
        "A risk that hits k of a path's activities adds k B I, with B ~ Bernoulli(p): mean "
        "k p mu and variance k^2 (p sigma^2 + p (1 - p) mu^2), the moments of a random sum "
        "(Ross, A First Course in Probability, 8th ed., 2010, section 7.5). TE includes each "
        "activity's expected risk delay, so the passes and floats include it; the path "
        "variances add the risks' terms (Paths sheet). A % impact weighs each hit activity by "
        "its TE without risk. With large discrete risks this normal approximation is rough: "
        "trust the simulation.",
    ),
    (
        "Risk ranking",
        "Sensitivity: Spearman's rank correlation of the risk's sampled impact (0 when it did "
        "not occur) with the project finish. Mean delay when it occurred: the mean finish of "
        "the iterations it occurred in minus that of the others. For the 20 risks of highest "
        "sensitivity, the finish without the risk with the same random numbers for everything "
        "else (only the iterations it occurred in are passed again): the differences of "
        "P50, P80 and mean are its deltas. The mitigated run repeats the simulation with the "
        "mitigated register on the same random numbers.",
    ),
]
