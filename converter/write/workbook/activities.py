"""The activity table and the links table: the forward and backward pass as formulas.

An activity's early start is a MAX over what its incoming links allow: a plain
finish-to-start link without lag reads the predecessor's early finish directly;
every other link reads its "driven start" on the Links sheet, where the link's
type and lag are spelled out. The late finish mirrors this with MIN.
"""

from __future__ import annotations

import math

from converter.model import FS, LINK_TYPES
from converter.write.workbook import formulas as f
from converter.write.workbook import pages, progress_cols
from converter.write.workbook.layout import ACTIVITIES, FIRST, LINKS, Layout
from converter.write.workbook.ranges import row_of, write_estimates
from converter.write.workbook.risks_sheet import delay_terms, risks_by_activity
from converter.write.workbook.rows import DEFAULT_ROW_HEIGHT, fit_row, merged_width, row_height
from converter.write.workbook.styles import TABLE_HEAD_SIZE, TITLE_ROW

HEADERS = {
    "id": "ID",
    "name": "Description",
    "pred": "Predecessors (as given)",
    "o": "Optimistic",
    "m": "Most likely",
    "p": "Pessimistic",
    "te": "Expected time TE",
    "var": "Variance",
    "es": "Early start",
    "ef": "Early finish",
    "ls": "Late start",
    "lf": "Late finish",
    "tf": "Total float",
    "ff": "Free float",
    "crit": "Critical",
    "es_date": "Early start date",
    "ef_date": "Early finish date",
    "ls_date": "Late start date",
    "lf_date": "Late finish date",
    "criticality": "Criticality index (simulated)",
    "sensitivity": "Sensitivity (simulated rank correlation)",
    "wbs": "WBS",
    "span": "Summary span",
    "duration": "Duration",
    "range": "Range used",
    **progress_cols.HEADERS,
    "risk_delay": "Risk delay (expected, in TE)",
}

EXCEL_EPOCH_ORDINAL = 693594  # date(1899, 12, 30).toordinal()


def serial(d) -> float:
    """A date as a spreadsheet serial number (1900 date system)."""
    return float(d.toordinal() - EXCEL_EPOCH_ORDINAL)


def _plain(kind: int, lag: float) -> bool:
    return kind == FS and lag == 0


def incoming_outgoing(net) -> tuple[list[list[int]], list[list[int]]]:
    incoming: list[list[int]] = [[] for _ in range(net.n)]
    outgoing: list[list[int]] = [[] for _ in range(net.n)]
    for k, (p, s) in enumerate(zip(net.pred.tolist(), net.succ.tolist())):
        incoming[s].append(k)
        outgoing[p].append(k)
    return incoming, outgoing


#: Column widths in characters; every other column is a number 8.5 wide.
WIDTHS = {
    "id": 9.0,
    "name": 26.0,
    "pred": 12.0,
    "o": 9.5,
    "m": 9.5,
    "p": 9.5,
    "crit": 8.0,
    "es_date": 10.5,
    "ef_date": 10.5,
    "ls_date": 10.5,
    "lf_date": 10.5,
    "not_before_date": 10.5,
    "actual_start_date": 10.5,
    "actual_finish_date": 10.5,
    "criticality": 10.0,
    "sensitivity": 11.0,
    "wbs": 9.0,
    "range": 14.0,
    "state": 11.5,  # "in progress", "not started" on one line
}
NUMBER_WIDTH = 8.5
INTRO = (
    "Shaded columns are the estimates as read; every other figure is a formula. Early "
    "start = MAX over what the incoming links allow; late finish = MIN over what the "
    "outgoing links allow (see the Links sheet)."
)


def _table_head(ws, fmt, lay: Layout) -> None:
    """Title and introduction, and the header row, each head aligned like its column.

    A wide table prints in bands that repeat the ID and description columns, and with
    them whatever rows 1-3 hold there: so the title and its subtitle fit those two
    columns, and the longer introduction stands over the first band's figures.
    """
    c = lay.cols
    ws.write_string(0, 0, "Activities", fmt.title)
    ws.set_row(0, TITLE_ROW)
    ws.merge_range(1, 0, 1, c["name"], "The passes and float, as formulas", fmt.subtitle)
    last = c["lf"]
    ws.merge_range(1, c["pred"], 2, last, INTRO, fmt.subtitle_wrap)
    need = row_height([(INTRO, merged_width(_width(k) for k in list(c)[c["pred"] : last + 1]))])
    ws.set_row(2, max(DEFAULT_ROW_HEIGHT, need - DEFAULT_ROW_HEIGHT))
    heads = []
    for key, col in c.items():
        # heads centred over numbers, so neighbouring heads do not run together
        style = fmt.th if key in ("id", "name", "pred", "range") else fmt.th_center
        ws.write_string(FIRST - 1, col, HEADERS[key], style)
        ws.set_column(col, col, _width(key))
        heads.append((HEADERS[key], _width(key), TABLE_HEAD_SIZE, True))
    ws.set_row(FIRST - 1, row_height(heads))
    ws.freeze_panes(FIRST, 2)


def _width(key: str) -> float:
    return WIDTHS.get(key, NUMBER_WIDTH)


def write_activities(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(ACTIVITIES)
    _table_head(ws, fmt, lay)
    c = lay.cols

    net, cpm = a.net, a.cpm
    incoming, outgoing = incoming_outgoing(net)
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    dates = a.activity_dates
    sim = a.simulation
    raw_preds = _predecessor_text(a)
    name_look = _name_formats(wb, fmt, a)
    range_rows = row_of(a)
    by_activity = risks_by_activity(a.risk_view, a.net.n) if a.risk_view is not None else []
    for i, act in enumerate(a.schedule.activities):
        r = lay.row(i)
        ws.write_string(r, c["id"], act.id, fmt.wrap)
        ws.write_string(r, c["name"], act.name, name_look[i])
        if "wbs" in c and act.wbs is not None:
            ws.write_string(r, c["wbs"], act.wbs, fmt.wrap_indent)  # apart from the figure
        ws.write_string(r, c["pred"], raw_preds[i], fmt.wrap)
        fit_row(
            ws,
            r,
            [
                (act.id, WIDTHS["id"]),
                (act.name, WIDTHS["name"]),
                (raw_preds[i], WIDTHS["pred"]),
                (act.range or "", WIDTHS["range"]),
            ],
        )
        write_estimates(ws, fmt, lay, r, i, act, range_rows)
        _write_expected(ws, fmt, a, lay, i, by_activity)
        floor = progress_cols.start_floor_terms(a, lay, i)
        es_formula, lf_formula, ff_formula = _pass_formulas(lay, net, incoming, outgoing, i, floor)
        ws.write_formula(r, c["es"], es_formula, fmt.num, float(cpm.es[i]))
        ws.write_formula(
            r, c["ef"], f.plus(lay.cell(i, "es"), lay.cell(i, "te")), fmt.num, float(cpm.ef[i])
        )
        ws.write_formula(r, c["lf"], lf_formula, fmt.num, float(cpm.lf[i]))
        ws.write_formula(
            r, c["ls"], f.minus(lay.cell(i, "lf"), lay.cell(i, "te")), fmt.num, float(cpm.ls[i])
        )
        ws.write_formula(
            r,
            c["tf"],
            f.minus(lay.cell(i, "ls"), lay.cell(i, "es")),
            fmt.num,
            float(cpm.total_float[i]),
        )
        ws.write_formula(r, c["ff"], ff_formula, fmt.num, float(cpm.free_float[i]))
        crit = "Yes" if cpm.critical[i] else "No"
        ws.write_formula(
            r,
            c["crit"],
            f.is_critical(lay.cell(i, "tf")),
            fmt.critical if cpm.critical[i] else fmt.center,
            crit,
        )
        if dates is not None:
            _write_dates(ws, fmt, lay, c, r, i, cal, dates, holidays)
        if sim is not None:
            _write_simulated(ws, fmt, c, r, sim, i)
        if lay.not_before or lay.status:
            progress_cols.write_progress_cells(ws, fmt, a, lay, r, i)
    if a.summaries is not None:
        from converter.write.workbook.summary_rows import write_summary_rows

        write_summary_rows(wb, ws, a, lay, WIDTHS)
    ws.autofilter(FIRST - 1, 0, lay.last_row, max(c.values()))
    _print_setup(ws, lay)


def _print_setup(ws, lay: Layout) -> None:
    """Bands: the passes; float and dates; simulated figures and outline; the constraint
    and progress columns together. A summary row stays on a page with its first row."""
    c = lay.cols
    first_progress = next((k for k in ("not_before", "actual_start") if k in c), None)
    bands = [c[k] for k in ("tf", "criticality", first_progress) if k in c]
    pages.set_up(
        ws,
        header_rows=(FIRST - 1, FIRST - 1),
        title_cols=(0, 1),
        keep=[(r, r + 1) for r in lay.summary_rows],
        bands=bands,
    )


def _write_expected(ws, fmt, a, lay: Layout, i: int, by_activity) -> None:
    """Activity ``i``'s TE and variance formulas: from O, M, P (or the remaining work of a
    project in flight), TE with the expected delay of the risks that hit it."""
    c, r = lay.cols, lay.row(i)
    o, m, p = lay.cell(i, "o"), lay.cell(i, "m"), lay.cell(i, "p")
    te, var = f.expected_time(o, m, p), f.pert_variance(o, p)
    if lay.status:
        te, var = progress_cols.te_var_formulas(a, lay, i) or (te, var)
    if "risk_delay" in c:  # TE includes the expected delay of the risks hitting it
        te += "+" + lay.cell(i, "risk_delay")
        terms = delay_terms(a, lay, i, by_activity)
        delay = float(a.risk_view.activity_delay[i])
        ws.write_formula(r, c["risk_delay"], f.risk_delay(terms), fmt.num, delay)
    ws.write_formula(r, c["te"], te, fmt.num, float(a.te[i]))
    ws.write_formula(r, c["var"], var, fmt.num4, float(a.var[i]))


def _write_simulated(ws, fmt, c, r: int, sim, i: int) -> None:
    """Activity ``i``'s simulated criticality index and sensitivity (values of the run)."""
    ws.write_number(r, c["criticality"], float(sim.criticality[i]), fmt.prob)
    s = float(sim.sensitivity[i])
    if math.isnan(s):
        ws.write_string(r, c["sensitivity"], "n/a (fixed)", fmt.text_right)
    else:
        ws.write_number(r, c["sensitivity"], s, fmt.num4)


def _name_formats(wb, fmt, a) -> list:
    """Each activity's description format: indented under its WBS summaries, if any."""
    if a.summaries is None:
        return [fmt.wrap] * len(a.ids)
    from converter.write.workbook.summary_rows import activity_indent, depths

    levels = depths(a.schedule)[1]
    by_depth = {d: activity_indent(wb, d) for d in set(levels) if d}  # one format per depth
    return [by_depth[d] if d else fmt.wrap for d in levels]


def _predecessor_text(a) -> list[str]:
    """Each activity's links written back in the bracket notation.

    A link expanded from one written on a WBS summary row says so: ``B (via S1)``.
    """
    out = [[] for _ in a.schedule.activities]
    index = a.schedule.index()
    for lk in a.schedule.links:
        spec = ""
        if lk.type != "FS" or lk.lag:
            lag = "" if not lk.lag else f"{lk.lag:+g}"
            spec = f"[{'' if lk.type == 'FS' else lk.type}{lag}]"
        if lk.via is not None:
            spec += f" (via {lk.via})"
        out[index[lk.succ]].append(lk.pred + spec)
    return [", ".join(x) for x in out]


LINK_HEADERS = [
    "From",
    "To",
    "Type",
    "Lag (+) / lead (-)",
    "Driven start of successor",
    "Slack on this link",
    "Latest finish allowed to predecessor",
    "Driving link",
]
LINK_WIDTHS = [10.0, 10.0, 7.0, 10.0, 14.0, 14.0, 14.0, 10.0]
LINK_INTRO = (
    "FS: successor starts after predecessor finishes + lag. SS: starts after "
    "predecessor starts + lag. FF: finishes after predecessor finishes + lag. SF: "
    "finishes after predecessor starts + lag. A negative lag is a lead."
)


#: The Links sheet's extra column when links were written on WBS summary rows.
VIA_HEADER, VIA_WIDTH = "Via summary", 12.0


def write_links(wb, fmt, a, lay: Layout) -> None:
    via = [lk.via for lk in a.schedule.links]
    headers, widths = list(LINK_HEADERS), list(LINK_WIDTHS)
    if any(v is not None for v in via):
        headers.append(VIA_HEADER)
        widths.append(VIA_WIDTH)
    ws = wb.add_worksheet(LINKS)
    ws.write_string(0, 0, "Links: what each precedence link requires", fmt.title)
    ws.set_row(0, TITLE_ROW)
    ws.merge_range(1, 0, 1, len(LINK_HEADERS) - 1, LINK_INTRO, fmt.subtitle_wrap)
    ws.set_row(1, row_height([(LINK_INTRO, merged_width(LINK_WIDTHS))]))
    for col, (h, width) in enumerate(zip(headers, widths)):
        style = fmt.th if col < 3 else fmt.th_center
        ws.write_string(FIRST - 1, col, h, style)
        ws.set_column(col, col, width)
    ws.set_row(
        FIRST - 1,
        row_height([(h, w, TABLE_HEAD_SIZE, True) for h, w in zip(headers, widths)]),
    )
    ws.freeze_panes(FIRST, 2)
    net, cpm = a.net, a.cpm
    ids = a.ids
    for k in range(net.link_count):
        r = FIRST + k
        p, s, kind = int(net.pred[k]), int(net.succ[k]), int(net.kind[k])
        ws.write_string(r, 0, ids[p])
        ws.write_string(r, 1, ids[s])
        ws.write_string(r, 2, LINK_TYPES[kind])
        shifted = progress_cols.lag_formula(a, lay, k)
        if shifted is None:
            ws.write_number(r, 3, float(net.lag[k]), fmt.input_num)
        else:  # retained logic: the link holds the remaining work of its successor
            ws.write_formula(r, 3, shifted, fmt.num, float(net.lag[k]))
        lag = f.ref(r, 3)
        ws.write_formula(
            r,
            4,
            f.link_push(
                kind, lay.cell(p, "es", True), lay.cell(p, "ef", True), lag, lay.cell(s, "te", True)
            ),
            fmt.num,
            float(a.link_push[k]),
        )
        ws.write_formula(
            r, 5, f.minus(lay.cell(s, "es", True), f.ref(r, 4)), fmt.num, float(cpm.link_slack[k])
        )
        ws.write_formula(
            r,
            6,
            f.link_pull(
                kind, lay.cell(s, "ls", True), lay.cell(s, "lf", True), lag, lay.cell(p, "te", True)
            ),
            fmt.num,
            float(a.link_pull[k]),
        )
        ws.write_formula(
            r, 7, f.is_critical(f.ref(r, 5)), fmt.center, "Yes" if a.link_driving[k] else "No"
        )
        if via[k] is not None:
            ws.write_string(r, lay.LINK_COLS["via"], via[k])
    if net.link_count:
        ws.autofilter(FIRST - 1, 0, FIRST + net.link_count - 1, len(headers) - 1)
    else:
        ws.write_string(FIRST, 0, "No links: every activity starts at the project start.")
    pages.set_up(ws, header_rows=(FIRST - 1, FIRST - 1))


def _write_dates(ws, fmt, lay: Layout, c, r: int, i: int, cal, dates, holidays) -> None:
    """The four date columns of one activity; a start never falls after its finish (a
    milestone takes its finish date)."""
    for key, when, formula in (
        (
            "es_date",
            dates.early_start,
            cal.start_date_formula(
                lay.cell(i, "es"), "ProjectStart", holidays, finish_ref=lay.cell(i, "ef")
            ),
        ),
        (
            "ef_date",
            dates.early_finish,
            cal.finish_date_formula(lay.cell(i, "ef"), "ProjectStart", holidays),
        ),
        (
            "ls_date",
            dates.late_start,
            cal.start_date_formula(
                lay.cell(i, "ls"), "ProjectStart", holidays, finish_ref=lay.cell(i, "lf")
            ),
        ),
        (
            "lf_date",
            dates.late_finish,
            cal.finish_date_formula(lay.cell(i, "lf"), "ProjectStart", holidays),
        ),
    ):
        ws.write_formula(r, c[key], "=" + formula, fmt.date, serial(when[i]))


def _pass_formulas(
    lay: Layout, net, incoming, outgoing, i: int, floor: list[str] = ()
) -> tuple[str, str, str]:
    """Activity ``i``'s early start, late finish and free float formulas: over the named
    linked cells, or a conditional aggregate over the Links sheet when that is too long.
    ``floor`` are the cells of its start floor (Not before, status), inside the MAX."""
    kinds, lags = net.kind, net.lag
    ident = lay.cell(i, "id")

    def or_over_links(formula: str, agg: str, start: str, ifs, column: str, key: str) -> str:
        if f.fits(formula):
            return formula
        return f.over_links(agg, start, ifs, lay.link_column(column), lay.link_column(key), ident)

    pushes = [
        lay.cell(net.pred[k], "ef") if _plain(kinds[k], lags[k]) else lay.link_cell(k, "push")
        for k in incoming[i]
    ]
    pulls = [
        lay.cell(net.succ[k], "ls") if _plain(kinds[k], lags[k]) else lay.link_cell(k, "pull")
        for k in outgoing[i]
    ]
    slacks = [
        f"{lay.cell(net.succ[k], 'es')}-{lay.cell(i, 'ef')}"
        if _plain(kinds[k], lags[k])
        else lay.link_cell(k, "slack")
        for k in outgoing[i]
    ]
    return (
        or_over_links(
            f.early_start([*pushes, *floor]), "MAX", ",".join(["0", *floor]), f.MAXIFS, "push", "to"
        ),
        or_over_links(f.late_finish(pulls), "MIN", "ProjectFinish", f.MINIFS, "pull", "from"),
        or_over_links(
            f.free_float(lay.cell(i, "ef"), slacks),
            "MIN",
            f"ProjectFinish-{lay.cell(i, 'ef')}",
            f.MINIFS,
            "slack",
            "from",
        ),
    )
