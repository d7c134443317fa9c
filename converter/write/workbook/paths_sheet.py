"""The Paths sheet: the K longest paths, each a SUMPRODUCT over its own step rows."""

from __future__ import annotations

from converter.model import LINK_TYPES
from converter.write.workbook import formulas as f
from converter.write.workbook.layout import FIRST, PATHS, Layout

SUMMARY_HEADERS = ["Path", "Expected length", "Variance", "Standard deviation", "z",
                   "Chance of meeting the due date", "Riskier than the critical path?",
                   "Activities", "Route"]
STEP_HEADERS = ["Path", "Step", "Activity", "Entered by link", "Coefficient of its duration",
                "Expected time TE", "Variance", "Lag on the link in"]


def write_paths(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(PATHS)
    ws.write_string(0, 0, f"The {len(a.paths)} longest paths (of {a.path_count:,} in the network)",
                    fmt.title)
    ws.write_string(1, 0, "Ranked by expected length, ties by larger variance. Length = "
                    "SUMPRODUCT(coefficients, TE) + lags over the path's steps below; a duration "
                    "counts +1 normally, 0 or -1 where start-to-start or finish-to-finish links "
                    "skip it.", fmt.subtitle)
    for col, h in enumerate(SUMMARY_HEADERS):
        ws.write_string(FIRST - 1, col, h, fmt.header)
    ws.set_row(FIRST - 1, 45)
    ws.set_column(0, 0, 8)
    ws.set_column(1, 7, 13)
    ws.set_column(8, 8, 80)
    k = len(a.paths)
    step_top = FIRST + k + 4
    ws.write_string(step_top - 2, 0, "Path steps", fmt.title)
    for col, h in enumerate(STEP_HEADERS):
        ws.write_string(step_top - 1, col, h, fmt.header)
    ws.set_row(step_top - 1, 32)
    r = step_top
    riskier = set(a.riskier_paths)
    index_of_link = a.net
    for n, pr in enumerate(a.paths):
        path = pr.path
        first = r
        for step, (act, coef) in enumerate(zip(path.activities, path.coefficients)):
            ws.write_number(r, 0, n + 1, fmt.int)
            ws.write_number(r, 1, step + 1, fmt.int)
            ws.write_string(r, 2, a.ids[act])
            if step == 0:
                ws.write_string(r, 3, "(path start)")
                ws.write_number(r, 7, 0.0, fmt.num)
            else:
                link = path.links[step - 1]
                ws.write_string(r, 3, LINK_TYPES[int(index_of_link.kind[link])])
                ws.write_formula(r, 7, "=" + lay.link_cell(link, "lag"), fmt.num,
                                 float(a.net.lag[link]))
            ws.write_number(r, 4, coef, fmt.int)
            ws.write_formula(r, 5, "=" + lay.cell(act, "te", True), fmt.num, float(a.te[act]))
            ws.write_formula(r, 6, "=" + lay.cell(act, "var", True), fmt.num4,
                             float(a.var[act]))
            r += 1
        last = r - 1
        row = FIRST + n
        coef, te, var, lag = (f.span(first, last, c) for c in (4, 5, 6, 7))
        ws.write_number(row, 0, n + 1, fmt.int)
        ws.write_formula(row, 1, f.path_length(coef, te, lag), fmt.num, path.mean)
        ws.write_formula(row, 2, f.path_variance(coef, var), fmt.num4, path.variance)
        ws.write_formula(row, 3, f"=SQRT({f.ref(row, 2)})", fmt.num, path.sd)
        if a.due is not None:
            ws.write_formula(row, 4, f.z_score("DueDuration", f.ref(row, 1), f.ref(row, 3)),
                             fmt.num4, pr.z if pr.z is not None else "n/a")
            ws.write_formula(row, 5, f.p_meet("DueDuration", f.ref(row, 1), f.ref(row, 3)),
                             fmt.prob, pr.p_meet_due)
            if n == 0:
                ws.write_string(row, 6, "critical path")
            else:
                flag = ("YES: lower chance than the critical path" if n in riskier else "no")
                ws.write_string(row, 6, flag, fmt.flag if n in riskier else fmt.text)
        else:
            ws.write_string(row, 4, "no due date")
        ws.write_number(row, 7, len(path.activities), fmt.int_center)
        route = " > ".join(a.ids[i] for i in path.activities)
        ws.write_string(row, 8, route[:32000])
    if a.tied_longest > 1:
        ws.write_string(FIRST + k, 0, f"{a.tied_longest} paths tie for the longest expected "
                        "length; path 1 is the one with the largest variance (the cautious "
                        "choice), and its variance is the project variance.", fmt.flag)
    ws.freeze_panes(FIRST, 1)
