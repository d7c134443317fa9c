"""The Changes sheet: what moved between a baseline run and this one.

Both runs' figures are values as each run recorded them; every change is a formula on the
two columns beside it (new - old; TE from the two O/M/P triples; working days between the
two finish dates), so a reviewer can check each one. The comparison itself is
:class:`converter.compare.Changes`; nothing is computed here.
"""

from __future__ import annotations

from pathlib import Path

from converter.values import printable
from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.activities import serial
from converter.write.workbook.rows import fit_row, merged_width, row_height
from converter.write.workbook.styles import TABLE_HEAD_SIZE, TITLE_ROW

CHANGES = "Changes"
#: Column widths (characters): ID, description, then seven figure columns.
WIDTHS = (11, 34, 11, 11, 11, 11, 11, 11, 11)
LAST = len(WIDTHS) - 1


class _Sheet:
    """A cursor over the sheet: writes a row, moves on, remembers the blocks to keep."""

    def __init__(self, ws, fmt) -> None:
        self.ws, self.fmt, self.r, self.keep = ws, fmt, 0, []
        self.top: int | None = None  # the title row of the section being written

    def close(self) -> None:
        """Keep the section just written whole where it fits a page: its head, which is
        not repeated, then stands over all its rows."""
        if self.top is not None:
            self.keep.append((self.top, self.r - 1))
        self.top = None

    def text(self, col: int, value: str, style, last: int | None = None) -> None:
        value = printable(value)
        if last is not None and last > col:
            self.ws.merge_range(self.r, col, self.r, last, value, style)
        else:
            self.ws.write_string(self.r, col, value, style)

    def number(self, col: int, value, style) -> None:
        if value is None:
            self.ws.write_string(self.r, col, "n/a", self.fmt.text_right)
        else:
            self.ws.write_number(self.r, col, float(value), style)

    def change(self, col: int, old_col: int, new_col: int, value, style) -> None:
        """new - old as a formula on the two cells, or n/a where one run lacks the figure."""
        if value is None:
            self.ws.write_string(self.r, col, "n/a", self.fmt.text_right)
            return
        old, new = f.ref(self.r, old_col), f.ref(self.r, new_col)
        self.ws.write_formula(self.r, col, f.minus(new, old), style, float(value))

    def section(self, title: str, heads: list[tuple[int, str]]) -> None:
        """A section's title and its table head; the head stays with its first rows, or
        with all of them where they fit a page."""
        self.close()
        self.r += 1
        self.top = self.r
        self.ws.write_string(self.r, 0, title, self.fmt.section_title)
        for col in range(1, LAST + 1):
            self.ws.write_blank(self.r, col, None, self.fmt.section_title)
        self.keep.append((self.r, self.r + 3))
        self.r += 1
        cells = []
        for k, (col, head) in enumerate(heads):
            last = heads[k + 1][0] - 1 if k + 1 < len(heads) else col
            self.text(col, head, self.fmt.th if col < 2 else self.fmt.th_center, last)
            cells.append((head, merged_width(WIDTHS[col : last + 1]), TABLE_HEAD_SIZE, True))
        self.ws.set_row(self.r, row_height(cells))
        self.r += 1

    def none(self, words: str = "(none)") -> None:
        self.text(0, words, self.fmt.note_italic, LAST)
        self.r += 1


def write_changes(wb, fmt, changes) -> None:
    """The Changes sheet of ``changes`` (see the module docstring)."""
    ws = wb.add_worksheet(CHANGES)
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    s = _Sheet(ws, fmt)
    ws.write_string(0, 0, "What moved since the baseline run", fmt.title)
    ws.set_row(0, TITLE_ROW)
    s.r = 1
    s.text(0, changes.account, fmt.wrap, LAST)
    fit_row(ws, 1, [(changes.account, merged_width(WIDTHS))])
    s.r = 2
    _runs(s, changes)
    _finish(s, changes)
    _critical(s, changes)
    _added_removed(s, changes)
    _estimates(s, changes)
    _movers(s, changes)
    _drivers(s, changes)
    _risks(s, changes)
    s.close()
    pages.set_up(ws, keep=s.keep)


def _runs(s: _Sheet, ch) -> None:
    s.section(
        "The two runs", [(0, "Setting"), (2, "Old run (baseline)"), (5, "New run"), (8, "Differs")]
    )
    rows = [
        ("Analysis file", Path(ch.old.file).name, Path(ch.new.file).name),
        ("Input file", str(ch.old.input_file or ""), str(ch.new.input_file or "")),
        ("Input SHA-256", str(ch.old.sha256 or ""), str(ch.new.sha256 or "")),
    ]
    rows += [(label, old, new) for label, old, new in ch.settings]
    width = merged_width(WIDTHS[2:5])
    for label, old, new in rows:
        s.text(0, label, s.fmt.label, 1)
        s.text(2, old, s.fmt.wrap, 4)
        s.text(5, new, s.fmt.wrap, 7)
        if label in ch.differ:
            s.text(8, "differs", s.fmt.flag_top)
        fit_row(s.ws, s.r, [(printable(old), width), (printable(new), width)])
        s.r += 1


def _finish(s: _Sheet, ch) -> None:
    moved = "Moved (days)" if _weekend(ch) is None else "Moved (working days)"
    s.section(
        "The finish: old, new and the change",
        [
            (0, "Figure"),
            (2, "Old"),
            (3, "New"),
            (4, "Change (new - old)"),
            (5, "Old date"),
            (6, "New date"),
            (7, moved),
        ],
    )
    for fig in ch.figures:
        style = s.fmt.prob if fig.kind == "chance" else s.fmt.num
        s.text(0, fig.label, s.fmt.label_top, 1)
        fit_row(s.ws, s.r, [(fig.label, merged_width(WIDTHS[:2]), 11.0, True)])
        s.number(2, fig.old, style)
        s.number(3, fig.new, style)
        s.change(4, 2, 3, fig.change, style)
        if fig.old_date is not None and fig.new_date is not None:
            s.number(5, serial(fig.old_date), s.fmt.date)
            s.number(6, serial(fig.new_date), s.fmt.date)
            if fig.days_moved is not None:
                formula = f.days_moved(f.ref(s.r, 5), f.ref(s.r, 6), _weekend(ch), _holidays(ch))
                s.ws.write_formula(s.r, 7, formula, s.fmt.int, fig.days_moved)
        s.r += 1
    note = (
        f"Durations in {ch.new.time_unit}; dates are the working day on which that duration "
        "ends, each on its own run's calendar; days moved are counted on the new run's "
        "calendar."
    )
    s.text(0, note, s.fmt.note_italic, LAST)
    fit_row(s.ws, s.r, [(note, merged_width(WIDTHS))])
    s.r += 1


def _weekend(ch) -> str | None:
    cal = ch.new.calendar
    return None if cal is None or cal.unit == "calendar days" else cal.weekend_code


def _holidays(ch) -> list[float]:
    return [serial(h) for h in ch.new.calendar.holidays] if ch.new.calendar else []


def _moves(s: _Sheet, moves, style, tag: str | None = None) -> None:
    """Rows of ID, description, [tag,] old, new, change."""
    first = 2 if tag is None else 3
    for m in moves:
        s.text(0, m.id, s.fmt.wrap)
        s.text(1, m.name, s.fmt.wrap)
        if tag is not None:
            s.text(2, tag, s.fmt.center)
        s.number(first, m.old, style)
        s.number(first + 1, m.new, style)
        s.change(first + 2, first, first + 1, m.change, style)
        fit_row(s.ws, s.r, [(printable(m.id), WIDTHS[0]), (printable(m.name), WIDTHS[1])])
        s.r += 1


def _critical(s: _Sheet, ch) -> None:
    s.section(
        "Activities that joined or left the critical path",
        [
            (0, "ID"),
            (1, "Description"),
            (2, "Joined / left"),
            (3, "Total float, old"),
            (4, "Total float, new"),
            (5, "Change"),
        ],
    )
    _moves(s, ch.joined, s.fmt.num, "joined")
    _moves(s, ch.left, s.fmt.num, "left")
    if not ch.joined and not ch.left:
        s.none()


def _added_removed(s: _Sheet, ch) -> None:
    s.section(
        "Activities added and removed (matched by ID)",
        [(0, "ID"), (1, "Description"), (2, "Added / removed")],
    )
    for items, tag in ((ch.added, "added"), (ch.removed, "removed")):
        for ident, name in items:
            s.text(0, ident, s.fmt.wrap)
            s.text(1, name, s.fmt.wrap)
            s.text(2, tag, s.fmt.center)
            fit_row(s.ws, s.r, [(printable(ident), WIDTHS[0]), (printable(name), WIDTHS[1])])
            s.r += 1
    if not ch.added and not ch.removed:
        s.none()


def _estimates(s: _Sheet, ch) -> None:
    s.section(
        "Estimates that changed",
        [
            (0, "ID"),
            (1, "Description"),
            (2, "Old O"),
            (3, "Old M"),
            (4, "Old P"),
            (5, "New O"),
            (6, "New M"),
            (7, "New P"),
            (8, "Change in TE"),
        ],
    )
    for e in ch.estimates:
        s.text(0, e.id, s.fmt.wrap)
        s.text(1, e.name, s.fmt.wrap)
        for k, value in enumerate((*e.old, *e.new)):
            s.number(2 + k, value, s.fmt.input_num)
        old = tuple(f.ref(s.r, c) for c in (2, 3, 4))
        new = tuple(f.ref(s.r, c) for c in (5, 6, 7))
        s.ws.write_formula(s.r, 8, f.te_change(old, new), s.fmt.num, e.te_change)
        fit_row(s.ws, s.r, [(printable(e.id), WIDTHS[0]), (printable(e.name), WIDTHS[1])])
        s.r += 1
    if not ch.estimates:
        s.none()


def _movers(s: _Sheet, ch) -> None:
    tables = (
        ("total_float", "Largest movers in total float", s.fmt.num),
        ("criticality", "Largest movers in criticality index (simulated)", s.fmt.prob),
        ("sensitivity", "Largest movers in sensitivity (simulated)", s.fmt.num),
    )
    for key, title, style in tables:
        s.section(title, [(0, "ID"), (1, "Description"), (2, "Old"), (3, "New"), (4, "Change")])
        _moves(s, ch.movers[key], style)
        if not ch.movers[key]:
            s.none(
                "(none moved)"
                if ch.old.simulated and ch.new.simulated or key == "total_float"
                else "(a run without simulation)"
            )


def _drivers(s: _Sheet, ch) -> None:
    for which, run in (("old", ch.old), ("new", ch.new)):
        s.section(
            f"Top risk drivers, {which} run (by sensitivity)",
            [(0, "ID"), (1, "Description"), (2, "Sensitivity"), (3, "Criticality index")],
        )
        for m in ch.drivers[which]:
            s.text(0, m.id, s.fmt.wrap)
            s.text(1, m.name, s.fmt.wrap)
            s.number(2, m.old, s.fmt.num)
            s.number(3, m.new, s.fmt.prob)
            fit_row(s.ws, s.r, [(printable(m.id), WIDTHS[0]), (printable(m.name), WIDTHS[1])])
            s.r += 1
        if not ch.drivers[which]:
            s.none("(no simulation in this run)" if not run.simulated else "(none)")


def _risks(s: _Sheet, ch) -> None:
    if ch.risks is None:
        return
    s.section(
        "Named risks, old and new (by their effect on the P80 finish)",
        [
            (0, "Risk"),
            (1, "Description"),
            (2, "Old probability"),
            (3, "New probability"),
            (4, "Old P80 delay"),
            (5, "New P80 delay"),
            (6, "Change"),
        ],
    )
    for risk in ch.risks:
        old, new = risk.old or {}, risk.new or {}
        s.text(0, risk.id, s.fmt.wrap)
        s.text(1, risk.description, s.fmt.wrap)
        s.number(2, old.get("probability"), s.fmt.prob)
        s.number(3, new.get("probability"), s.fmt.prob)
        s.number(4, old.get("delta_p80"), s.fmt.num)
        s.number(5, new.get("delta_p80"), s.fmt.num)
        both = old.get("delta_p80") is not None and new.get("delta_p80") is not None
        s.change(6, 4, 5, new["delta_p80"] - old["delta_p80"] if both else None, s.fmt.num)
        fit_row(
            s.ws, s.r, [(printable(risk.id), WIDTHS[0]), (printable(risk.description), WIDTHS[1])]
        )
        s.r += 1
    if not ch.risks:
        s.none()
