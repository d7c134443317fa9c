"""The Summary sheet: the headline a reviewer reads first, with the defined names.

Page 1 answers "when will it finish, how sure are we, and what drives it": the finish at
each confidence level from the simulation (it sees every path) with the critical-path
figure beside it, both with dates; the chances of meeting the due date; the drivers, the
critical path, the riskier paths and the failed health checks; and the caution. Page 2
holds the details: the critical-path view, the simulated view, and the input.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from xlsxwriter.utility import xl_rowcol_to_cell

from converter.values import printable
from converter.write.workbook import formulas as f
from converter.write.workbook import pages
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import FIRST, PATHS, SUMMARY, Layout
from converter.write.workbook.risks_sheet import summary_texts
from converter.write.workbook.rows import (
    DEFAULT_FONT_SIZE,
    DEFAULT_ROW_HEIGHT,
    fit_row,
    merged_width,
    row_height,
)
from converter.write.workbook.status_summary import write_status
from converter.write.workbook.styles import TITLE_ROW
from converter.write.workbook.trace import trace_sentences

CAUTION = (
    "Caution: these figures are estimates computed from the team's own three-point "
    "inputs and logic. They are not a promise or a guarantee of any date. Contractual, "
    "regulatory or safety-critical dates need review by a competent professional under the "
    "local rules and the contract terms that apply."
)

#: Columns: label, simulated figure, its date, critical-path figure, its date, a gap, note.
WIDTHS = (37.0, 11.0, 13.5, 12.5, 11.5, 1.5, 43.0)
#: Without a calendar the date columns close up and the note takes their room.
WIDTHS_NO_DATES = (37.0, 11.0, 2.0, 12.5, 2.0, 1.5, 64.0)
LABEL, SIM, SIM_DATE, CP, CP_DATE, GAP, NOTE = range(7)
DRIVERS_SHOWN = 5


def _abs(row: int, col: int = 1) -> str:
    return f"={SUMMARY}!" + xl_rowcol_to_cell(row, col, row_abs=True, col_abs=True)


def _dt(d: dt.date) -> dt.datetime:
    return dt.datetime(d.year, d.month, d.day)


class _Rows:
    """Writes the Summary row by row and gives each row the height its text needs."""

    def __init__(self, wb, ws, fmt, a) -> None:
        self.wb, self.ws, self.fmt, self.a = wb, ws, fmt, a
        self.r = 0
        cal = a.calendar
        self.cal = cal
        self.widths = WIDTHS if cal is not None else WIDTHS_NO_DATES
        self.holidays = "Holidays" if (cal is not None and cal.holidays) else None

    def name(self, name: str, row: int, col: int) -> None:
        self.wb.define_name(name, _abs(row, col))

    def date(self, row: int, col: int, duration: str, when, fmt=None) -> None:
        """The calendar date a duration ends on, as a formula (nothing without a calendar)."""
        if self.cal is None or when is None:
            return
        formula = "=" + self.cal.finish_date_formula(duration, "ProjectStart", self.holidays)
        self.ws.write_formula(row, col, formula, fmt or self.fmt.date, serial(when))

    def section(self, title: str, heads: dict[int, str] | None = None) -> None:
        """A gap, then a section title with column heads over a rule."""
        self.ws.set_row(self.r, 9.0)
        self.r += 1
        self.ws.write_string(self.r, LABEL, title, self.fmt.section_title)  # spills over blanks
        for col in range(SIM, NOTE + 1):
            if col in (heads or {}):
                self.ws.write_string(self.r, col, heads[col], self.fmt.section_head)
            else:
                self.ws.write_blank(self.r, col, None, self.fmt.section_head)
        self.fit(
            self.r,
            [("0", self.widths[LABEL], 12.0, True)]
            + [(t, self.widths[c], DEFAULT_FONT_SIZE, True) for c, t in (heads or {}).items()],
        )
        self.r += 1

    def line(self, label: str, note: str | None = None, start: int = NOTE) -> int:
        """A labelled row; its note spans the columns from ``start`` to the last."""
        row = self.r
        self.ws.write_string(row, LABEL, label, self.fmt.label_wrap)
        cells = [(label, self.widths[LABEL], DEFAULT_FONT_SIZE, True)]
        if note:
            if start < NOTE:
                self.ws.merge_range(row, start, row, NOTE, note[:32000], self.fmt.note)
            else:
                self.ws.write_string(row, NOTE, note[:32000], self.fmt.note)
            cells.append((note, merged_width(self.widths[start:]) - 1.0))  # less the indent
        self.fit(row, cells)
        self.r += 1
        return row

    def fit(self, row: int, cells) -> None:
        fit_row(self.ws, row, cells)


def write_summary(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(SUMMARY)
    out = _Rows(wb, ws, fmt, a)
    for col, width in enumerate(out.widths):
        ws.set_column(col, col, width)
    ws.write_string(0, 0, "Schedule risk summary", fmt.title)
    ws.set_row(0, TITLE_ROW)
    intro = (
        "Live formulas and inputs (click one to follow it), except the simulated "
        "figures: values from the run on the Simulation sheet. Named cells (ProjectMean, "
        "DueDuration, ...) are in the Name Box. Details on page 2."
    )
    ws.merge_range(1, 0, 1, NOTE, intro, fmt.subtitle_wrap)
    out.fit(1, [(intro, merged_width(out.widths))])
    out.r = 2
    sections = [out.r]  # each section's first row: a section that must move moves whole
    if a.remaining_work is not None and a.remaining_work.progress is not None:
        write_status(out, lay, (SIM, SIM_DATE, CP, CP_DATE))
        sections.append(out.r)
    for section in (lambda: _when(out, lay), lambda: _how_sure(out), lambda: _what_drives(out)):
        section()
        sections.append(out.r)
    out.r += 1
    ws.merge_range(out.r, 0, out.r, NOTE, CAUTION, fmt.caution)
    out.fit(out.r, [(CAUTION, merged_width(out.widths))])
    details = out.r + 2
    out.r = details - 1
    _critical_path_view(out, lay)
    _simulated_view(out)
    _about(out, lay)
    blocks = [(top, bottom - 1) for top, bottom in zip(sections, sections[1:], strict=False)]
    pages.set_up(ws, keep=[(0, details - 1), *blocks], starts=[details])


def _when(out: _Rows, lay: Layout) -> None:
    """Finish at each confidence level: simulated, with the critical-path figure beside."""
    a, ws, fmt = out.a, out.ws, out.fmt
    sim = a.simulation
    unit = a.schedule.settings.time_unit
    heads = {SIM: "Simulated", CP: "Critical path"}
    if out.cal is not None:
        heads.update({SIM_DATE: "Date", CP_DATE: "Date"})
    out.section("When will it finish?", heads)
    rows = {round(row.confidence, 4): row for row in a.confidence_table}
    first = out.r
    for c in sorted(a.confidence):
        row = out.line(f"With {c:.0%} confidence ({unit})")
        big = c == 0.8 or len(a.confidence) == 1
        if sim is not None:
            conf = rows[round(c, 4)]
            ws.write_number(row, SIM, conf.simulated, fmt.big_value if big else fmt.num)
            out.date(
                row,
                SIM_DATE,
                f.ref(row, SIM),
                conf.simulated_date,
                fmt.big_value_date if big else None,
            )
        ws.write_formula(row, CP, f.duration_at(repr(float(c))), fmt.num, a.confidence[c])
        out.date(row, CP_DATE, f.ref(row, CP), a.confidence_dates.get(c))
    row = out.line(f"Expected finish, the mean ({unit})")
    if sim is not None:
        ws.write_number(row, SIM, float(sim.mean), fmt.num)
    ws.write_formula(row, CP, f"=MAX({lay.column('ef')})", fmt.num, a.project_mean)
    out.name("ProjectFinish", row, CP)
    out.name("ProjectMean", row, CP)
    out.date(row, CP_DATE, "ProjectMean", a.finish_date)
    if sim is not None:
        note = (
            f"Plan on the simulated figures: {sim.iterations:,} runs of the whole network "
            "see every path that may finish last. The critical-path figures follow one "
            "path only, and come out early where paths merge."
        )
    else:
        note = (
            "Not simulated (converted with --no-simulation): the critical-path figures "
            "follow one path and understate the finish where parallel paths merge."
        )
    ws.merge_range(first, NOTE, out.r - 1, NOTE, note, fmt.note_italic)
    _fit_merged(out, first, out.r - 1, note)


def _fit_merged(out: _Rows, first: int, last: int, text: str) -> None:
    """Grow the last row of a block so a note merged over the block's rows fits."""
    need = row_height([(text, out.widths[NOTE] - 1.0)])
    have = DEFAULT_ROW_HEIGHT * (last - first + 1)
    if need > have:
        out.ws.set_row(last, DEFAULT_ROW_HEIGHT + need - have)


def _how_sure(out: _Rows) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    sim = a.simulation
    out.section("How sure are we?", {SIM: "Chance"})
    if a.due is None:
        out.line(
            "Due date",
            "None given: give one with --due, or a 'Due date' row on a "
            "Settings sheet, to see the chance of meeting it.",
        )
        return
    _due_rows(out)
    if sim is not None and sim.p_meet_due is not None:
        row = out.line(
            "Simulated chance of meeting the due date",
            "The share of the simulated runs that finish by the due date.",
        )
        ws.write_number(row, SIM, float(sim.p_meet_due), fmt.big_prob)
    lower = (
        sim is not None
        and sim.p_meet_due is not None
        and a.p_meet_due is not None
        and sim.p_meet_due < a.p_meet_due
    )
    note = (
        "From the critical path alone, which overstates it: other paths can finish "
        "later. Trust the lower, simulated figure."
        if lower
        else "From the critical path alone (normal approximation)."
    )
    row = out.line("Chance of meeting the due date (critical path)", note)
    ws.write_formula(
        row, SIM, f.p_meet("DueDuration", "ProjectMean", "ProjectSD"), fmt.big_prob, a.p_meet_due
    )
    out.name("PMeetDue", row, SIM)


def _due_rows(out: _Rows) -> None:
    """The due date (DueDate, an input date) and its duration (DueDuration)."""
    a, ws, fmt, cal = out.a, out.ws, out.fmt, out.cal
    st = a.schedule.settings
    unit = st.time_unit
    source = f"From {st.source_of('due')}."
    if a.due_date is not None and not isinstance(st.due, (int, float)):
        row = out.line(
            f"Due date ({unit} from the start)", f"{source} Working time up to the end of that day."
        )
        ws.write_datetime(row, SIM_DATE, _dt(a.due_date), fmt.input_date)
        out.name("DueDate", row, SIM_DATE)
        ws.write_formula(
            row,
            SIM,
            "=" + cal.offset_of_formula("DueDate", "ProjectStart", out.holidays),
            fmt.num,
            a.due,
        )
    else:
        row = out.line(f"Due ({unit} from the start)", source)
        ws.write_number(row, SIM, a.due, fmt.input_num)
        out.date(row, SIM_DATE, "DueDuration", a.due_date)
    out.name("DueDuration", row, SIM)


def _what_drives(out: _Rows) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    sim = a.simulation
    out.section("What drives it?")
    if sim is not None and a.drivers:
        acts = a.schedule.activities
        words = "; ".join(
            f"{a.ids[i]} {acts[i].name} ({_sensitivity(sim.sensitivity[i])})"
            for i in a.drivers[:DRIVERS_SHOWN]
        )
        out.line(
            "Top risk drivers (simulated sensitivity)",
            words + ". Their uncertainty moves the finish most: firm up these "
            "estimates first (Simulation sheet).",
            start=SIM,
        )
    for label, text in summary_texts(a):  # the named risks (with a register)
        out.line(label, text, start=SIM)
    crit = " > ".join(a.critical_ids)
    if a.tied_longest > 1:
        crit += (
            f" ({a.tied_longest} paths tie for the longest; this one has the largest "
            "variance, the cautious choice)"
        )
    out.line("Critical path", crit, start=SIM)
    _riskier(out)
    failed = [c for c in a.checks if not c.passed]
    text = (
        "Failed: " + "; ".join(c.name for c in failed) + ". Logic problems (missing "
        "links, leads, long lags) make the dates and chances unreliable: see the Health "
        "check sheet."
        if failed
        else "None failed."
    )
    row = out.r
    ws.write_string(row, LABEL, "Schedule health checks failed", fmt.label_wrap)
    ws.write_number(row, SIM, len(failed), fmt.flag if failed else fmt.good)
    ws.merge_range(row, SIM_DATE, row, NOTE, text, fmt.note)
    out.fit(row, [(text, merged_width(out.widths[SIM_DATE:]) - 1.0)])
    out.r += 1


def _riskier(out: _Rows) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    riskier = a.riskier_paths
    if not riskier:
        return
    numbers = ", ".join(str(k + 1) for k in riskier[:20]) + (" ..." if len(riskier) > 20 else "")
    words = "; ".join(_path_words(a, k) for k in riskier[:5])
    if len(riskier) > 5:
        words += f"; and {len(riskier) - 5} more"
    note = (
        f"{words}. These shorter paths have more spread and a LOWER chance of meeting "
        "the due date than the critical path, so the critical-path figure overstates "
        "the chance of finishing on time. See the Paths sheet."
    )[:32000]
    row = out.r
    ws.write_string(row, LABEL, "Paths riskier than the critical path (path no.)", fmt.label_wrap)
    ws.write_string(row, SIM, numbers, fmt.flag)
    ws.merge_range(row, CP, row, NOTE, note, fmt.note)
    out.fit(
        row,
        [
            (note, merged_width(out.widths[CP:]) - 1.0),
            ("Paths riskier than the critical path (path no.)", out.widths[LABEL], 10, True),
        ],
    )
    out.r += 1


def _critical_path_view(out: _Rows, lay: Layout) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    out.section("Critical path view (PERT)")
    row = out.line(
        "Variance along the critical path",
        "Sum of the variances of the activities on path 1 of the Paths sheet.",
    )
    ws.write_formula(row, SIM, f"={PATHS}!$C${FIRST + 1}", fmt.num4, a.project_variance)
    out.name("ProjectVariance", row, SIM)
    row = out.line("Standard deviation")
    ws.write_formula(row, SIM, "=SQRT(ProjectVariance)", fmt.num, a.project_sd)
    out.name("ProjectSD", row, SIM)
    if a.due is not None:
        row = out.line("z = (due - mean) / sd")
        ws.write_formula(
            row,
            SIM,
            f.z_score("DueDuration", "ProjectMean", "ProjectSD"),
            fmt.num4,
            a.z if a.z is not None else "n/a",
        )
        out.name("ZScore", row, SIM)
    if a.p_all_paths is not None:
        k = len(a.paths)
        prange = f"{PATHS}!$F${FIRST + 1}:$F${FIRST + k}"
        row = out.line(
            f"Chance all {k} listed paths meet the due date: at least",
            "Product of the path chances: a lower bound because paths sharing "
            "independent activities are positively associated (Esary, Proschan "
            "& Walkup 1967).",
        )
        ws.write_formula(row, SIM, f"=PRODUCT({prange})", fmt.prob, a.p_all_paths[0])
        row = out.line("... and at most", "The smallest single-path chance.")
        ws.write_formula(row, SIM, f"=MIN({prange})", fmt.prob, a.p_all_paths[1])


def _simulated_view(out: _Rows) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    sim = a.simulation
    out.section("Simulated view (Monte Carlo, all paths at once)")
    if sim is None:
        row = out.line(
            "Simulated view",
            "Converted with --no-simulation: only the "
            "single-path view, which understates the finish where parallel "
            "paths merge.",
        )
        ws.write_string(row, SIM, "not run", fmt.text_right)
        return
    row = out.line(
        "Run",
        f"{sim.iterations:,} iterations, seed {sim.seed}, "
        f"{sim.distribution} durations; values, not formulas (see Simulation).",
        start=SIM,
    )
    for formula, text in trace_sentences(a):
        row = out.line("Traced iteration", text, start=SIM)
        ws.write_formula(row, SIM, formula, fmt.note, text)
    for label, value, style in (
        ("Simulated mean finish", sim.mean, fmt.num),
        ("Simulated standard deviation", sim.sd, fmt.num),
        ("Merge bias (simulated mean - PERT mean)", sim.merge_bias, fmt.num),
    ):
        row = out.line(label)
        ws.write_number(row, SIM, float(value), style)
    out.line("Why the two views differ", gap_explanation(a), start=SIM)


def _about(out: _Rows, lay: Layout) -> None:
    a, ws, fmt = out.a, out.ws, out.fmt
    s = a.schedule
    out.section("About this analysis")
    row = out.line("Input file")
    ws.write_string(row, SIM, printable(Path(s.input_file).name))
    row = out.line("Input SHA-256")
    ws.write_string(row, SIM, s.sha256)
    row = out.line("Activity sheet", " ".join(s.notes) or None, start=CP)
    ws.write_string(row, SIM, s.sheet)
    row = out.line("Activities")
    ws.write_formula(row, SIM, f"=COUNTA({lay.column('id')})", fmt.int, len(a.ids))
    row = out.line("Links")
    if a.net.link_count:
        ws.write_formula(row, SIM, f"=COUNTA({lay.link_column('from')})", fmt.int, a.net.link_count)
    else:
        ws.write_number(row, SIM, 0, fmt.int)
    warn_n = len(s.warnings)
    row = out.line("Warnings in the input", "See the Warnings sheet." if warn_n else None)
    ws.write_number(row, SIM, warn_n, fmt.int)
    row = out.line("Time unit")
    ws.write_string(row, SIM, s.settings.time_unit)
    if out.cal is not None:
        row = out.line("Project start", "Offset 0 is the start of this day.")
        ws.write_datetime(row, SIM, _dt(out.cal.start), fmt.input_date)
        out.name("ProjectStart", row, SIM)
    row = out.line(
        "Float tolerance (counts as zero)",
        f"Total float at or below this counts as zero ({f.TOLERANCE_WORDS}), so "
        "rounding in the passes does not hide a critical activity.",
    )
    ws.write_formula(row, SIM, f.float_tolerance("ProjectFinish"), fmt.sci, a.float_tolerance)
    out.name("FloatTolerance", row, SIM)


def _sensitivity(value: float) -> str:
    return "n/a" if value != value else f"{float(value):.2f}"  # NaN: a fixed duration


def _path_words(a, k: int) -> str:
    pr = a.paths[k]
    ids = [a.ids[i] for i in pr.path.activities]
    route = " > ".join(ids) if len(ids) <= 6 else " > ".join(ids[:3] + ["..."] + ids[-2:])
    return (
        f"path {k + 1} ({route}): expected {pr.path.mean:.1f}, sd {pr.path.sd:.1f}, "
        f"chance {pr.p_meet_due:.0%}"
    )


def gap_explanation(a) -> str:
    sim = a.simulation
    parts = []
    if sim.merge_bias > 1e-9:
        parts.append(
            f"The simulated mean is {sim.merge_bias:.2f} later than the PERT mean: where parallel "
            "paths merge, the finish is the LATEST of them, and the expected maximum of several "
            "uncertain paths exceeds the longest expected path (merge bias; MacCrimmon & Ryavec "
            "1964). The single-path PERT figure ignores the other paths."
        )
    else:
        parts.append(
            "The simulated mean is close to the PERT mean: little merging of competing paths."
        )
    if sim.p_meet_due is not None and a.p_meet_due is not None:
        if sim.p_meet_due < a.p_meet_due:
            parts.append(
                f"The simulated chance of meeting the due date ({sim.p_meet_due:.1%}) "
                f"is below the critical-path figure ({a.p_meet_due:.1%}); trust the "
                "lower one."
            )
        else:
            parts.append(
                f"The simulated chance ({sim.p_meet_due:.1%}) is not below the "
                f"critical-path figure ({a.p_meet_due:.1%})."
            )
    if sim.correlation > 0 and sim.independent is not None:
        parts.append(
            f"Correlation {sim.correlation:g} within groups widens the spread: sd "
            f"{sim.sd:.2f} against {sim.independent.sd:.2f} if independent."
        )
    if sim.distribution == "pert":
        parts.append(
            "The simulation samples beta-shaped durations whose variance is "
            "(mu-a)(b-mu)/7, not the rounder ((b-a)/6)^2 of the PERT formula."
        )
    else:
        parts.append(
            f"The simulation samples {sim.distribution} durations, whose spread "
            "differs from the ((b-a)/6)^2 of the PERT formula."
        )
    return " ".join(parts)
