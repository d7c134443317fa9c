"""The Ranges sheet, and the O / M / P cells that a range made from a single duration.

Where a range made an activity's estimates, its Optimistic, Most likely and Pessimistic
cells on the Activities sheet are formulas ``=Duration * Low% / 100`` (and Likely %,
High %), pointing at the Duration column at the right end of the Activities table and at
this sheet's percentages. Every range used is a row here: a class of the input's Ranges
sheet, the Default range, or inline percentages typed in a Range cell (``80/100/120``,
listed once however often typed), so that every such formula has the same shape.
"""

from __future__ import annotations

from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.layout import FIRST, RANGES, Layout
from converter.write.workbook.rows import fit_row, merged_width, row_height
from converter.write.workbook.styles import TITLE_ROW

HEADERS = ("Range", "Low %", "Likely %", "High %", "Kind", "Defined at (input)")
WIDTHS = (16.0, 9.0, 9.0, 9.0, 10.0, 40.0)
INTRO = (
    "An activity with a Duration and a range (and blank Optimistic, Most likely and "
    "Pessimistic cells) has O = Duration x Low % / 100, M = Duration x Likely % / 100 and "
    "P = Duration x High % / 100: its O, M and P on the Activities sheet are formulas that "
    "point at its Duration (Activities, right end of the table) and at the percentages "
    "below. Inline percentages typed in a Range cell are listed as a row of their own. "
    "Explicit O, M and P cells always win over a range."
)

#: The Method sheet's paragraph on ranges (shown when some activity used one).
METHOD_ROW = (
    "Ranges",
    "Where an activity has one Duration and a range class (or inline percentages "
    "low/likely/high, or the Default range), O = Duration x Low % / 100, "
    "M = Duration x Likely % / 100, P = Duration x High % / 100; the Activities sheet's O, M "
    "and P cells are these formulas, pointing at the Ranges sheet, which lists every range "
    "used, inline ones included (one row each, so that every formula has the same shape). "
    "Explicit O, M and P cells win over a range. A Duration with no range and no Default "
    "range is a fixed duration (O = M = P).",
)


def row_of(a) -> dict[str, int]:
    """Each range's row index on the Ranges sheet, by name (the order of the schedule)."""
    return {rc.name: k for k, rc in enumerate(a.schedule.ranges)}


def write_estimates(ws, fmt, lay: Layout, r: int, i: int, act, rows: dict[str, int]) -> None:
    """Activity ``i``'s O, M and P: formulas where a range made them, else as read; and
    its Duration and Range cells when the table shows them."""
    c = lay.cols
    cells = (("o", "low", act.optimistic), ("m", "likely", act.most_likely))
    cells += (("p", "high", act.pessimistic),)
    k = rows.get(act.range) if act.range_percent is not None else None
    for key, percent, value in cells:
        if k is None:
            ws.write_number(r, c[key], value, fmt.input_num)
        else:
            formula = f.from_range(lay.cell(i, "duration"), lay.range_cell(k, percent))
            ws.write_formula(r, c[key], formula, fmt.num, value)
    if not lay.ranged:
        return
    if act.duration is not None:
        ws.write_number(r, c["duration"], act.duration, fmt.input_num)
    if act.range is not None:
        ws.write_string(r, c["range"], act.range, fmt.wrap_indent)


def write_ranges(wb, fmt, a, lay: Layout) -> None:
    """The Ranges sheet: each range used, with its percentages and where it was defined."""
    ws = wb.add_worksheet(RANGES)
    ws.write_string(0, 0, "Ranges: low, most likely and high in percent of the duration", fmt.title)
    ws.set_row(0, TITLE_ROW)
    last = len(HEADERS) - 1
    ws.merge_range(1, 0, 2, last, INTRO, fmt.subtitle_wrap)
    ws.set_row(1, row_height([(INTRO, merged_width(WIDTHS))]) / 2)
    ws.set_row(2, row_height([(INTRO, merged_width(WIDTHS))]) / 2)
    for col, (head, width) in enumerate(zip(HEADERS, WIDTHS)):
        ws.write_string(FIRST - 1, col, head, fmt.th if col in (0, 4, 5) else fmt.th_center)
        ws.set_column(col, col, width)
    for k, rc in enumerate(a.schedule.ranges):
        r = FIRST + k
        ws.write_string(r, 0, rc.name, fmt.wrap)
        for col, x in ((1, rc.low), (2, rc.likely), (3, rc.high)):
            ws.write_number(r, col, x, fmt.input_num)
        ws.write_string(r, 4, "inline" if rc.inline else "class", fmt.wrap_indent)
        ws.write_string(r, 5, rc.place, fmt.wrap)
        fit_row(ws, r, [(rc.name, WIDTHS[0]), (rc.place, WIDTHS[5])])
    ws.freeze_panes(FIRST, 1)
    pages.set_up(ws, header_rows=(FIRST - 1, FIRST - 1))
