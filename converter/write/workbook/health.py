"""The Health check sheet: each check with its limit, count, verdict, offenders and sources.

Counts that the tables can recount are COUNTIF formulas; percent and pass/fail are
formulas built from the check's structured limit (:class:`converter.analyse.checks.Limit`).
Long lists of offenders are cut in the table and given in full below it, and the
sources the checks cite are listed in full once, under the table.
"""

from __future__ import annotations

from converter.analyse.checks import ESTIMATES, LOGIC, SOURCES, STRUCTURE, Check
from converter.analyse.status_checks import PROGRESS, AtLeast
from converter.write.workbook import formulas as f
from converter.write.workbook import pages, rows
from converter.write.workbook.formulas import ref
from converter.write.workbook.layout import HEALTH, Layout

#: Table columns: key, header, width in characters.
COLUMNS = [
    ("check", "Check", 20),
    ("threshold", "Threshold", 14),
    ("count", "Count", 6.5),
    ("out_of", "Out of", 6.5),
    ("percent", "Percent", 8),
    ("result", "Result", 7),
    ("offenders", "Offending activities or links", 25),
    ("matters", "Why it matters", 29),
    ("source", "Source", 23),
]
COL = {key: k for k, (key, _, _) in enumerate(COLUMNS)}
WIDTH = {key: w for key, _, w in COLUMNS}
HEADER_ROW = 3

#: Offenders named in the table cell; a longer list is given in full below the table.
SHOWN = 8

#: Offenders named below the table per check (the JSON summary lists every one).
LISTED = 2000

#: Lines of wrapped text per row of the full lists (rows stay well below a page).
LINES_PER_ROW = 12

GROUP_TITLES = {
    LOGIC: "Logic: can the network be trusted to give dates?",
    ESTIMATES: "Estimates: are the three-point ranges usable?",
    STRUCTURE: "Structure: is it one closed network?",
    PROGRESS: "Progress: does the status agree with the plan and the logic?",
}

#: Checks the sheet recounts with COUNTIF over the Links table: key -> (column, criterion).
_COUNTED_ON_LINKS = {
    "leads": ("lag", '"<0"'),
    "lags": ("lag", '">0"'),
}

#: Checks of a value per activity: key -> the Activities column holding the value.
_VALUE_COLUMN = {"high_float": "tf", "high_duration": "te"}


def _count_formula(c: Check, a, lay: Layout) -> str | None:
    """A COUNTIF that recounts the check from the Activities / Links tables, if it can."""
    links = a.net.link_count
    if c.key in _COUNTED_ON_LINKS and links:
        key, crit = _COUNTED_ON_LINKS[c.key]
        return f"=COUNTIF({lay.link_column(key)},{crit})"
    if c.key == "constraints" and "not_before" in lay.cols:
        return f"=COUNT({lay.column('not_before')})"
    if c.key == "baseline_execution_index" and "state" in lay.cols:  # the finished ones
        return f'=COUNTIF({lay.column("state")},"finished")'
    if c.key == "link_types" and links:
        col = lay.link_column("type")
        return f'=COUNTA({col})-COUNTIF({col},"FS")'
    if c.key == "summary_links" and links:  # the Links sheet's "Via summary" cells
        return f"=COUNTA({lay.link_column('via')})"
    if c.above is not None and c.key in _VALUE_COLUMN:
        above = c.above
        return f.count_above(
            lay.column(_VALUE_COLUMN[c.key]), above.days, above.tolerance, above.days_per_unit
        )
    return None


def offenders_text(c: Check) -> str:
    """The table cell: the first :data:`SHOWN` offenders, how many more, and the detail."""
    text = ", ".join(c.activities[:SHOWN])
    if len(c.activities) > SHOWN:
        text += f" and {len(c.activities) - SHOWN} more (all listed below the table)"
    if c.detail:
        text = (text + "\n" if text else "") + f"({c.detail})"
    return text


def _full_width() -> float:
    """Width of the merged cell that spans every column after the first."""
    return rows.merged_width([w for _, _, w in COLUMNS[1:]])


def write_health(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(HEALTH)
    for k, (_, _, width) in enumerate(COLUMNS):
        ws.set_column(k, k, width)
    last = len(COLUMNS) - 1
    ws.write_string(0, 0, "Schedule health check: can the logic be trusted?", fmt.title)
    failed = sum(1 for c in a.checks if not c.passed)
    note = (
        f"{failed} of {len(a.checks)} checks failed. Counts of link types, lags, long "
        "floats and long durations are COUNTIF formulas over the Activities and Links "
        "sheets; the others are counted by pertbook, with each offender listed so it can "
        "be looked up."
    )
    ws.merge_range(1, 0, 1, last, note, fmt.subtitle_wrap)
    ws.set_row(1, rows.row_height([(note, rows.merged_width(WIDTH.values()))], minimum=15.0))
    for key, head, _ in COLUMNS:
        ws.write_string(HEADER_ROW, COL[key], head, fmt.header)
    ws.set_row(HEADER_ROW, rows.row_height([(h, w, 11.0, True) for _, h, w in COLUMNS]))
    keep = []
    r = HEADER_ROW + 1
    groups = (LOGIC, ESTIMATES, STRUCTURE)
    if any(c.group == PROGRESS for c in a.checks):
        groups += (PROGRESS,)
    for group in groups:
        ws.write_string(r, 0, GROUP_TITLES[group], fmt.section)
        for col in range(1, last + 1):
            ws.write_blank(r, col, None, fmt.section)
        keep.append((r, r + 1))  # a group title stays with its first check
        r += 1
        for c in (c for c in a.checks if c.group == group):
            _check_row(ws, fmt, a, lay, r, c)
            r += 1
    r += 1
    r, blocks = _full_lists(ws, fmt, a.checks, r)
    keep += blocks
    r, block = _sources(ws, fmt, a.checks, r + 1)
    keep.append(block)
    ws.freeze_panes(HEADER_ROW + 1, 1)
    pages.set_up(ws, header_rows=(HEADER_ROW, HEADER_ROW), keep=keep)


def _check_row(ws, fmt, a, lay: Layout, r: int, c: Check) -> None:
    count, out_of = ref(r, COL["count"]), ref(r, COL["out_of"])
    ws.write_string(r, COL["check"], c.name, fmt.wrap)
    ws.write_string(r, COL["threshold"], c.threshold, fmt.wrap)
    formula = _count_formula(c, a, lay)
    if formula:
        ws.write_formula(r, COL["count"], formula, fmt.int_top, c.count)
    else:
        ws.write_number(r, COL["count"], c.count, fmt.int_top)
    if c.out_of is not None and (c.limit.share_of is not None or c.percent is not None):
        ws.write_number(r, COL["out_of"], c.out_of, fmt.int_top)
    if c.percent is not None:
        ws.write_formula(r, COL["percent"], f"={count}/{out_of}", fmt.prob_top, c.percent / 100.0)
    verdict = "pass" if c.passed else "FAIL"
    style = fmt.good_top if c.passed else fmt.flag_top
    if isinstance(c.limit, AtLeast):
        passes = f.share_at_least(count, out_of, c.limit.most)
    elif c.limit.share_of is not None:
        passes = f.share_passes(count, out_of, c.limit.most)
    else:
        passes = f.count_passes(count, c.limit.most)
    ws.write_formula(r, COL["result"], passes, style, verdict)
    texts = {
        "check": c.name,
        "threshold": c.threshold,
        "offenders": offenders_text(c),
        "matters": c.matters,
        "source": c.source,
    }
    for key in ("offenders", "matters", "source"):
        ws.write_string(r, COL[key], texts[key], fmt.wrap)
    ws.set_row(r, rows.row_height([(t, WIDTH[k]) for k, t in texts.items()], minimum=15.0))


def _full_lists(ws, fmt, checks: list[Check], r: int) -> tuple[int, list[tuple[int, int]]]:
    """Every offender of the checks whose list the table cuts; returns the next row and
    the blocks to keep on one page."""
    long = [c for c in checks if len(c.activities) > SHOWN]
    if not long:
        return r, []
    width = _full_width()
    last = len(COLUMNS) - 1
    ws.write_string(r, 0, f"Offenders in full (checks with more than {SHOWN})", fmt.section)
    for col in range(1, last + 1):
        ws.write_blank(r, col, None, fmt.section)
    blocks = [(r, r + 1)]
    r += 1
    for c in long:
        names = c.activities[:LISTED]
        text = ", ".join(names)
        if len(c.activities) > LISTED:
            text += f" and {len(c.activities) - LISTED} more (the JSON summary lists every one)"
        lines = rows.wrap_lines(text, width)
        first = r
        for start in range(0, len(lines), LINES_PER_ROW):
            chunk = " ".join(lines[start : start + LINES_PER_ROW])
            title = f"{c.name} ({len(c.activities)})"
            ws.write_string(r, 0, title if r == first else "", fmt.label_top)
            ws.merge_range(r, 1, r, last, chunk, fmt.wrap)
            ws.set_row(
                r,
                rows.row_height(
                    [(chunk, width), (title, WIDTH["check"], 11.0, True)],
                    minimum=15.0,
                ),
            )
            r += 1
        blocks.append((first, min(r - 1, first + 1)))
    return r, blocks


def _sources(ws, fmt, checks: list[Check], r: int) -> tuple[int, tuple[int, int]]:
    """The sources the checks cite, in full; returns the next row and the block."""
    cited = {cit.source for c in checks for cit in c.cited}
    width = _full_width()
    last = len(COLUMNS) - 1
    first = r
    ws.write_string(r, 0, "Sources", fmt.section)
    for col in range(1, last + 1):
        ws.write_blank(r, col, None, fmt.section)
    r += 1
    for source in (s for s in SOURCES if s in cited):
        ws.write_string(r, 0, source.short, fmt.label_top)
        ws.merge_range(r, 1, r, last, source.full, fmt.wrap)
        ws.set_row(
            r,
            rows.row_height(
                [(source.full, width), (source.short, WIDTH["check"], 11.0, True)], minimum=15.0
            ),
        )
        r += 1
    return r, (first, r - 1)
