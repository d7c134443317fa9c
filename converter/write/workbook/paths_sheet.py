"""The Paths sheet: the K longest paths, each a SUMPRODUCT over its own step rows."""

from __future__ import annotations

from converter.analyse.ladders import route_text, shared_pair
from converter.model import LINK_TYPES
from converter.write.workbook import formulas as f
from converter.write.workbook import pages, progress_cols
from converter.write.workbook.layout import FIRST, PATHS, Layout
from converter.write.workbook.risks_sheet import PATH_HEADS, paths_extra
from converter.write.workbook.rows import fit_row, merged_width, row_height
from converter.write.workbook.styles import TABLE_HEAD_SIZE, TITLE_ROW

SUMMARY_HEADERS = [
    "Path",
    "Expected length",
    "Variance",
    "Standard deviation",
    "z",
    "Chance of meeting the due date",
    "Riskier than the critical path?",
    "Activities",
    "Route",
]
STEP_HEADERS = [
    "Path",
    "Step",
    "Activity",
    "Entered by link",
    "Coefficient of its duration",
    "Expected time TE",
    "Variance",
    "Lag on the link in",
]
WIDTHS = [7.0, 10.0, 10.0, 10.0, 9.0, 11.0, 17.0, 10.0, 48.0]
#: How each head sits: over a centred count, a number, or text.
SUMMARY_ALIGN = "crrrrcccl"
STEP_ALIGN = "ccllrrrr"
#: A path's first step that starts at its start floor (Not before, status date): the floor
#: is in the step's lag column
FLOOR_START = "(path start, at its start floor)"
INTRO = (
    "Ranked by expected length, ties by larger variance. Length = SUMPRODUCT(coefficients, "
    "TE) + lags over the path's steps below; a duration counts +1 normally, 0 or -1 where "
    "start-to-start or finish-to-finish links skip it."
)


def _heads(ws, fmt, row: int, heads: list[str], align: str) -> None:
    styles = {"c": fmt.th_center, "r": fmt.th_center, "l": fmt.th, "i": fmt.th_indent}
    for col, (h, how) in enumerate(zip(heads, align)):
        ws.write_string(row, col, h, styles[how])
    ws.set_row(row, row_height([(h, w, TABLE_HEAD_SIZE, True) for h, w in zip(heads, WIDTHS)]))


def write_paths(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(PATHS)
    ws.write_string(
        0, 0, f"The {len(a.paths)} longest paths (of {a.path_count:,} in the network)", fmt.title
    )
    ws.set_row(0, TITLE_ROW)
    ws.merge_range(1, 0, 1, len(WIDTHS) - 1, INTRO, fmt.subtitle_wrap)
    ws.set_row(1, row_height([(INTRO, merged_width(WIDTHS))]))
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    _heads(ws, fmt, FIRST - 1, SUMMARY_HEADERS, SUMMARY_ALIGN)
    if a.risk_view is not None:
        for col, head in enumerate(PATH_HEADS, start=len(WIDTHS)):
            ws.write_string(FIRST - 1, col, head, fmt.th_center)
            ws.set_column(col, col, 12.0)
    k = len(a.paths)
    step_top = FIRST + k + 4
    ws.write_string(step_top - 2, 0, "Path steps", fmt.title)
    ws.set_row(step_top - 2, TITLE_ROW)
    _heads(ws, fmt, step_top - 1, STEP_HEADERS, STEP_ALIGN)
    r = step_top
    riskier = set(a.riskier_paths)
    shared = shared_pair(a.net)  # the pairs with more than one link, found once
    for n, pr in enumerate(a.paths):
        first = r
        r = _write_steps(ws, fmt, a, lay, n, pr.path, r)
        _write_path_row(ws, fmt, a, n, pr, first, r - 1, n in riskier, shared)
    if a.tied_longest > 1:
        tie = (
            f"{a.tied_longest} paths tie for the longest expected length; path 1 is the one "
            "with the largest variance (the cautious choice), and its variance is the "
            "project variance."
        )
        ws.merge_range(FIRST + k, 0, FIRST + k, len(WIDTHS) - 1, tie, fmt.wrap_flag)
        ws.set_row(FIRST + k, row_height([(tie, merged_width(WIDTHS) - 1.0, 10.0, True)]))
    ws.freeze_panes(FIRST, 1)
    # the steps' title and head stay with their first rows; a path may run on to the next
    # page, under the repeated head
    pages.set_up(
        ws,
        header_rows=(step_top - 1, step_top - 1),
        keep=[(step_top - 2, min(step_top + 2, r - 1))],
    )


def _write_steps(ws, fmt, a, lay: Layout, n: int, path, r: int) -> int:
    """The step rows of path ``n`` from row ``r``; returns the row after them."""
    for step, (act, coef) in enumerate(zip(path.activities, path.coefficients)):
        ws.write_number(r, 0, n + 1, fmt.int_center)
        ws.write_number(r, 1, step + 1, fmt.int_center)
        ws.write_string(r, 2, a.ids[act])
        floor = progress_cols.start_floor_terms(a, lay, act, True) if step == 0 else []
        if step == 0 and floor and a.net.floor is not None:  # the path starts at its floor
            ws.write_string(r, 3, FLOOR_START, fmt.wrap)
            fit_row(ws, r, [(FLOOR_START, WIDTHS[3])])
            terms = ",".join(["0", *floor])
            ws.write_formula(r, 7, f"=MAX({terms})", fmt.num, float(a.net.floor[act]))
        elif step == 0:
            ws.write_string(r, 3, "(path start)")
            ws.write_number(r, 7, 0.0, fmt.num)
        else:
            link = path.links[step - 1]
            ws.write_string(r, 3, LINK_TYPES[int(a.net.kind[link])])
            ws.write_formula(
                r, 7, "=" + lay.link_cell(link, "lag"), fmt.num, float(a.net.lag[link])
            )
        ws.write_number(r, 4, coef, fmt.int)
        ws.write_formula(r, 5, "=" + lay.cell(act, "te", True), fmt.num, float(a.te[act]))
        ws.write_formula(r, 6, "=" + lay.cell(act, "var", True), fmt.num4, float(a.var[act]))
        r += 1
    return r


def _write_path_row(
    ws, fmt, a, n: int, pr, first: int, last: int, riskier: bool, shared=None
) -> None:
    """Path ``n``'s row in the summary table: length, variance, sd, z and chance as formulas
    over its step rows ``first``..``last``."""
    path = pr.path
    row = FIRST + n
    coef, te, var, lag = (f.span(first, last, c) for c in (4, 5, 6, 7))
    ws.write_number(row, 0, n + 1, fmt.int_center)
    ws.write_formula(row, 1, f.path_length(coef, te, lag), fmt.num, path.mean)
    risk_var = paths_extra(ws, fmt, a, row, n)  # the named risks' terms (with a register)
    variance = f.path_variance(coef, var) + (f"+{risk_var}" if risk_var else "")
    ws.write_formula(row, 2, variance, fmt.num4, path.variance)
    ws.write_formula(row, 3, f"=SQRT({f.ref(row, 2)})", fmt.num, path.sd)
    if a.due is not None:
        ws.write_formula(
            row,
            4,
            f.z_score("DueDuration", f.ref(row, 1), f.ref(row, 3)),
            fmt.num4,
            pr.z if pr.z is not None else "n/a",
        )
        ws.write_formula(
            row,
            5,
            f.p_meet("DueDuration", f.ref(row, 1), f.ref(row, 3)),
            fmt.prob,
            pr.p_meet_due,
        )
        if n == 0:
            ws.write_string(row, 6, "critical path", fmt.wrap_center)
        else:
            flag = "YES: lower chance than the critical path" if riskier else "no"
            ws.write_string(row, 6, flag, fmt.wrap_flag_center if riskier else fmt.wrap_center)
    else:  # over the z, chance and riskier columns
        ws.merge_range(row, 4, row, 6, "no due date", fmt.center)
    ws.write_number(row, 7, len(path.activities), fmt.int_center)
    route = route_text(a.ids, a.net, path.activities, path.links, shared)[:32000]
    ws.write_string(row, 8, route, fmt.wrap)
    flag_text = "YES: lower chance than the critical path" if riskier else ""
    fit_row(ws, row, [(route, WIDTHS[8]), (flag_text, WIDTHS[6] - 1.0, 10.0, True)])
