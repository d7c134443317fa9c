"""The WBS summary rows of the Activities sheet: start, finish and span as formulas.

Each summary sits above the rows under it (:func:`converter.validate.outline.display_order`),
so those rows are one block: its start is the MIN of the block's early starts, its finish
the MAX of its early finishes (a nested summary's own MIN / MAX inside the block does not
change either), and its span the finish less the start. Estimates, floats and the other
columns stay blank, so the column-wide formulas elsewhere (project finish, counts of
activities, health-check counts) see only activities.
"""

from __future__ import annotations

from converter.write.workbook import formulas as f
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import Layout
from converter.write.workbook.rows import fit_row

#: Indent (in steps of the spreadsheet's indent) per WBS level below the top.
MOST_INDENT = 8


def summary_formats(wb, depth: int) -> dict[str, object]:
    """Bold formats for a summary row at ``depth`` (0 = top level), made on demand."""
    return {
        "name": wb.add_format(
            {"bold": True, "text_wrap": True, "valign": "top", "indent": min(depth, MOST_INDENT)}
        ),
        "text": wb.add_format({"bold": True, "text_wrap": True, "valign": "top"}),
        # indented, so the code stands apart from the figure to its left
        "wbs": wb.add_format({"bold": True, "text_wrap": True, "valign": "top", "indent": 1}),
        "num": wb.add_format({"bold": True, "num_format": "0.00"}),
        "date": wb.add_format({"bold": True, "num_format": "yyyy-mm-dd"}),
    }


def activity_indent(wb, depth: int):
    """The description format of an activity at ``depth`` under the summaries."""
    return wb.add_format({"text_wrap": True, "valign": "top", "indent": min(depth, MOST_INDENT)})


def depths(schedule) -> tuple[list[int], list[int]]:
    """How many summaries sit above each summary, and above each activity."""
    by_wbs = {s.wbs: s for s in schedule.summaries}

    def depth(parent: str | None) -> int:
        d = 0
        while parent is not None:
            d, parent = d + 1, by_wbs[parent].parent
        return d

    return (
        [depth(s.parent) for s in schedule.summaries],
        [depth(a.summary) for a in schedule.activities],
    )


def write_summary_rows(wb, ws, a, lay: Layout, widths: dict[str, float]) -> None:
    """Every summary row: WBS code, name, predecessors as typed, start, finish, span."""
    figures, c = a.summaries, lay.cols
    summary_depths, _ = depths(a.schedule)
    looks = {d: summary_formats(wb, d) for d in sorted(set(summary_depths))}  # one per depth
    for j, s in enumerate(a.schedule.summaries):
        look = looks[summary_depths[j]]
        r, last = lay.summary_rows[j], lay.summary_rows[j] + figures.extent[j]
        name = s.name if s.id in (s.wbs, s.name) else f"{s.name} (ID {s.id})"
        ws.write_string(r, c["name"], name, look["name"])
        ws.write_string(r, c["pred"], s.predecessors, look["text"])
        ws.write_string(r, c["wbs"], s.wbs, look["wbs"])
        fit_row(ws, r, [(name, widths["name"]), (s.predecessors, widths["pred"])])
        for key, build, value in (
            ("es", f.summary_start, float(figures.start[j])),
            ("ef", f.summary_finish, float(figures.finish[j])),
        ):
            ws.write_formula(r, c[key], build(f.span(r + 1, last, c[key])), look["num"], value)
        start, finish = f.ref(r, c["es"]), f.ref(r, c["ef"])
        ws.write_formula(r, c["span"], f.minus(finish, start), look["num"], float(figures.span[j]))
        if figures.start_dates is not None:
            for key, build, when in (
                ("es_date", f.summary_start, figures.start_dates[j]),
                ("ef_date", f.summary_finish, figures.finish_dates[j]),
            ):
                cells = f.span(r + 1, last, c[key])
                ws.write_formula(r, c[key], build(cells), look["date"], serial(when))
