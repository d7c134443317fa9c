"""The Summary's status block for a project in flight: the status date, the share of the
work done, the counts by state and the forecast finish from the status date."""

from __future__ import annotations

from converter.analyse import pert
from converter.write.workbook import formulas as f
from converter.write.workbook.activities import serial
from converter.write.workbook.layout import Layout
from converter.write.workbook.progress_cols import STATUS

LEVELS = (0.5, 0.8, 0.9)


def write_status(out, lay: Layout, cols: tuple[int, int, int, int]) -> None:
    """The block; ``cols`` are the Summary's (value, date, critical path, its date) columns."""
    a, ws, fmt = out.a, out.ws, out.fmt
    prog = a.remaining_work.progress
    unit = a.schedule.settings.time_unit
    val, val_date, cp, cp_date = cols
    heads = {val: "Simulated" if a.simulation is not None else "", cp: "Critical path"}
    if out.cal is not None:
        heads.update({val_date: "Date", cp_date: "Date"})
    out.section("Where does the project stand?", heads)
    given = a.schedule.settings.status_date
    row = out.line(
        f"Status date (offset in {unit})",
        "Progress is as of the end of this day: finished work is fixed at its actual "
        "dates, the rest runs from here (Method sheet).",
        start=cp,
    )
    if out.cal is not None and hasattr(given, "isoformat"):
        ws.write_number(row, val_date, serial(given), fmt.input_date)
        out.name("StatusDate", row, val_date)
        offset = "=" + out.cal.offset_of_formula("StatusDate", "ProjectStart", out.holidays)
        ws.write_formula(row, val, offset, fmt.num, prog.status_offset)
    else:
        ws.write_number(row, val, prog.status_offset, fmt.input_num)
        out.date(row, val_date, f.ref(row, val), prog.status_date)
    out.name(STATUS, row, val)
    state, te, start = lay.column("state"), lay.column("te"), lay.column("actual_start")
    row = out.line(
        "Share of the work done",
        "By expected duration: finished activities' actual durations and the time worked "
        "on those in progress, over all activities' durations (done + remaining).",
        start=cp,
    )
    # the durations without the named risks' expected delay (the share is of the work:
    # analyse/status.py), so TE less the Risk delay column where there is one
    finished, total = f'SUMIF({state},"finished",{te})', f"SUM({te})"
    if "risk_delay" in lay.cols:
        delay = lay.column("risk_delay")
        finished += f'-SUMIF({state},"finished",{delay})'
        total += f"-SUM({delay})"
    done = (
        f'=({finished}+COUNTIF({state},"in progress")*{STATUS}'
        f'-SUMIF({state},"in progress",{start}))/({total})'
    )
    ws.write_formula(row, val, done, fmt.prob, prog.done_share)
    for words in ("finished", "in progress", "not started"):
        row = out.line(f"Activities {words}")
        count = f'=COUNTIF({state},"{words}")'
        ws.write_formula(row, val, count, fmt.int, prog.counts[words])
    _execution_index(out, state, val, cp)
    _forecast(out, cols)


def _execution_index(out, state: str, val: int, note: int) -> None:
    """With a baseline, its execution index: finished / due by the baseline (the Health
    check's figure, recounted here from the State column)."""
    check = next((c for c in out.a.checks if c.key == "baseline_execution_index"), None)
    if check is None or not check.out_of:
        return
    row = out.line(
        "Baseline execution index",
        f"Activities finished / {check.out_of} due by the status date by the baseline "
        "(Health check); below 0.95 the team is behind the plan it committed to.",
        start=note,
    )
    index = f'=COUNTIF({state},"finished")/{check.out_of}'
    out.ws.write_formula(row, val, index, out.fmt.num, check.percent / 100.0)


def _forecast(out, cols) -> None:
    """P50 / P80 / P90 of the finish of the remaining work, with dates."""
    a, ws, fmt = out.a, out.ws, out.fmt
    val, val_date, cp, cp_date = cols
    sim = a.simulation
    for level in LEVELS:
        row = out.line(f"Forecast finish P{round(level * 100)} (from the start)")  # one line
        if sim is not None:
            value = sim.percentiles.get(level)
            value = sim.percentile(level) if value is None else value
            ws.write_number(row, val, float(value), fmt.num)
            when = out.cal.finish_date(value) if out.cal is not None else None
            out.date(row, val_date, f.ref(row, val), when)
        mean = pert.duration_at(level, a.project_mean, a.project_sd)
        ws.write_formula(row, cp, f.duration_at(repr(level)), fmt.num, mean)
        when = out.cal.finish_date(mean) if out.cal is not None else None
        out.date(row, cp_date, f.ref(row, cp), when)
    last = out.r - 1
    row = out.line(
        "P90 forecast: time left after the status date",
        "The forecast finish less the status date, in the schedule's time unit.",
        start=cp_date if out.cal is not None else cp,
    )
    source = f.ref(last, val if sim is not None else cp)
    if sim is not None:
        p90 = sim.percentiles.get(0.9)
        p90 = sim.percentile(0.9) if p90 is None else p90
    else:
        p90 = pert.duration_at(0.9, a.project_mean, a.project_sd)
    left = p90 - a.remaining_work.progress.status_offset
    ws.write_formula(row, val, f"={source}-{STATUS}", fmt.num, float(left))
