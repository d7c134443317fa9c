"""The Summary sheet: the headline a reviewer reads first, with the defined names."""

from __future__ import annotations

from xlsxwriter.utility import xl_rowcol_to_cell

from converter.write.workbook import formulas as f
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import FIRST, PATHS, SUMMARY, Layout

CAUTION = (
    "Caution: these figures are estimates computed from the team's own three-point "
    "inputs and logic. They are not a promise or a guarantee of any date. Contractual, "
    "regulatory or safety-critical dates need review by a competent professional under the "
    "local rules and the contract terms that apply."
)


def _abs(row: int, col: int = 1) -> str:
    return f"={SUMMARY}!" + xl_rowcol_to_cell(row, col, row_abs=True, col_abs=True)


def write_summary(wb, fmt, a, lay: Layout) -> None:
    ws = wb.add_worksheet(SUMMARY)
    ws.set_column(0, 0, 52)
    ws.set_column(1, 1, 18)
    ws.set_column(2, 2, 14)
    ws.set_column(3, 3, 70)
    s = a.schedule
    st = s.settings
    cal = a.calendar
    holidays = "Holidays" if (cal is not None and cal.holidays) else None
    ws.write_string(0, 0, "Schedule risk summary", fmt.title)
    ws.write_string(1, 0, "Every figure in column B is a live formula or an input; click a cell "
                    "to follow it. Named cells (e.g. ProjectMean, ProjectSD, DueDuration) are "
                    "listed in the Name Box.", fmt.subtitle)
    r = 3

    def line(label, write, note=None):
        nonlocal r
        ws.write_string(r, 0, label, fmt.label)
        write(r)
        if note:
            ws.write_string(r, 3, note, fmt.wrap)
            if len(note) > 80:
                ws.set_row(r, 15 * (len(note) // 80 + 1))
        r += 1
        return r - 1

    from pathlib import Path as _P
    line("Input file", lambda r: ws.write_string(r, 1, _P(s.input_file).name))
    line("Input SHA-256", lambda r: ws.write_string(r, 1, s.sha256))
    line("Activity sheet", lambda r: ws.write_string(r, 1, s.sheet),
         " ".join(s.notes) or None)
    line("Activities", lambda r: ws.write_formula(
        r, 1, f"=COUNTA({lay.column('id')})", fmt.int, len(a.ids)))
    n_links = a.net.link_count
    line("Links", lambda r: ws.write_formula(
        r, 1, f"=COUNTA({lay.link_column('from')})", fmt.int, n_links) if n_links
        else ws.write_number(r, 1, 0, fmt.int))
    warn_n = len(s.warnings)
    line("Warnings in the input", lambda r: ws.write_number(r, 1, warn_n, fmt.int),
         "See the Warnings sheet." if warn_n else None)
    line("Time unit", lambda r: ws.write_string(r, 1, st.time_unit))
    if cal is not None:
        row = line("Project start", lambda r: ws.write_datetime(
            r, 1, _dt(cal.start), fmt.input_date), "Offset 0 is the start of this day.")
        wb.define_name("ProjectStart", _abs(row))
    r += 1
    ws.write_string(r, 0, "Critical path view (PERT)", fmt.title)
    r += 1
    row = line("Expected finish (longest path on TE)", lambda r: ws.write_formula(
        r, 1, f"=MAX({lay.column('ef')})", fmt.big, a.project_mean),
        "The largest early finish on the Activities sheet.")
    wb.define_name("ProjectFinish", _abs(row))
    wb.define_name("ProjectMean", _abs(row))
    if cal is not None:
        ws.write_formula(row, 2, "=" + cal.finish_date_formula("ProjectMean", "ProjectStart",
                                                              holidays),
                         fmt.big_date, serial(a.finish_date))
    row = line("Variance along the critical path", lambda r: ws.write_formula(
        r, 1, f"={PATHS}!$C${FIRST + 1}", fmt.num4, a.project_variance),
        "Sum of the variances of the activities on path 1 of the Paths sheet.")
    wb.define_name("ProjectVariance", _abs(row))
    row = line("Standard deviation", lambda r: ws.write_formula(
        r, 1, "=SQRT(ProjectVariance)", fmt.big, a.project_sd))
    wb.define_name("ProjectSD", _abs(row))
    row = line("Float tolerance (counts as zero)", lambda r: ws.write_formula(
        r, 1, f.float_tolerance("ProjectFinish"), fmt.sci, a.float_tolerance))
    wb.define_name("FloatTolerance", _abs(row))

    if a.due is not None:
        source = st.source_of("due")
        if a.due_date is not None and not isinstance(st.due, (int, float)):
            drow = line("Due date", lambda r: ws.write_datetime(r, 1, _dt(a.due_date),
                                                              fmt.input_date), f"From {source}.")
            wb.define_name("DueDate", _abs(drow))
            row = line(f"Due (in {st.time_unit} from the start)", lambda r: ws.write_formula(
                r, 1, "=" + cal.offset_of_formula("DueDate", "ProjectStart", holidays), fmt.num,
                a.due), "Working time up to the end of the due date.")
            wb.define_name("DueDuration", _abs(row))
        else:
            row = line(f"Due (in {st.time_unit})", lambda r: ws.write_number(
                r, 1, a.due, fmt.input_num), f"From {source}.")
            wb.define_name("DueDuration", _abs(row))
            if cal is not None:
                ws.write_formula(row, 2, "=" + cal.finish_date_formula(
                    "DueDuration", "ProjectStart", holidays), fmt.date,
                    serial(a.due_date))
        row = line("z = (due - mean) / sd", lambda r: ws.write_formula(
            r, 1, f.z_score("DueDuration", "ProjectMean", "ProjectSD"), fmt.num4,
            a.z if a.z is not None else "n/a"))
        wb.define_name("ZScore", _abs(row))
        row = line("Chance of meeting the due date (critical path)", lambda r: ws.write_formula(
            r, 1, f.p_meet("DueDuration", "ProjectMean", "ProjectSD"), fmt.big_prob,
            a.p_meet_due))
        wb.define_name("PMeetDue", _abs(row))
    else:
        line("Due date", lambda r: ws.write_string(r, 1, "none given"),
             "Give one with --due, or a 'Due date' row on a Settings sheet.")
    for c, value in sorted(a.confidence.items()):
        row = line(f"Duration at {c:.0%} confidence", lambda r, c=c, value=value:
                   ws.write_formula(r, 1, f.duration_at(repr(float(c))), fmt.num, value))
        if cal is not None:
            ws.write_formula(row, 2, "=" + cal.finish_date_formula(
                f.ref(row, 1), "ProjectStart", holidays), fmt.date,
                serial(a.confidence_dates[c]))
    crit = " > ".join(a.critical_ids)
    line("Critical path", lambda r: ws.write_string(r, 1, crit[:32000]),
         None if a.tied_longest <= 1 else
         f"{a.tied_longest} paths tie for the longest; this one has the largest variance "
         "(the cautious choice).")
    riskier = a.riskier_paths
    if riskier:
        numbers = ", ".join(str(k + 1) for k in riskier[:20]) + (" ..." if len(riskier) > 20
                                                                 else "")
        words = "; ".join(_path_words(a, k) for k in riskier[:5])
        if len(riskier) > 5:
            words += f"; and {len(riskier) - 5} more"
        note = (f"{words}. These shorter paths have more spread and a LOWER chance of meeting "
                "the due date than the critical path, so the critical-path figure above "
                "overstates the chance of finishing on time. See the Paths sheet.")
        line("Paths riskier than the critical path (path no.)", lambda r: ws.write_string(
            r, 1, numbers, fmt.flag), note[:32000])
    if a.p_all_paths is not None:
        k = len(a.paths)
        prange = f"{PATHS}!$F${FIRST + 1}:$F${FIRST + k}"
        line(f"Chance all {k} listed paths meet the due date: at least",
             lambda r: ws.write_formula(r, 1, f"=PRODUCT({prange})", fmt.prob, a.p_all_paths[0]),
             "Product of the path chances: a lower bound because paths sharing independent "
             "activities are positively associated (Esary, Proschan & Walkup 1967).")
        line("... and at most", lambda r: ws.write_formula(
            r, 1, f"=MIN({prange})", fmt.prob, a.p_all_paths[1]),
            "The smallest single-path chance.")
    _write_simulated(ws, fmt, a, r + 1)


def _write_simulated(ws, fmt, a, start: int) -> None:
    sim = a.simulation
    r = start
    if sim is not None:
        ws.write_string(r, 0, "Simulated view (Monte Carlo, all paths at once)", fmt.title)
        ws.write_string(r, 3, f"{sim.iterations:,} iterations, seed {sim.seed}, "
                        f"{sim.distribution} durations; values, not formulas (see Simulation).",
                        fmt.subtitle)
    rows = []
    if sim is not None:
        rows.append(("Simulated mean finish", sim.mean, fmt.big))
        rows.append(("Simulated standard deviation", sim.sd, fmt.num))
        if sim.p_meet_due is not None:
            rows.append(("Simulated chance of meeting the due date", sim.p_meet_due,
                         fmt.big_prob))
        for q in (0.8, 0.9):
            rows.append((f"Simulated P{int(q * 100)}", sim.percentile(q), fmt.num))
        rows.append(("Merge bias (simulated mean - PERT mean)", sim.merge_bias, fmt.num))
    else:
        ws.write_string(r, 0, "Simulated view", fmt.label)
        ws.write_string(r, 1, "not run")
        ws.write_string(r, 3, "Converted with --no-simulation: only the single-path view "
                        "above, which understates the finish where parallel paths merge.",
                        fmt.wrap)
    r += 1
    for label, value, style in rows:
        ws.write_string(r, 0, label, style if style is fmt.flag else fmt.label)
        ws.write_number(r, 1, float(value), style)
        r += 1
    if sim is not None:
        ws.write_string(r, 0, "Why the two views differ", fmt.label)
        text = gap_explanation(a)
        ws.write_string(r, 3, text, fmt.wrap)
        ws.set_row(r, 15 * (len(text) // 80 + 1))
        r += 2
    failed = [c for c in a.checks if not c.passed]
    ws.write_string(r, 0, "Schedule health checks failed", fmt.label)
    ws.write_number(r, 1, len(failed), fmt.flag if failed else fmt.good)
    if failed:
        ws.write_string(r, 3, "Failed: " + "; ".join(c.name for c in failed)
                        + ". Logic problems (missing links, leads, long lags) matter most: "
                        "they make the dates and the probabilities unreliable. See Health check.",
                        fmt.wrap)
        ws.set_row(r, 45)
    r += 2
    ws.merge_range(r, 0, r + 3, 3, CAUTION, fmt.caution)


def _path_words(a, k: int) -> str:
    pr = a.paths[k]
    ids = [a.ids[i] for i in pr.path.activities]
    route = " > ".join(ids) if len(ids) <= 6 else " > ".join(ids[:3] + ["..."] + ids[-2:])
    return (f"path {k + 1} ({route}): expected {pr.path.mean:.1f}, sd {pr.path.sd:.1f}, "
            f"chance {pr.p_meet_due:.0%}")


def gap_explanation(a) -> str:
    sim = a.simulation
    parts = []
    if sim.merge_bias > a.float_tolerance:
        parts.append(
            f"The simulated mean is {sim.merge_bias:.2f} later than the PERT mean: where parallel "
            "paths merge, the finish is the LATEST of them, and the expected maximum of several "
            "uncertain paths exceeds the longest expected path (merge bias; MacCrimmon & Ryavec "
            "1964). The single-path PERT figure ignores the other paths.")
    else:
        parts.append("The simulated mean is close to the PERT mean: little merging of "
                     "competing paths.")
    if sim.p_meet_due is not None and a.p_meet_due is not None:
        if sim.p_meet_due < a.p_meet_due:
            parts.append(f"The simulated chance of meeting the due date ({sim.p_meet_due:.1%}) "
                         f"is below the critical-path figure ({a.p_meet_due:.1%}); trust the "
                         "lower one.")
        else:
            parts.append(f"The simulated chance ({sim.p_meet_due:.1%}) is not below the "
                         f"critical-path figure ({a.p_meet_due:.1%}).")
    if sim.correlation > 0 and sim.independent is not None:
        parts.append(f"Correlation {sim.correlation:g} within groups widens the spread: sd "
                     f"{sim.sd:.2f} against {sim.independent.sd:.2f} if independent.")
    if sim.distribution == "pert":
        parts.append("The simulation samples beta-shaped durations whose variance is "
                     "(mu-a)(b-mu)/7, not the rounder ((b-a)/6)^2 of the PERT formula.")
    else:
        parts.append(f"The simulation samples {sim.distribution} durations, whose spread "
                     "differs from the ((b-a)/6)^2 of the PERT formula.")
    return " ".join(parts)


def _dt(d):
    import datetime as dt
    return dt.datetime(d.year, d.month, d.day)

