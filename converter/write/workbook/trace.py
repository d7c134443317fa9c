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
from converter.analyse.status import FINISHED, IN_PROGRESS
from converter.model import FS
from converter.write.workbook import formulas as f
from converter.write.workbook import pages, progress_cols, trace_risks
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
WIDTHS = [10.0, 14.0, 10.0, 11.0, 12.0, 10.0, 11.0]  # B: "pert, remaining"
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
STATUS = (
    " A project in flight: a finished activity's duration is its actual one (no random "
    "number is used); one in progress takes the time worked plus its remaining work drawn "
    "from the remaining estimates; the early start honours the same start floors as the "
    "Activities sheet (Not before, the status date, actual starts)."
)
FLOORS = " The early start honours the same Not before constraints as the Activities sheet."
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
    # title and introduction from column B: column A repeats on every band of columns
    # printed, so text that starts there would print cut off on the later bands
    ws.write_string(
        0, 1, "Trace: simulated iterations recomputed from their random numbers", fmt.title
    )
    shown = _shown(a, traced)
    intro = INTRO + trace_risks.note(a) + (LARGE if shown.size < len(a.ids) else "")
    intro += _floors_note(a.remaining_work)
    last = max(len(SUMMARY_HEADS) - 1, FIXED - 1)
    ws.merge_range(1, 1, 2, last, intro, fmt.subtitle_wrap)
    need = row_height([(intro, merged_width(_width(c) for c in range(1, last + 1)))])
    ws.set_row(2, max(DEFAULT_ROW_HEIGHT, need - DEFAULT_ROW_HEIGHT))
    for col, head in enumerate(SUMMARY_HEADS):
        ws.write_string(TRACE_FIRST - 1, col, head, fmt.th_center if col else fmt.th)
    heads = [(h, _width(c), TABLE_HEAD_SIZE, True) for c, h in enumerate(SUMMARY_HEADS)]
    ws.set_row(TRACE_FIRST - 1, row_height(heads))
    risk_top = TRACE_FIRST + len(traced) + 2  # the risk table's head, if any
    top = risk_top + trace_risks.rows_needed(a)  # the activity table's head (two rows)
    first = top + 2
    rows = {int(i): first + k for k, i in enumerate(shown)}
    for k, t in enumerate(traced):
        _summary_line(ws, fmt, k, t, _block_col(k) + 3, first, first + shown.size - 1)
    risk_rows = []
    if trace_risks.has_risks(a):
        risk_rows = trace_risks.write_risk_table(ws, fmt, a, risk_top, _block_col)
    hits = trace_risks.hitting(a)
    _activity_heads(ws, fmt, traced, top)
    incoming, _ = incoming_outgoing(a.net)
    for i, r in rows.items():
        _activity_row(ws, fmt, a, lay, i, r)
        base = _duration_formula(a, lay, i, r)
        for k, t in enumerate(traced):
            c0 = _block_col(k)
            duration = trace_risks.with_delays(a, hits[i], base(f.ref(r, c0)), risk_rows, c0)
            _iteration_cells(ws, fmt, a, lay, i, r, k, t, rows, incoming[i], duration)
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.set_column(FIXED, FIXED + 4 * len(traced) - 1, BLOCK_WIDTH)
    ws.freeze_panes(first, 1)
    head_and_first = (top, min(top + 5, first + shown.size - 1))  # no head alone at a foot
    blocks = [_block_col(k) for k in range(len(traced))]  # a band of columns per iteration
    pages.set_up(
        ws, header_rows=(top, top + 1), title_cols=(0, 0), keep=[head_and_first], bands=blocks
    )


def _floors_note(rem) -> str:
    """The introduction's sentence on a project in flight, or on Not before alone."""
    if rem is None:
        return ""
    return STATUS if rem.progress is not None else FLOORS


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


def _estimate_cells(a, lay: Layout, i: int) -> tuple[str, list[str], list[float]]:
    """Activity ``i``'s distribution label and the O, M, P the trace inverts: the
    Activities sheet's estimates; the remaining estimates of an activity in progress; the
    actual duration (three times) of a finished one."""
    act = a.schedule.activities[i]
    dist = act.distribution or a.schedule.settings.distribution
    st = progress_cols.state(a, i)
    if st == FINISHED:
        actual = f.minus(lay.cell(i, "actual_finish", True), lay.cell(i, "actual_start", True))
        return "finished", [actual] * 3, [float(a.o[i])] * 3
    if st == IN_PROGRESS:
        keys, values = ("rem_o", "rem_m", "rem_p"), a.remaining_work.progress.remaining[i]
    else:
        keys, values = ("o", "m", "p"), (act.optimistic, act.most_likely, act.pessimistic)
    values = [float(v) for v in values]
    label = dist if values[0] < values[2] else "fixed"
    label += ", remaining" if st == IN_PROGRESS else ""
    return label, ["=" + lay.cell(i, key, sheet=True) for key in keys], values


def _activity_row(ws, fmt, a, lay: Layout, i: int, r: int) -> None:
    """ID, distribution, O/M/P (read from the Activities sheet) and the PERT shapes."""
    act = a.schedule.activities[i]
    dist = act.distribution or a.schedule.settings.distribution
    label, cells, (o_v, m_v, p_v) = _estimate_cells(a, lay, i)
    ws.write_string(r, 0, act.id)
    ws.write_string(r, 1, label)
    for col, formula, value in zip((2, 3, 4), cells, (o_v, m_v, p_v), strict=True):
        ws.write_formula(r, col, formula, fmt.num, value)
    if dist == "pert" and o_v < p_v and label != "finished":
        o, m, p = (f.ref(r, col) for col in (2, 3, 4))
        alpha = 1 + 4 * (m_v - o_v) / (p_v - o_v)
        beta = 1 + 4 * (p_v - m_v) / (p_v - o_v)
        ws.write_formula(r, 5, f.pert_alpha(o, m, p), fmt.num4, alpha)
        ws.write_formula(r, 6, f.pert_beta(o, m, p), fmt.num4, beta)


def _duration_formula(a, lay: Layout, i: int, r: int):
    """Activity ``i``'s sampled duration as a formula of its uniform's cell (a function
    of the cell): the inverse of its distribution over the O/M/P columns; plus the time
    worked for an activity in progress; the actual duration once finished."""
    act = a.schedule.activities[i]
    o, m, p = (f.ref(r, col) for col in (2, 3, 4))
    st = progress_cols.state(a, i)
    dist = act.distribution or a.schedule.settings.distribution
    fixed = st == FINISHED or not a.o[i] < a.p[i]
    worked = progress_cols.elapsed(lay, i, True) + "+" if st == IN_PROGRESS else ""

    def duration(u: str) -> str:
        if fixed:
            inverse = "=" + o
        elif dist == "pert":
            inverse = f.pert_inverse(u, f.ref(r, 5), f.ref(r, 6), o, p)
        elif dist == "triangular":
            inverse = f.triangular_inverse(u, o, m, p)
        else:
            inverse = f.uniform_inverse(u, o, p)
        return "=" + worked + inverse[1:]

    return duration


def _iteration_cells(
    ws, fmt, a, lay: Layout, i: int, r: int, k: int, t, rows: dict, links, duration: str
) -> None:
    """Traced iteration ``k``'s u, duration, early start and finish of activity ``i``."""
    c0 = _block_col(k)
    ws.write_number(r, c0, float(t.uniforms[i]), fmt.num4)
    ws.write_formula(r, c0 + 1, duration, fmt.num, float(t.durations[i]))
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
            lag_cell = lay.link_cell(int(link), "lag")  # the Links sheet's (status-shifted)
            pushes.append(f.link_push(kind, es, ef, lag_cell, f.ref(r, c0 + 1))[1:])
    while len(pushes) > MAX_ARGUMENTS:  # a function takes at most 255 arguments
        pushes = [
            "MAX(" + ",".join(pushes[g : g + MAX_ARGUMENTS]) + ")"
            for g in range(0, len(pushes), MAX_ARGUMENTS)
        ]
    # the start floors (Not before, status date, actual start) as on the Activities sheet
    start = f.early_start([*pushes, *progress_cols.start_floor_terms(a, lay, i, True)])
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
