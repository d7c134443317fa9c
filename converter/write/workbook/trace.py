"""The Trace sheet: chosen simulated iterations recomputed by formulas from their random
numbers.

For each traced iteration (:class:`converter.analyse.simulate.trace.TracedIteration`)
and activity: the uniform u (the recorded random number, a value), the duration as a
formula of u and the activity's O, M and P (BETA.INV for the PERT-beta with its shapes
as formulas, the triangular inverse with IF and SQRT, the uniform O + u (P - O)), and
the early start and finish by the forward pass's own formula builders
(:func:`formulas.early_start`, :func:`formulas.link_push`, :func:`formulas.plus`), the
ones the Activities sheet uses. Above the activities, one line per traced iteration:
its finish as a formula, the finish the simulation recorded, their difference and the
bound it keeps within.

Large schedules (more than :data:`.trace.FULL_TRACE_LIMIT` activities) show only the
activities on a traced iteration's critical path; a link from an activity not shown
enters the formulas as that activity's early start or finish in the iteration, a value.
"""

from __future__ import annotations

import numpy as np

from converter.analyse.simulate.trace import FULL_TRACE_LIMIT
from converter.model import FS
from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.activities import incoming_outgoing
from converter.write.workbook.layout import (
    TRACE,
    TRACE_COLS,
    TRACE_FIRST,
    Layout,
    trace_cell,
    trace_target,
)
from converter.write.workbook.rows import DEFAULT_ROW_HEIGHT, merged_width, row_height
from converter.write.workbook.styles import TABLE_HEAD_SIZE, TITLE_ROW

SUMMARY_HEADS = [
    "Stands for",
    "Simulated figure",
    "Iteration",
    "Finish recomputed here",
    "Finish the simulation recorded",
    "Difference",
    "Largest difference allowed",
    "Within it",
]
ACTIVITY_HEADS = ["ID", "Distribution", "Optimistic", "Most likely", "Pessimistic", "Alpha", "Beta"]
BLOCK_HEADS = ["Random number u", "Duration", "Early start", "Early finish"]
WIDTHS = [10.0, 11.0, 10.0, 11.0, 12.0, 10.0, 11.0]
BLOCK_WIDTH = 10.0
#: Arguments of one MAX at most (spreadsheets take 255; one is the leading 0).
MAX_ARGUMENTS = 200
FIXED = len(ACTIVITY_HEADS)  # the columns before the first iteration's block
INTRO = (
    "Each traced iteration is recomputed here from its random numbers: a duration is "
    "the inverse distribution function of its random number u (BETA.INV for the "
    "PERT-beta, the triangular and uniform inverses written out), and the early start "
    "and finish follow the same rules as the Activities sheet. The simulation itself "
    "used a tabulated PERT-beta inverse within 1e-6 of (P - O) of the exact one and "
    "kept durations to single precision: hence the small differences in the table below."
)
LARGE = (
    " This schedule is large: only the activities on a traced iteration's critical "
    "path are shown; a link from any other activity enters as that activity's early "
    "start or finish in the iteration (a value)."
)


def write_trace(wb, fmt, a, lay: Layout) -> None:
    """The Trace sheet (only when the simulation traced iterations)."""
    traced = a.simulation.trace
    ws = wb.add_worksheet(TRACE)
    ws.set_row(0, TITLE_ROW)
    ws.write_string(
        0, 0, "Trace: simulated iterations recomputed from their random numbers", fmt.title
    )
    shown = _shown(a, traced)
    intro = INTRO + (LARGE if shown.size < len(a.ids) else "")
    last = max(len(SUMMARY_HEADS) - 1, FIXED - 1)
    ws.merge_range(1, 0, 2, last, intro, fmt.subtitle_wrap)
    need = row_height([(intro, merged_width(_width(c) for c in range(last + 1)))])
    ws.set_row(2, max(DEFAULT_ROW_HEIGHT, need - DEFAULT_ROW_HEIGHT))
    for col, head in enumerate(SUMMARY_HEADS):
        ws.write_string(TRACE_FIRST - 1, col, head, fmt.th_center if col else fmt.th)
    heads = [(h, _width(c), TABLE_HEAD_SIZE, True) for c, h in enumerate(SUMMARY_HEADS)]
    ws.set_row(TRACE_FIRST - 1, row_height(heads))
    top = TRACE_FIRST + len(traced) + 2  # the activity table's head (two rows)
    first = top + 2
    rows = {int(i): first + k for k, i in enumerate(shown)}
    for k, t in enumerate(traced):
        _summary_line(ws, fmt, k, t, _block_col(k) + 3, first, first + shown.size - 1)
    _activity_heads(ws, fmt, traced, top)
    incoming, _ = incoming_outgoing(a.net)
    for i, r in rows.items():
        _activity_row(ws, fmt, a, lay, i, r)
        for k, t in enumerate(traced):
            _iteration_cells(ws, fmt, a, i, r, k, t, rows, incoming[i])
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.set_column(FIXED, FIXED + 4 * len(traced) - 1, BLOCK_WIDTH)
    ws.freeze_panes(first, 1)
    pages.set_up(ws, header_rows=(top, top + 1), title_cols=(0, 0))


def _width(col: int) -> float:
    return WIDTHS[col] if col < len(WIDTHS) else BLOCK_WIDTH


def _shown(a, traced) -> np.ndarray:
    """The activities shown: all, or on a large schedule those critical in some traced
    iteration."""
    n = len(a.ids)
    if n <= FULL_TRACE_LIMIT:
        return np.arange(n)
    critical = np.zeros(n, dtype=bool)
    for t in traced:
        critical |= t.critical
    return np.flatnonzero(critical)


def _block_col(k: int) -> int:
    return FIXED + 4 * k


def _summary_line(ws, fmt, k: int, t, ef_col: int, first: int, last: int) -> None:
    r = TRACE_FIRST + k
    c = TRACE_COLS
    ws.write_string(r, c["label"], t.label, fmt.label)
    ws.write_number(r, c["figure"], t.figure, fmt.num)
    ws.write_number(r, c["iteration"], t.iteration + 1, fmt.int)
    finish = f"=MAX({f.span(first, last, ef_col)})"
    ws.write_formula(r, c["finish"], finish, fmt.num4, t.finish)
    ws.write_number(r, c["recorded"], t.recorded, fmt.num4)
    diff = f.minus(f.ref(r, c["finish"]), f.ref(r, c["recorded"]))
    ws.write_formula(r, 5, diff, fmt.sci, t.finish - t.recorded)
    ws.write_number(r, 6, t.allowed, fmt.sci)
    within = abs(t.finish - t.recorded) <= t.allowed
    ws.write_formula(
        r,
        7,
        f'=IF(ABS({f.ref(r, 5)})<={f.ref(r, 6)},"Yes","No")',
        fmt.center,
        "Yes" if within else "No",
    )


def _activity_heads(ws, fmt, traced, top: int) -> None:
    for col, head in enumerate(ACTIVITY_HEADS):
        ws.merge_range(top, col, top + 1, col, head, fmt.th if col < 2 else fmt.th_center)
    for k, t in enumerate(traced):
        c0 = _block_col(k)
        title = f"{t.label}: iteration {t.iteration + 1:,}"
        ws.merge_range(top, c0, top, c0 + 3, title, fmt.th_center)
        for j, head in enumerate(BLOCK_HEADS):
            ws.write_string(top + 1, c0 + j, head, fmt.th_center)
    ws.set_row(top + 1, 26.0)


def _activity_row(ws, fmt, a, lay: Layout, i: int, r: int) -> None:
    """ID, distribution, O/M/P (read from the Activities sheet) and the PERT shapes."""
    act = a.schedule.activities[i]
    dist = act.distribution or a.schedule.settings.distribution
    ws.write_string(r, 0, act.id)
    ws.write_string(r, 1, dist if act.optimistic < act.pessimistic else "fixed")
    for col, key, value in (
        (2, "o", act.optimistic),
        (3, "m", act.most_likely),
        (4, "p", act.pessimistic),
    ):
        ws.write_formula(r, col, "=" + lay.cell(i, key, sheet=True), fmt.num, float(value))
    if dist == "pert" and act.optimistic < act.pessimistic:
        o, m, p = (f.ref(r, col) for col in (2, 3, 4))
        span = act.pessimistic - act.optimistic
        alpha = 1 + 4 * (act.most_likely - act.optimistic) / span
        beta = 1 + 4 * (act.pessimistic - act.most_likely) / span
        ws.write_formula(r, 5, f.pert_alpha(o, m, p), fmt.num4, alpha)
        ws.write_formula(r, 6, f.pert_beta(o, m, p), fmt.num4, beta)


def _duration_formula(a, i: int, r: int, u: str) -> str:
    act = a.schedule.activities[i]
    o, m, p = (f.ref(r, col) for col in (2, 3, 4))
    if act.optimistic == act.pessimistic:
        return "=" + o
    dist = act.distribution or a.schedule.settings.distribution
    if dist == "pert":
        return f.pert_inverse(u, f.ref(r, 5), f.ref(r, 6), o, p)
    if dist == "triangular":
        return f.triangular_inverse(u, o, m, p)
    return f.uniform_inverse(u, o, p)


def _iteration_cells(ws, fmt, a, i: int, r: int, k: int, t, rows: dict, links) -> None:
    """Traced iteration ``k``'s u, duration, early start and finish of activity ``i``."""
    c0 = _block_col(k)
    u = f.ref(r, c0)
    ws.write_number(r, c0, float(t.uniforms[i]), fmt.num4)
    ws.write_formula(r, c0 + 1, _duration_formula(a, i, r, u), fmt.num, float(t.durations[i]))
    net = a.net
    pushes = []
    for link in links:
        p, kind, lag = int(net.pred[link]), int(net.kind[link]), float(net.lag[link])
        if p in rows:
            es, ef = f.ref(rows[p], c0 + 2), f.ref(rows[p], c0 + 3)
        else:
            es, ef = f.number(t.early_start[p]), f.number(t.early_finish[p])
        if kind == FS and lag == 0:
            pushes.append(ef)
        else:
            pushes.append(f.link_push(kind, es, ef, f.number(lag), f.ref(r, c0 + 1))[1:])
    while len(pushes) > MAX_ARGUMENTS:  # a function takes at most 255 arguments
        pushes = [
            "MAX(" + ",".join(pushes[g : g + MAX_ARGUMENTS]) + ")"
            for g in range(0, len(pushes), MAX_ARGUMENTS)
        ]
    start = f.early_start(pushes)
    if not f.fits(start):
        start = "=" + f.number(t.early_start[i])  # too many links for one formula
    ws.write_formula(r, c0 + 2, start, fmt.num, float(t.early_start[i]))
    ws.write_formula(
        r, c0 + 3, f.plus(f.ref(r, c0 + 2), f.ref(r, c0 + 1)), fmt.num, float(t.early_finish[i])
    )


def trace_sentences(a) -> list[tuple[str, str]]:
    """(formula, cached text) of the sentence for each traced iteration, e.g. "the P80 of
    47.2 is the finish of iteration 8,123, recomputed on the Trace sheet from its random
    numbers" (a link to the iteration's line on the Trace sheet)."""
    out = []
    for k, t in enumerate(a.simulation.trace):
        formula = f.trace_sentence(
            trace_target(k), t.label, trace_cell(k, "figure"), trace_cell(k, "iteration")
        )
        tail = ", recomputed on the Trace sheet from its random numbers"
        if t.label == "longest":
            text = f"the longest finish, {t.figure:.1f}, is that of iteration {t.iteration + 1:,}"
        else:
            text = f"the {t.label} of {t.figure:.1f} is the finish of iteration {t.iteration + 1:,}"
        out.append((formula, text + tail))
    return out
