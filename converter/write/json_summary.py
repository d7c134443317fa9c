"""The JSON summary for scripts (keys documented in the README)."""

from __future__ import annotations

import math
from dataclasses import fields
from pathlib import Path

from converter.model import ERROR, LINK_TYPES

#: The version of the analysis JSON's (and workbook's) layout that ``pertbook compare``
#: reads back; raised when a key it reads changes meaning.
FORMAT_VERSION = 1


def _num(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _iso(d) -> str | None:
    return d.isoformat() if d is not None else None


def build_json(path: Path, problems, analysis, sha256: str | None) -> dict:
    """The JSON document for one input; ``analysis`` is None for invalid input.

    ``sha256`` is the input's hash as the reader computed it (None when the file could not
    be opened): nothing here reads the input again.
    """
    ok = analysis is not None and not any(p.severity == ERROR for p in problems)
    data: dict = {
        "pertbook_format": FORMAT_VERSION,
        "ok": ok,
        "input": {"file": str(path), "sha256": sha256},
        "problems": [p.as_dict() for p in problems],
    }
    if analysis is None:
        data.update(
            {
                "time_unit": None,
                "activity_count": 0,
                "project": None,
                "activities": [],
                "summaries": [],
            }
        )
        return data
    a = analysis
    data["input"]["sheet"] = a.schedule.sheet
    data["notes"] = list(a.schedule.notes)
    data["time_unit"] = a.schedule.settings.time_unit
    data["activity_count"] = len(a.ids)
    data["start_date"] = _iso(a.schedule.settings.start_date)
    data["calendar"] = _calendar(a.calendar)
    data["project"] = _project(a)
    data["activities"] = _activities(a)
    data["summaries"] = _summaries(a)
    data["status"] = _status(a)  # null without a status date
    _add_progress(a, data["activities"])
    data["links"] = [
        {"from": a.ids[int(p)], "to": a.ids[int(q)], "type": LINK_TYPES[int(k)], "lag": float(g)}
        for p, q, k, g in zip(a.net.pred, a.net.succ, a.net.kind, a.net.lag)
    ]
    data["paths"] = [
        {
            "activities": [a.ids[i] for i in pr.path.activities],
            "mean": _num(pr.path.mean),
            "variance": _num(pr.path.variance),
            "sd": _num(pr.path.sd),
            "z": _num(pr.z),
            "p_meet_due": _num(pr.p_meet_due),
            "links": [int(k) for k in pr.path.links],
        }
        for pr in a.paths
    ]
    data["simulation"] = _simulation(a.simulation)
    data["risks"] = [] if a.risk_view is None else _risks(a.risk_view, a.simulation)
    if data["simulation"] is not None:  # null without a register or mitigated values
        mitigated = None if a.risk_view is None else a.risk_view.mitigated
        data["simulation"]["mitigated"] = _mitigated(mitigated)
    data["targets"] = [
        {
            "activity": a.ids[t.activity],
            "target": _num(t.target),
            "target_date": _iso(t.target_date),
            "p_analytic": _num(t.p_analytic),
            "p_simulated": _num(t.p_simulated),
        }
        for t in a.targets
    ]
    data["checks"] = [
        {
            "name": c.name,
            "group": c.group,
            "threshold": c.threshold,
            "count": c.count,
            "percent": _num(c.percent),
            "passed": c.passed,
            "activities": c.activities,
        }
        for c in a.checks
    ]
    data["settings"] = _settings(a.schedule.settings)
    return data


def _settings(st) -> dict:
    """Every setting the run used (the Settings fields but their origins), JSON-ready."""
    out = {}
    for f in fields(st):
        if f.name == "sources":
            continue
        value = getattr(st, f.name)
        if isinstance(value, tuple):
            value = [v.isoformat() if hasattr(v, "isoformat") else v for v in value]
        elif hasattr(value, "isoformat"):
            value = value.isoformat()
        out[f.name] = value
    return out


def _calendar(cal) -> dict | None:
    if cal is None:
        return None
    return {
        "start": cal.start.isoformat(),
        "unit": cal.unit,
        "working_days": list(cal.working_days),
        "weekend_code": cal.weekend_code,
        "holidays": [h.isoformat() for h in cal.holidays],
    }


def _project(a) -> dict:
    return {
        "expected_duration": _num(a.project_mean),
        "variance": _num(a.project_variance),
        "sd": _num(a.project_sd),
        "critical_path": a.critical_ids,
        "due": _num(a.due),
        "due_date": _iso(a.due_date),
        "z": _num(a.z),
        "p_meet_due": _num(a.p_meet_due),
        "duration_at_confidence": {repr(float(c)): _num(v) for c, v in a.confidence.items()},
        "p_meet_due_all_paths": None
        if a.p_all_paths is None
        else {"lower": _num(a.p_all_paths[0]), "upper": _num(a.p_all_paths[1])},
        "finish_date": _iso(a.finish_date),
        "path_count": str(a.path_count) if a.path_count > 2**53 else a.path_count,
        "tied_longest_paths": a.tied_longest,
    }


def _activities(a) -> list[dict]:
    sim, cpm, dates = a.simulation, a.cpm, a.activity_dates
    rows = []
    for i, ident in enumerate(a.ids):
        rows.append(
            {
                "id": ident,
                "name": a.schedule.activities[i].name,
                "te": _num(a.te[i]),
                "variance": _num(a.var[i]),
                "es": _num(cpm.es[i]),
                "ef": _num(cpm.ef[i]),
                "ls": _num(cpm.ls[i]),
                "lf": _num(cpm.lf[i]),
                "total_float": _num(cpm.total_float[i]),
                "free_float": _num(cpm.free_float[i]),
                "critical": bool(cpm.critical[i]),
                "criticality": _num(sim.criticality[i]) if sim is not None else None,
                "sensitivity": _num(sim.sensitivity[i]) if sim is not None else None,
                "early_start_date": _iso(dates.early_start[i]) if dates else None,
                "early_finish_date": _iso(dates.early_finish[i]) if dates else None,
                "late_start_date": _iso(dates.late_start[i]) if dates else None,
                "late_finish_date": _iso(dates.late_finish[i]) if dates else None,
                "summary": a.schedule.activities[i].summary,
                "range": a.schedule.activities[i].range,
                # the estimates as given (a.o/m/p hold the remaining work of a run in flight)
                "optimistic": _num(a.schedule.activities[i].optimistic),
                "most_likely": _num(a.schedule.activities[i].most_likely),
                "pessimistic": _num(a.schedule.activities[i].pessimistic),
            }
        )
    return rows


def _summaries(a) -> list[dict]:
    """The WBS summary rows, in the Activities sheet's order (WBS order)."""
    figures = a.summaries
    if figures is None:
        return []
    rows = []
    for kind, j in figures.order:
        if kind != "summary":
            continue
        s = a.schedule.summaries[j]
        dates = figures.start_dates is not None
        rows.append(
            {
                "wbs": s.wbs,
                "id": s.id,
                "name": s.name,
                "summary": s.parent,
                "start": _num(figures.start[j]),
                "finish": _num(figures.finish[j]),
                "span": _num(figures.span[j]),
                "start_date": _iso(figures.start_dates[j]) if dates else None,
                "finish_date": _iso(figures.finish_dates[j]) if dates else None,
            }
        )
    return rows


def _given(value) -> float | str | None:
    """A moment as given: an ISO date, or an offset in time units."""
    return value.isoformat() if hasattr(value, "isoformat") else _num(value)


def _status(a) -> dict | None:
    prog = None if a.remaining_work is None else a.remaining_work.progress
    if prog is None:
        return None
    return {
        "status_date": _iso(prog.status_date),
        "status_offset": _num(prog.status_offset),
        "done_share": _num(prog.done_share),
        "finished": prog.counts["finished"],
        "in_progress": prog.counts["in progress"],
        "not_started": prog.counts["not started"],
    }


def _add_progress(a, rows: list[dict]) -> None:
    """Each activity's Not before, actual dates, remaining expected duration and state
    (null where not given; remaining and state are null without a status date)."""
    prog = None if a.remaining_work is None else a.remaining_work.progress
    for i, row in enumerate(rows):
        act = a.schedule.activities[i]
        row["not_before"] = _given(act.not_before)
        row["actual_start"] = _given(act.actual_start)
        row["actual_finish"] = _given(act.actual_finish)
        if prog is None:
            row["remaining"], row["state"] = None, None
            continue
        state = prog.state[i]
        rem = prog.remaining[i]
        left = (rem[0] + 4 * rem[1] + rem[2]) / 6 if state == "in progress" else 0.0
        row["remaining"] = _num(a.te[i] if state == "not started" else left)
        row["state"] = state


def _simulation(sim) -> dict | None:
    if sim is None:
        return None
    data = {
        "iterations": sim.iterations,
        "seed": sim.seed,
        "distribution": sim.distribution,
        "correlation": sim.correlation,
        "mean": _num(sim.mean),
        "sd": _num(sim.sd),
        "std_error_mean": _num(sim.std_error_mean),
        "p_meet_due": _num(sim.p_meet_due),
        "p_meet_due_std_error": _num(sim.p_meet_due_std_error),
        "percentiles": {repr(float(q)): _num(v) for q, v in sorted(sim.percentiles.items())},
        "merge_bias": _num(sim.merge_bias),
        "independent": None
        if sim.independent is None
        else {
            "mean": _num(sim.independent.mean),
            "sd": _num(sim.independent.sd),
            "p_meet_due": _num(sim.independent.p_meet_due),
        },
    }
    if sim.sensitivity_iterations < sim.iterations:  # only where the memory budget cut
        data["sensitivity_iterations"] = sim.sensitivity_iterations
        data["sensitivity_std_error"] = _num(sim.sensitivity_std_error)
    return data


def _risks(view, sim) -> list[dict]:
    """One entry per risk of the register; deltas null outside the top by sensitivity."""
    rank = sim.risks if sim is not None else None
    out = []
    for k, r in enumerate(view.risks):
        out.append(
            {
                "id": r.id,
                "description": r.description,
                "probability": _num(r.probability),
                "activities": list(r.activities),
                "occurred": _num(rank.occurred[k]) if rank else None,
                "mean_delay_when_occurred": _num(rank.mean_delay[k]) if rank else None,
                "sensitivity": _num(rank.sensitivity[k]) if rank else None,
                "delta_mean": _num(rank.delta_mean[k]) if rank else None,
                "delta_p50": _num(rank.delta_p50[k]) if rank else None,
                "delta_p80": _num(rank.delta_p80[k]) if rank else None,
            }
        )
    return out


def _mitigated(sim) -> dict | None:
    """The mitigated run's headline (None: the register gives no responses)."""
    if sim is None:
        return None
    return {
        "mean": _num(sim.mean),
        "sd": _num(sim.sd),
        "p_meet_due": _num(sim.p_meet_due),
        "percentiles": {repr(float(q)): _num(v) for q, v in sorted(sim.percentiles.items())},
    }
