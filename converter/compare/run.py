"""One run's figures, as the comparison reads them: from the analysis JSON's keys.

Both kinds of file a run leaves behind come here through the JSON's shape: an
``.analysis.json`` as it is, an ``.analysis.xlsx`` after :mod:`converter.compare.readback`
has read its cells back into the same keys, and the run in hand (``convert --baseline``)
through :func:`converter.write.json_summary.build_json`. So one reading serves all three.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

from converter.analyse.calendar import Calendar
from converter.analyse.pert import duration_at
from converter.write.json_summary import FORMAT_VERSION

WEEKDAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")

#: The finish figures compared, in the order shown: key, label, kind. A "duration" has a
#: date when the run has a start date; a "chance" is a share.
FIGURES: tuple[tuple[str, str, str], ...] = (
    ("sim_p50", "P50 finish (simulated)", "duration"),
    ("sim_p80", "P80 finish (simulated)", "duration"),
    ("sim_p90", "P90 finish (simulated)", "duration"),
    ("sim_mean", "Mean finish (simulated)", "duration"),
    ("sim_sd", "Standard deviation (simulated)", "spread"),
    ("sim_chance", "Chance of meeting the due date (simulated)", "chance"),
    ("cpm_finish", "Expected finish (critical path: CPM on TE, the PERT mean)", "duration"),
    ("pert_p80", "P80 finish (critical path: mean + 0.84 sd)", "duration"),
    ("pert_p90", "P90 finish (critical path: mean + 1.28 sd)", "duration"),
    ("pert_sd", "Standard deviation (critical path)", "spread"),
    ("pert_chance", "Chance of meeting the due date (critical path)", "chance"),
)


#: The order settings are listed in (others follow by name), the same from either file.
SETTING_ORDER = (
    "start_date",
    "time_unit",
    "working_days",
    "holidays",
    "due",
    "iterations",
    "seed",
    "distribution",
    "correlation",
    "confidence_levels",
    "paths",
)


class RunError(ValueError):
    """A file that is not a pertbook analysis this version can read (exit code 2)."""


@dataclass
class ActivityFigures:
    """What the comparison uses of one activity."""

    id: str
    name: str
    o: float | None
    m: float | None
    p: float | None
    te: float | None
    total_float: float | None
    critical: bool
    criticality: float | None = None
    sensitivity: float | None = None
    state: str | None = None
    ef: float | None = None  # early finish (offset), the baseline finish of the progress checks
    early_finish: dt.date | None = None  # its date (None without a start date)


@dataclass
class Run:
    """The figures of one run of pertbook.

    ``settings`` maps a setting's label to its value in words; ``figures`` a key of
    :data:`FIGURES` to its value (None where the run has none, e.g. no simulation).
    """

    file: str
    input_file: str | None
    sha256: str | None
    time_unit: str
    calendar: Calendar | None
    settings: dict[str, str]
    figures: dict[str, float | None]
    activities: dict[str, ActivityFigures]
    risks: list[dict] | None = None
    status: dict | None = None
    simulated: bool = False
    dates: dict[str, dt.date | None] = field(default_factory=dict)


def _num(value) -> float | None:
    if value is None or isinstance(value, bool):
        return None
    return float(value)


def _day(value) -> dt.date | None:
    """A date from the JSON's ISO text (or a workbook cell's date), else None."""
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    return dt.date.fromisoformat(value[:10]) if isinstance(value, str) and value else None


def _checked(data: object, file: str) -> dict:
    """The JSON document if it is a pertbook analysis of this format, else RunError."""
    if not isinstance(data, dict):
        raise RunError(f"{file} is not a pertbook analysis: the JSON is not an object of keys")
    version = data.get("pertbook_format")
    if version is None and {"account", "finish", "estimates_changed"} <= set(data):
        raise RunError(
            f"{file} is a comparison (.changes.json), not a run: give the .analysis.json "
            "files it compared"
        )
    if version is None:
        if {"ok", "project", "activities"} <= set(data):
            raise RunError(
                f"{file} was written by an earlier pertbook (no pertbook_format key): "
                f"convert its schedule again with this version (format {FORMAT_VERSION})"
            )
        raise RunError(
            f"{file} is not a pertbook analysis: its JSON lacks the pertbook_format key "
            "(written by another program?)"
        )
    if version != FORMAT_VERSION:
        raise RunError(
            f"{file} is a pertbook analysis of format {version!r}, but this pertbook reads "
            f"format {FORMAT_VERSION}: convert its schedule again with this version"
        )
    if not data.get("ok") or not data.get("project"):
        raise RunError(
            f"{file} records an invalid input (ok: false): it has no figures to compare; "
            "fix the schedule and convert it again"
        )
    return data


def run_from_json(data: object, file: str) -> Run:
    """A :class:`Run` from an analysis JSON document (already parsed).

    Raises
    ------
    RunError
        Not a pertbook analysis, another format version, an invalid input's record, or
        a document with keys missing; the message names ``file``.

    Examples
    --------
    >>> run_from_json({"tool": "other"}, "x.json")
    Traceback (most recent call last):
    ...
    converter.compare.run.RunError: x.json is not a pertbook analysis: its JSON lacks \
the pertbook_format key (written by another program?)
    """
    data = _checked(data, file)
    try:
        return _run(data, file)
    except (KeyError, TypeError, ValueError, AttributeError, IndexError) as exc:
        raise RunError(
            f"{file} is not a complete pertbook analysis: {type(exc).__name__} {exc}"
        ) from None


def _run(data: dict, file: str) -> Run:
    project, sim = data["project"], data.get("simulation")
    acts = {}
    for row in data["activities"]:
        ident = str(row["id"])
        acts[ident] = ActivityFigures(
            id=ident,
            name=str(row.get("name") or ""),
            o=_num(row.get("optimistic")),
            m=_num(row.get("most_likely")),
            p=_num(row.get("pessimistic")),
            te=_num(row.get("te")),
            total_float=_num(row.get("total_float")),
            critical=bool(row.get("critical")),
            criticality=_num(row.get("criticality")),
            sensitivity=_num(row.get("sensitivity")),
            state=row.get("state"),
            ef=_num(row.get("ef")),
            early_finish=_day(row.get("early_finish_date")),
        )
    run = Run(
        file=file,
        input_file=(data.get("input") or {}).get("file"),
        sha256=(data.get("input") or {}).get("sha256"),
        time_unit=str(data.get("time_unit") or "working days"),
        calendar=_calendar(data.get("calendar")),
        settings=_settings(data),
        figures=_figures(project, sim),
        activities=acts,
        risks=data.get("risks") or None,  # [] = no register
        status=data.get("status"),
        simulated=sim is not None,
    )
    if run.calendar is not None:
        for key, _, kind in FIGURES:
            value = run.figures.get(key)
            if kind == "duration" and value is not None:
                run.dates[key] = run.calendar.finish_date(value)
    return run


def _figures(project: dict, sim: dict | None) -> dict[str, float | None]:
    mean, sd = _num(project["expected_duration"]), _num(project["sd"])
    out: dict[str, float | None] = {
        "cpm_finish": mean,
        "pert_sd": sd,
        "pert_chance": _num(project.get("p_meet_due")),
        "pert_p80": duration_at(0.8, mean, sd),
        "pert_p90": duration_at(0.9, mean, sd),
    }
    sim = sim or {}
    percentiles = sim.get("percentiles") or {}
    out.update(
        sim_mean=_num(sim.get("mean")),
        sim_sd=_num(sim.get("sd")),
        sim_chance=_num(sim.get("p_meet_due")),
        sim_p50=_num(percentiles.get("0.5")),
        sim_p80=_num(percentiles.get("0.8")),
        sim_p90=_num(percentiles.get("0.9")),
    )
    return out


def _calendar(cal: dict | None) -> Calendar | None:
    if not cal:
        return None
    try:
        return Calendar(
            start=dt.date.fromisoformat(cal["start"]),
            unit=cal["unit"],
            working_days=tuple(cal["working_days"]),
            holidays=tuple(dt.date.fromisoformat(h) for h in cal.get("holidays", ())),
        )
    except ValueError:  # a unit this version does not date: compare without dates
        return None


def shown(value: object) -> str:
    """A setting's value in words, the same for both runs.

    Examples
    --------
    >>> shown(None), shown(0.5), shown(10000), shown([0.5, 0.8]), shown("pert")
    ('(none)', '0.5', '10000', '0.5, 0.8', 'pert')
    """
    if value is None:
        return "(none)"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(shown(v) for v in value) if value else "(none)"
    return str(value)


def _settings(data: dict) -> dict[str, str]:
    """Each setting's label -> its value in words; from the ``settings`` key, else from the
    keys that carry them (start date, time unit, due, the simulation's run)."""
    given = dict(data.get("settings") or {})
    project, sim = data["project"], data.get("simulation") or {}
    given.setdefault("start_date", data.get("start_date"))
    given.setdefault("time_unit", data.get("time_unit"))
    given.setdefault("due", project.get("due_date") or project.get("due"))
    for key in ("iterations", "seed", "distribution", "correlation"):
        if key in sim:
            given.setdefault(key, sim[key])
    if isinstance(given.get("working_days"), list):
        given["working_days"] = [WEEKDAYS[int(d)] for d in given["working_days"]]
    if isinstance(given.get("confidence_levels"), list):
        given["confidence_levels"] = [f"{float(c):.0%}" for c in given["confidence_levels"]]
    keys = [k for k in SETTING_ORDER if k in given] + sorted(set(given) - set(SETTING_ORDER))
    out = {key.replace("_", " ").capitalize(): shown(given[key]) for key in keys}
    out["Simulation"] = "run" if data.get("simulation") is not None else "not run"
    return out
