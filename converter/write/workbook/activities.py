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
from converter.write.workbook.layout import ACTIVITIES, FIRST, LINKS, Layout

HEADERS = {
    "id": "ID", "name": "Description", "pred": "Predecessors (as given)",
    "o": "Optimistic", "m": "Most likely", "p": "Pessimistic",
    "te": "Expected time TE", "var": "Variance", "es": "Early start", "ef": "Early finish",
    "ls": "Late start", "lf": "Late finish", "tf": "Total float", "ff": "Free float",
    "crit": "Critical", "es_date": "Early start date", "ef_date": "Early finish date",
    "ls_date": "Late start date", "lf_date": "Late finish date",
    "criticality": "Criticality index (simulated)",
    "sensitivity": "Sensitivity (simulated rank correlation)",
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


def write_activities(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(ACTIVITIES)
    ws.write_string(0, 0, "Activities: expected times, forward and backward pass, float", fmt.title)
    ws.write_string(1, 0, "Shaded columns are the estimates as read; every other figure is a "
                    "formula. Early start = MAX over what the incoming links allow; late finish "
                    "= MIN over what the outgoing links allow (see the Links sheet).",
                    fmt.subtitle)
    c = lay.cols
    for key, col in c.items():
        ws.write_string(FIRST - 1, col, HEADERS[key], fmt.header)
    ws.set_row(FIRST - 1, 60)
    ws.freeze_panes(FIRST, 2)
    ws.set_column(c["id"], c["id"], 10)
    ws.set_column(c["name"], c["name"], 34)
    ws.set_column(c["pred"], c["pred"], 18)
    ws.set_column(c["o"], c["crit"], 10.5)
    if lay.dates:
        ws.set_column(c["es_date"], c["lf_date"], 11.5)
    if lay.simulated:
        ws.set_column(c["criticality"], c["sensitivity"], 13)

    net, cpm = a.net, a.cpm
    incoming, outgoing = incoming_outgoing(net)
    kinds, lags = net.kind.tolist(), net.lag.tolist()
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    dates = a.activity_dates
    sim = a.simulation
    raw_preds = _predecessor_text(a)
    for i, act in enumerate(a.schedule.activities):
        r = lay.row(i)
        ws.write_string(r, c["id"], act.id)
        ws.write_string(r, c["name"], act.name)
        ws.write_string(r, c["pred"], raw_preds[i])
        ws.write_number(r, c["o"], act.optimistic, fmt.input_num)
        ws.write_number(r, c["m"], act.most_likely, fmt.input_num)
        ws.write_number(r, c["p"], act.pessimistic, fmt.input_num)
        o, m, p = lay.cell(i, "o"), lay.cell(i, "m"), lay.cell(i, "p")
        ws.write_formula(r, c["te"], f.expected_time(o, m, p), fmt.num, float(a.te[i]))
        ws.write_formula(r, c["var"], f.pert_variance(o, p), fmt.num4, float(a.var[i]))
        pushes = [lay.cell(net.pred[k], "ef") if _plain(kinds[k], lags[k])
                  else lay.link_cell(k, "push") for k in incoming[i]]
        es_formula = f.early_start(pushes)
        if not f.fits(es_formula):
            es_formula = f.over_links("MAX", "0", f.MAXIFS, lay.link_column("push"),
                                      lay.link_column("to"), lay.cell(i, "id"))
        ws.write_formula(r, c["es"], es_formula, fmt.num, float(cpm.es[i]))
        ws.write_formula(r, c["ef"], f.plus(lay.cell(i, "es"), lay.cell(i, "te")), fmt.num,
                         float(cpm.ef[i]))
        pulls = [lay.cell(net.succ[k], "ls") if _plain(kinds[k], lags[k])
                 else lay.link_cell(k, "pull") for k in outgoing[i]]
        lf_formula = f.late_finish(pulls)
        if not f.fits(lf_formula):
            lf_formula = f.over_links("MIN", "ProjectFinish", f.MINIFS, lay.link_column("pull"),
                                      lay.link_column("from"), lay.cell(i, "id"))
        ws.write_formula(r, c["lf"], lf_formula, fmt.num, float(cpm.lf[i]))
        ws.write_formula(r, c["ls"], f.minus(lay.cell(i, "lf"), lay.cell(i, "te")), fmt.num,
                         float(cpm.ls[i]))
        ws.write_formula(r, c["tf"], f.minus(lay.cell(i, "ls"), lay.cell(i, "es")), fmt.num,
                         float(cpm.total_float[i]))
        slacks = [f"{lay.cell(net.succ[k], 'es')}-{lay.cell(i, 'ef')}"
                  if _plain(kinds[k], lags[k]) else lay.link_cell(k, "slack")
                  for k in outgoing[i]]
        ff_formula = f.free_float(lay.cell(i, "ef"), slacks)
        if not f.fits(ff_formula):
            ff_formula = f.over_links("MIN", f"ProjectFinish-{lay.cell(i, 'ef')}", f.MINIFS,
                                      lay.link_column("slack"), lay.link_column("from"),
                                      lay.cell(i, "id"))
        ws.write_formula(r, c["ff"], ff_formula, fmt.num, float(cpm.free_float[i]))
        crit = "Yes" if cpm.critical[i] else "No"
        ws.write_formula(r, c["crit"], f.is_critical(lay.cell(i, "tf")),
                         fmt.critical if cpm.critical[i] else fmt.center, crit)
        if dates is not None:
            for key, src, fn, when in (
                ("es_date", "es", cal.start_date_formula, dates.early_start),
                ("ef_date", "ef", cal.finish_date_formula, dates.early_finish),
                ("ls_date", "ls", cal.start_date_formula, dates.late_start),
                ("lf_date", "lf", cal.finish_date_formula, dates.late_finish),
            ):
                ws.write_formula(r, c[key], "=" + fn(lay.cell(i, src), "ProjectStart", holidays),
                                 fmt.date, serial(when[i]))
        if sim is not None:
            ws.write_number(r, c["criticality"], float(sim.criticality[i]), fmt.prob)
            s = float(sim.sensitivity[i])
            if math.isnan(s):
                ws.write_string(r, c["sensitivity"], "n/a (fixed)")
            else:
                ws.write_number(r, c["sensitivity"], s, fmt.num4)
    ws.autofilter(FIRST - 1, 0, lay.last_row, max(c.values()))


def _predecessor_text(a) -> list[str]:
    """Each activity's links written back in the bracket notation."""
    out = [[] for _ in a.schedule.activities]
    index = a.schedule.index()
    for lk in a.schedule.links:
        spec = ""
        if lk.type != "FS" or lk.lag:
            lag = "" if not lk.lag else f"{lk.lag:+g}"
            spec = f"[{'' if lk.type == 'FS' else lk.type}{lag}]"
        out[index[lk.succ]].append(lk.pred + spec)
    return [", ".join(x) for x in out]


LINK_HEADERS = ["From", "To", "Type", "Lag (+) / lead (-)", "Driven start of successor",
                "Slack on this link", "Latest finish allowed to predecessor", "Driving link"]


def write_links(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(LINKS)
    ws.write_string(0, 0, "Links: what each precedence link requires", fmt.title)
    ws.write_string(1, 0, "FS: successor starts after predecessor finishes + lag. SS: starts "
                    "after predecessor starts + lag. FF: finishes after predecessor finishes + "
                    "lag. SF: finishes after predecessor starts + lag. A negative lag is a lead.",
                    fmt.subtitle)
    for col, h in enumerate(LINK_HEADERS):
        ws.write_string(FIRST - 1, col, h, fmt.header)
    ws.set_row(FIRST - 1, 45)
    ws.set_column(0, 1, 10)
    ws.set_column(2, 3, 9)
    ws.set_column(4, 7, 14)
    ws.freeze_panes(FIRST, 2)
    net, cpm = a.net, a.cpm
    ids = a.ids
    for k in range(net.link_count):
        r = FIRST + k
        p, s, kind = int(net.pred[k]), int(net.succ[k]), int(net.kind[k])
        ws.write_string(r, 0, ids[p])
        ws.write_string(r, 1, ids[s])
        ws.write_string(r, 2, LINK_TYPES[kind])
        ws.write_number(r, 3, float(net.lag[k]), fmt.input_num)
        lag = f.ref(r, 3)
        ws.write_formula(r, 4, f.link_push(kind, lay.cell(p, "es", True), lay.cell(p, "ef", True),
                                           lag, lay.cell(s, "te", True)),
                         fmt.num, float(a.link_push[k]))
        ws.write_formula(r, 5, f.minus(lay.cell(s, "es", True), f.ref(r, 4)), fmt.num,
                         float(cpm.link_slack[k]))
        ws.write_formula(r, 6, f.link_pull(kind, lay.cell(s, "ls", True), lay.cell(s, "lf", True),
                                           lag, lay.cell(p, "te", True)),
                         fmt.num, float(a.link_pull[k]))
        ws.write_formula(r, 7, f.is_critical(f.ref(r, 5)), fmt.center,
                         "Yes" if a.link_driving[k] else "No")
    if net.link_count:
        ws.autofilter(FIRST - 1, 0, FIRST + net.link_count - 1, len(LINK_HEADERS) - 1)
    else:
        ws.write_string(FIRST, 0, "No links: every activity starts at the project start.")
