"""Raw sheets -> a validated Schedule, or every problem at once, each with its cell.

Nothing here stops at the first problem: the whole input is checked and all
problems are returned together, errors (which block the analysis) and warnings
(which go into the output).
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Iterable

import networkx as nx

from converter.model import (
    DISTRIBUTIONS,
    ERROR,
    LINK_TYPES,
    WARNING,
    Activity,
    Link,
    Problem,
    RawTable,
    Schedule,
    Settings,
)
from converter.read.sheets import (
    ACTIVITY_COLUMNS,
    REQUIRED_ACTIVITY,
    RawInput,
    SheetData,
    cell_name,
    is_blank,
    normalise,
)

FIELD_TITLES = {
    "id": "ID",
    "name": "Description",
    "predecessors": "Predecessors",
    "optimistic": "Optimistic",
    "most_likely": "Most likely",
    "pessimistic": "Pessimistic",
}

DISTRIBUTION_ALIASES = {
    "pert": "pert", "beta": "pert", "pertbeta": "pert", "betapert": "pert",
    "triangular": "triangular", "triangle": "triangular", "tri": "triangular",
    "uniform": "uniform", "flat": "uniform", "rectangular": "uniform",
}

LINK_TYPE_WORDS = {
    "fs": "FS", "finishtostart": "FS", "finishstart": "FS",
    "ss": "SS", "starttostart": "SS", "startstart": "SS",
    "ff": "FF", "finishtofinish": "FF", "finishfinish": "FF",
    "sf": "SF", "starttofinish": "SF", "startfinish": "SF",
}

SETTING_LABELS: dict[str, tuple[str, ...]] = {
    "start_date": ("start date", "project start", "project start date", "start"),
    "time_unit": ("time unit", "unit", "units", "duration unit", "time units"),
    "working_days": ("working days", "workdays", "work days", "working week", "work week"),
    "holidays": ("holidays", "holiday", "non working days", "public holidays", "closures"),
    "due": ("due", "due date", "deadline", "project due", "due duration"),
    "iterations": ("iterations", "simulation iterations", "runs", "trials"),
    "seed": ("seed", "random seed"),
    "distribution": ("distribution", "default distribution"),
    "correlation": ("correlation", "rank correlation", "group correlation"),
    "confidence_levels": ("confidence levels", "confidence level", "confidence"),
    "paths": ("paths", "near critical paths", "paths to list", "path count"),
}
_SETTING_ALIASES = {normalise(a): k for k, v in SETTING_LABELS.items() for a in v}
_SETTING_HEADERS = {"setting", "settings", "option", "parameter", "name", "key", "label"}

TIME_UNITS = {
    "workingdays": "working days", "workdays": "working days", "days": "working days",
    "day": "working days", "workingday": "working days", "businessdays": "working days",
    "weeks": "weeks", "week": "weeks", "workingweeks": "weeks",
    "calendardays": "calendar days", "calendarday": "calendar days",
    "elapseddays": "calendar days",
}

WEEKDAYS = {
    "mon": 0, "monday": 0, "tue": 1, "tues": 1, "tuesday": 1, "wed": 2, "wednesday": 2,
    "thu": 3, "thur": 3, "thurs": 3, "thursday": 3, "fri": 4, "friday": 4,
    "sat": 5, "saturday": 5, "sun": 6, "sunday": 6,
}

_INTEGRAL_TEXT = re.compile(r"^[1-9]\d*\.0+$|^0\.0+$")
_BRACKET = re.compile(r"^(?P<id>.*?)\s*\[(?P<spec>[^\[\]]*)\]$")
_SPEC = re.compile(r"^(?P<type>FS|SS|FF|SF)?\s*(?P<lag>[+-]\s*\d+(?:\.\d+)?)?$", re.IGNORECASE)


# --------------------------------------------------------------------------- values
def id_text(value: object) -> str:
    """IDs are text; a numeric cell 3 or 3.0 is ID "3"."""
    if isinstance(value, bool):
        return str(value).upper()
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, (dt.datetime, dt.date)):
        return value.isoformat()
    text = str(value).strip()
    if _INTEGRAL_TEXT.match(text):  # "3.0" from a CSV export is ID "3", as a numeric cell
        return text.split(".")[0]
    return text


def as_number(value: object) -> float | None:
    """A finite number from a numeric cell or numeric text; None when it is not one."""
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        x = float(value)
        return x if math.isfinite(x) else None
    if isinstance(value, str):
        try:
            x = float(value.strip().replace("\u2212", "-"))
        except ValueError:
            return None
        return x if math.isfinite(x) else None
    return None


def as_date(value: object) -> dt.date | None:
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip()[:10])
        except ValueError:
            return None
    return None


def parse_due(value: object) -> float | dt.date | None:
    """A due value: a date (cell or YYYY-MM-DD text) or a non-negative duration."""
    if is_blank(value):
        return None
    d = as_date(value)
    if d is not None:
        return d
    x = as_number(value)
    if x is not None and x >= 0:
        return x
    raise ValueError(f"{value!r} is neither a date (YYYY-MM-DD) nor a duration")


def parse_link_token(token: str) -> tuple[str, str, float] | str:
    """``ID``, ``ID[+2]``, ``ID[SS]``, ``ID[SS+3]``, ``ID[FF-1]`` -> (id, type, lag).

    Returns an error message (str) when the bracket part cannot be read. Type and
    lag sit only inside the brackets, so IDs may contain ``+`` and ``-``.
    """
    m = _BRACKET.match(token)
    if not m:
        return token, "FS", 0.0
    ident, spec = m.group("id").strip(), m.group("spec").strip()
    if not ident:
        return f'"{token}" has a bracket part but no activity ID before it'
    s = _SPEC.match(spec.replace(" ", ""))
    if not s or (s.group("type") is None and s.group("lag") is None and spec):
        return (f'"{token}": cannot read [{spec}]; write the link type FS, SS, FF or SF '
                "and/or a lag such as +2 or -1, e.g. A3[SS+2]")
    kind = (s.group("type") or "FS").upper()
    lag = float(s.group("lag").replace(" ", "")) if s.group("lag") else 0.0
    return ident, kind, lag


def split_predecessors(value: object) -> list[str]:
    if is_blank(value):
        return []
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return [id_text(value)]
    return [t.strip() for t in re.split(r"[,;\n]", str(value)) if t.strip()]


# --------------------------------------------------------------------------- settings
class _SettingsReader:
    """Label/value rows of the settings sheet -> values with their cells."""

    def __init__(self, sheet: SheetData | None):
        self.values: dict[str, tuple[object, str]] = {}
        self.holidays: list[tuple[object, str]] = []
        self.problems: list[Problem] = []
        if sheet is None:
            return
        self.sheet = sheet.name
        current = None
        for r, row in enumerate(sheet.rows):
            label = row[0] if row else None
            value = row[1] if len(row) > 1 else None
            if is_blank(label):
                if current == "holidays" and not is_blank(value):
                    self.holidays.append((value, cell_name(r, 1)))
                continue
            key = _SETTING_ALIASES.get(normalise(label))
            current = key
            if key is None:
                if normalise(label) not in _SETTING_HEADERS and not is_blank(value):
                    self.problems.append(Problem(
                        WARNING, "unknown-setting",
                        f'setting "{label}" is not one pertbook knows; it was ignored',
                        sheet.name, cell_name(r, 0),
                        fix="See the README for the setting labels."))
                continue
            if key == "holidays":
                if not is_blank(value):
                    self.holidays.append((value, cell_name(r, 1)))
                continue
            if not is_blank(value):
                self.values[key] = (value, cell_name(r, 1))


def _weekdays(text: object) -> tuple[int, ...]:
    s = str(text).strip().lower().replace("\u2013", "-")
    days: set[int] = set()
    for part in re.split(r"[,;/ ]+", s):
        if not part:
            continue
        if "-" in part:
            a, b = part.split("-", 1)
            if a not in WEEKDAYS or b not in WEEKDAYS:
                raise ValueError(part)
            i, j = WEEKDAYS[a], WEEKDAYS[b]
            k = i
            while True:
                days.add(k)
                if k == j:
                    break
                k = (k + 1) % 7
        elif part in WEEKDAYS:
            days.add(WEEKDAYS[part])
        else:
            raise ValueError(part)
    if not days:
        raise ValueError(s)
    return tuple(sorted(days))


def _confidences(value: object) -> tuple[float, ...]:
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        parts = [float(value)]
    else:
        parts = []
        for p in re.split(r"[,;\s]+", str(value).strip()):
            if not p:
                continue
            if p.endswith("%"):
                parts.append(float(p[:-1]) / 100.0)
            else:
                parts.append(float(p))
    for c in parts:
        if not 0.0 < c < 1.0:
            raise ValueError(f"{c:g} is outside (0, 1)")
    if not parts:
        raise ValueError("no levels")
    return tuple(sorted(set(parts)))


def _integer(value: object, low: int, high: int) -> int:
    x = as_number(value)
    if x is None or not x.is_integer() or not low <= x <= high:
        raise ValueError(f"{value!r} is not a whole number from {low} to {high}")
    return int(x)


def _correlation(value: object) -> float:
    x = as_number(value)
    if x is None and isinstance(value, str) and value.strip().endswith("%"):
        x = as_number(value.strip()[:-1])
        x = None if x is None else x / 100
    if x is None or not 0.0 <= x < 1.0:
        raise ValueError(f"{value!r} is not a correlation from 0 up to (not including) 1")
    return x


def _distribution(value: object) -> str:
    d = DISTRIBUTION_ALIASES.get(normalise(value))
    if d is None:
        raise ValueError(f"{value!r} is not one of {', '.join(DISTRIBUTIONS)}")
    return d


def _time_unit(value: object) -> str:
    u = TIME_UNITS.get(normalise(value))
    if u is None:
        raise ValueError(f"{value!r} is not working days, weeks or calendar days")
    return u


def _start(value: object) -> dt.date:
    d = as_date(value)
    if d is None:
        raise ValueError(f"{value!r} is not a date (use a date cell or YYYY-MM-DD)")
    return d


_PARSERS = {
    "start_date": _start,
    "time_unit": _time_unit,
    "working_days": _weekdays,
    "due": parse_due,
    "iterations": lambda v: _integer(v, 1, 10_000_000),
    "seed": lambda v: _integer(v, 0, 2**63 - 1),
    "distribution": _distribution,
    "correlation": _correlation,
    "confidence_levels": _confidences,
    "paths": lambda v: _integer(v, 1, 1000),
}

#: ConvertOptions attribute for each setting that the command line can override.
_OPTION_OF = {
    "due": "due", "iterations": "iterations", "seed": "seed", "distribution": "distribution",
    "correlation": "correlation", "paths": "paths", "confidence_levels": "confidence",
    "start_date": "start_date",
}


def resolve_settings(sheet: SheetData | None, options) -> tuple[Settings, list[Problem]]:
    """Defaults, overridden by the settings sheet, overridden by the command line."""
    reader = _SettingsReader(sheet)
    problems = list(reader.problems)
    settings = Settings()
    for key, (value, cell) in reader.values.items():
        try:
            setattr(settings, key, _PARSERS[key](value))
            settings.sources[key] = f"settings sheet ({reader.sheet}!{cell})"
        except (ValueError, TypeError) as exc:
            problems.append(Problem(ERROR, "bad-setting",
                                    f"setting {key.replace('_', ' ')}: {exc}",
                                    reader.sheet, cell))
    holidays = []
    for value, cell in reader.holidays:
        d = as_date(value)
        if d is None:
            problems.append(Problem(ERROR, "bad-setting",
                                    f"holiday {value!r} is not a date (use a date cell or "
                                    "YYYY-MM-DD)", reader.sheet, cell))
        else:
            holidays.append(d)
    if holidays:
        settings.holidays = tuple(sorted(set(holidays)))
        settings.sources["holidays"] = f"settings sheet ({reader.sheet})"
    if options is not None:
        for key, attr in _OPTION_OF.items():
            given = getattr(options, attr, None)
            if given is None:
                continue
            try:
                value = _PARSERS[key](given) if key not in ("confidence_levels",) else given
                if key == "confidence_levels":
                    value = _confidences(",".join(str(c) for c in given))
            except (ValueError, TypeError) as exc:
                problems.append(Problem(ERROR, "bad-option",
                                        f"command line --{attr.replace('_', '-')}: {exc}"))
                continue
            setattr(settings, key, value)
            settings.sources[key] = "command line"
    if settings.start_date is None and isinstance(settings.due, dt.date):
        from_sheet = settings.source_of("due").startswith("settings sheet")
        problems.append(Problem(
            ERROR, "due-date-without-start",
            f"the due date {settings.due.isoformat()} is a calendar date but there is no "
            "start date to count from" + ("" if from_sheet else " (--due on the command line)"),
            reader.sheet if from_sheet else None,
            reader.values.get("due", (None, None))[1] if from_sheet else None,
            fix="Add a 'Start date' row to the settings sheet (or --start-date), or give "
                "the due date as a number of time units."))
    return settings, problems


# --------------------------------------------------------------------------- activities
class _Collector:
    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def error(self, code, message, sheet=None, cell=None, activity=None, fix=None):
        self.problems.append(Problem(ERROR, code, message, sheet, cell, activity, fix))

    def warn(self, code, message, sheet=None, cell=None, activity=None, fix=None):
        self.problems.append(Problem(WARNING, code, message, sheet, cell, activity, fix))


def _read_estimates(row, cols, r, sheet, ident, out: _Collector):
    """O, M, P of one row, or None with problems recorded."""
    values: dict[str, float | None] = {}
    bad = False
    for key in ("optimistic", "most_likely", "pessimistic"):
        c = cols.get(key)
        raw = row[c] if c is not None and c < len(row) else None
        if is_blank(raw):
            values[key] = None
            continue
        x = as_number(raw)
        where = cell_name(r, c)
        if x is None:
            out.error("not-a-number",
                      f"{FIELD_TITLES[key]} estimate {raw!r} is not a number", sheet, where,
                      ident, fix="Type a plain number of time units (no text or units).")
            bad = True
        elif x < 0:
            out.error("negative-estimate",
                      f"{FIELD_TITLES[key]} estimate {x:g} is negative", sheet, where, ident,
                      fix="Durations cannot be negative.")
            bad = True
        else:
            values[key] = x
    if bad:
        return None
    o, m, p = values["optimistic"], values["most_likely"], values["pessimistic"]
    m_cell = cell_name(r, cols["most_likely"])
    if o is None and m is None and p is None:
        out.error("no-estimates", "the activity has no duration estimates", sheet, m_cell, ident,
                  fix="Fill in Optimistic, Most likely and Pessimistic (or Most likely alone "
                      "for a fixed duration).")
        return None
    if m is None:
        out.error("missing-most-likely", "the most likely estimate is blank", sheet, m_cell,
                  ident, fix="Fill in the Most likely estimate.")
        return None
    if o is None and p is None:
        if m == 0 or "optimistic" not in cols:  # a milestone / a sheet of fixed durations
            return m, m, m, True
        out.warn("deterministic", f"only a most likely value ({m:g}) is given: treated as a "
                 "fixed duration (O = M = P)", sheet, m_cell, ident)
        return m, m, m, True
    if o is None or p is None:
        key = "optimistic" if o is None else "pessimistic"
        out.error("missing-estimate", f"the {FIELD_TITLES[key].lower()} estimate is blank",
                  sheet, cell_name(r, cols[key]), ident,
                  fix="Give all three estimates, or only Most likely for a fixed duration.")
        return None
    ok = True
    if m < o:
        out.error("order", f"most likely {m:g} is less than optimistic {o:g} "
                  "(need O <= M <= P)", sheet, m_cell, ident,
                  fix="Check the order of the three estimates.")
        ok = False
    if p < m:
        out.error("order", f"pessimistic {p:g} is less than most likely {m:g} "
                  "(need O <= M <= P)", sheet, cell_name(r, cols["pessimistic"]), ident,
                  fix="Check the order of the three estimates.")
        ok = False
    if p < o and ok:
        out.error("order", f"pessimistic {p:g} is less than optimistic {o:g}", sheet,
                  cell_name(r, cols["pessimistic"]), ident)
        ok = False
    if not ok:
        return None
    if o == m == p and m > 0:
        out.warn("deterministic", f"O = M = P = {m:g}: a fixed duration with no spread",
                 sheet, m_cell, ident)
    return o, m, p, o == m == p


def _cell(row, cols, key):
    c = cols.get(key)
    if c is None or c >= len(row):
        return None
    return row[c]


def validate(raw: RawInput, options=None) -> tuple[Schedule | None, list[Problem]]:
    """Check everything; return the Schedule (None if any error) and all problems."""
    out = _Collector()
    settings, setting_problems = resolve_settings(raw.settings, options)
    out.problems.extend(setting_problems)
    match = raw.activity
    spread_cols = {"optimistic", "pessimistic"} & set(match.columns if match else ())
    fixed_only = match is not None and not spread_cols
    if match is None or any(k not in match.columns for k in REQUIRED_ACTIVITY
                            if not (fixed_only and k in ("optimistic", "pessimistic"))):
        sheet = match.sheet if match else next((s for s in raw.sheets if not s.empty),
                                               raw.sheets[0])
        found = match.headers if match else _first_nonblank_row(sheet)
        present = set(match.columns) if match else set()
        missing = [FIELD_TITLES[k] for k in REQUIRED_ACTIVITY if k not in present]
        if "predecessors" not in present and raw.links is None:
            missing.append(FIELD_TITLES["predecessors"])
        headers = ", ".join(f'"{" ".join(h.split())}"' for h in found if h) or "(none)"
        out.error("missing-column",
                  f"required column(s) missing: {', '.join(missing)}; headers found: {headers}",
                  sheet.name, cell_name(match.header_row, 0) if match else "A1",
                  fix="Name the columns e.g. " + ", ".join(
                      ACTIVITY_COLUMNS[k][0].title() for k in
                      ("id", "predecessors", "optimistic", "most_likely", "pessimistic")))
        return None, out.problems
    if "predecessors" not in match.columns and raw.links is None:
        out.error("missing-column",
                  "required column missing: Predecessors (and no links sheet); headers found: "
                  + ", ".join(f'"{" ".join(h.split())}"' for h in match.headers if h),
                  match.sheet.name, cell_name(match.header_row, 0))
        return None, out.problems

    sheet = match.sheet.name
    cols = match.columns
    if fixed_only:
        out.warn("fixed-durations", "no Optimistic or Pessimistic column: every duration is "
                 "fixed at its Most likely value, so the chances shown carry no spread",
                 sheet, cell_name(match.header_row, cols["most_likely"]),
                 fix="Add Optimistic and Pessimistic columns for a risk analysis.")
    activities: list[Activity] = []
    pred_cells: list[tuple[int, object]] = []  # (row index, predecessor cell value)
    first_row_of: dict[str, int] = {}
    data_rows = match.sheet.rows[match.header_row + 1:]
    for offset, row in enumerate(data_rows):
        r = match.header_row + 1 + offset
        used = [row[c] for c in cols.values() if c < len(row)]
        if all(is_blank(v) for v in used):
            continue
        raw_id = _cell(row, cols, "id")
        if is_blank(raw_id):
            out.error("blank-id", "this row has data but no activity ID", sheet,
                      cell_name(r, cols["id"]), fix="Give the activity an ID or delete the row.")
            _read_estimates(row, cols, r, sheet, None, out)  # report its other problems too
            continue
        ident = id_text(raw_id)
        if ident in first_row_of:
            out.error("duplicate-id",
                      f'ID "{ident}" is used again (first on row {first_row_of[ident] + 1})',
                      sheet, cell_name(r, cols["id"]), ident,
                      fix="Every activity needs its own ID.")
            _read_estimates(row, cols, r, sheet, ident, out)
            continue
        first_row_of[ident] = r
        est = _read_estimates(row, cols, r, sheet, ident, out)
        name_raw = _cell(row, cols, "name")
        name = ident if is_blank(name_raw) else str(name_raw).strip()
        dist = None
        d_raw = _cell(row, cols, "distribution")
        if not is_blank(d_raw):
            try:
                dist = _distribution(d_raw)
            except ValueError as exc:
                out.error("bad-distribution", str(exc), sheet,
                          cell_name(r, cols["distribution"]), ident)
        group_raw = _cell(row, cols, "group")
        group = None if is_blank(group_raw) else id_text(group_raw)
        target = None
        t_raw = _cell(row, cols, "target")
        if not is_blank(t_raw):
            try:
                target = parse_due(t_raw)
                if isinstance(target, dt.date) and settings.start_date is None:
                    out.error("target-date-without-start",
                              f"target {target.isoformat()} is a date but there is no start date",
                              sheet, cell_name(r, cols["target"]), ident,
                              fix="Add a 'Start date' setting or give the target as a duration.")
                    target = None
            except ValueError as exc:
                out.error("bad-target", f"target: {exc}", sheet, cell_name(r, cols["target"]),
                          ident)
        if est is None:
            o = m = p = 0.0
        else:
            o, m, p, _ = est
        activities.append(Activity(ident, name, o, m, p, row=r + 1, distribution=dist,
                                   group=group, target=target))
        pred_cells.append((r, _cell(row, cols, "predecessors")))
    if not activities and not any(p.code in ("blank-id", "duplicate-id")
                                  for p in out.problems):
        out.error("empty", "no activities below the header row", sheet,
                  cell_name(match.header_row + 1, cols["id"]),
                  fix="Add one row per activity under the header.")
        return None, out.problems

    ids = {a.id for a in activities}
    links: list[Link] = []
    seen: dict[tuple[str, str], str] = {}

    def add_link(pred, succ, kind, lag, lsheet, cell):
        key = (pred, succ)
        if key in seen:
            out.error("duplicate-link",
                      f"the link {pred} -> {succ} is given twice (also at {seen[key]})",
                      lsheet, cell, succ, fix="Keep one of the two.")
            return
        seen[key] = f"{lsheet}!{cell}"
        links.append(Link(pred, succ, kind, lag, lsheet, cell))

    pc = cols.get("predecessors")
    for act, (r, value) in zip(activities, pred_cells):
        if pc is None:
            break
        cell = cell_name(r, pc)
        for token in split_predecessors(value):
            parsed = parse_link_token(token)
            if isinstance(parsed, str):
                out.error("bad-link", parsed, sheet, cell, act.id)
                continue
            pred, kind, lag = parsed
            if pred == act.id:
                out.error("self-link", f"{act.id} names itself as a predecessor", sheet, cell,
                          act.id, fix="Remove the activity's own ID from its predecessors.")
                continue
            if pred not in ids:
                hint = _hint(pred, ids)
                out.error("missing-link",
                          f'predecessor "{pred}" is not an activity ID in column '
                          f'{cell_name(0, cols["id"])[:-1]}', sheet, cell, act.id,
                          fix=f"{sheet}!{cell} names predecessor {pred}, which is not in the ID "
                              f"column.{hint}")
                continue
            add_link(pred, act.id, kind, lag, sheet, cell)
    if raw.links is not None:
        _read_links_sheet(raw.links, ids, add_link, out)

    _check_cycles(activities, links, out)
    if len(activities) > 1:
        linked = {lk.pred for lk in links} | {lk.succ for lk in links}
        for a in activities:
            if a.id not in linked:
                out.warn("no-links", "the activity has no predecessors and no successors",
                         sheet, cell_name(a.row - 1, pc if pc is not None else cols["id"]), a.id,
                         fix="Link it into the network, or check it belongs in this schedule.")

    errors = [p for p in out.problems if p.severity == ERROR]
    if errors:
        return None, out.problems
    raw_table = RawTable(
        sheet=sheet,
        header_row=match.header_row + 1,
        headers=match.headers,
        rows=data_rows,
        first_row=match.header_row + 2,
    )
    schedule = Schedule(
        activities=activities,
        links=links,
        settings=settings,
        input_file=str(raw.path),
        sha256=raw.sha256,
        sheet=sheet,
        raw=raw_table,
        warnings=[p for p in out.problems if p.severity == WARNING],
        notes=list(raw.notes),
    )
    return schedule, out.problems


def _first_nonblank_row(sheet: SheetData) -> list[str]:
    for row in sheet.rows:
        if any(not is_blank(v) for v in row):
            return ["" if is_blank(v) else str(v) for v in row]
    return []


def _hint(pred: str, ids: Iterable[str]) -> str:
    ids = set(ids)
    parts = pred.split()
    if len(parts) > 1 and all(p in ids for p in parts):
        return " Separate predecessors with commas or semicolons."
    folded = {i.lower().replace(" ", ""): i for i in ids}
    guess = folded.get(pred.lower().replace(" ", ""))
    if guess:
        return f' Did you mean "{guess}"?'
    return " Add it to the ID column or correct the spelling."


def _read_links_sheet(match, ids, add_link, out: _Collector) -> None:
    sheet = match.sheet.name
    cols = match.columns
    for r in range(match.header_row + 1, len(match.sheet.rows)):
        row = match.sheet.rows[r]
        vals = {k: (row[c] if c < len(row) else None) for k, c in cols.items()}
        if all(is_blank(v) for v in vals.values()):
            continue
        pred = None if is_blank(vals.get("pred")) else id_text(vals["pred"])
        succ = None if is_blank(vals.get("succ")) else id_text(vals["succ"])
        where = cell_name(r, cols["pred"])
        ok = True
        for ident, key in ((pred, "pred"), (succ, "succ")):
            if ident is None:
                out.error("bad-link", "the link row has no "
                          + ("predecessor" if key == "pred" else "successor"),
                          sheet, cell_name(r, cols[key]))
                ok = False
            elif ident not in ids:
                out.error("missing-link", f'"{ident}" is not an activity ID', sheet,
                          cell_name(r, cols[key]), ident,
                          fix=f"{sheet}!{cell_name(r, cols[key])} names {ident}, which is not in "
                              "the activity sheet's ID column.")
                ok = False
        kind = "FS"
        if "type" in cols and not is_blank(vals.get("type")):
            kind = LINK_TYPE_WORDS.get(normalise(vals["type"]))
            if kind is None:
                out.error("bad-link", f"link type {vals['type']!r} is not one of "
                          f"{', '.join(LINK_TYPES)}", sheet, cell_name(r, cols["type"]), succ)
                ok = False
        lag = 0.0
        if "lag" in cols and not is_blank(vals.get("lag")):
            x = as_number(vals["lag"])
            if x is None:
                out.error("bad-link", f"lag {vals['lag']!r} is not a number", sheet,
                          cell_name(r, cols["lag"]), succ)
                ok = False
            else:
                lag = x
        if ok and pred == succ:
            out.error("self-link", f"{pred} is linked to itself", sheet, where, pred)
            ok = False
        if ok:
            add_link(pred, succ, kind, lag, sheet, where)


def _check_cycles(activities, links, out: _Collector) -> None:
    g = nx.DiGraph()
    g.add_nodes_from(a.id for a in activities)
    cell_of = {}
    for lk in links:
        g.add_edge(lk.pred, lk.succ)
        cell_of[(lk.pred, lk.succ)] = (lk.sheet, lk.cell)
    if nx.is_directed_acyclic_graph(g):
        return
    for comp in nx.strongly_connected_components(g):
        if len(comp) < 2:
            continue
        sub = g.subgraph(comp)
        edges = nx.find_cycle(sub)
        order = [u for u, _ in edges]
        # start the printed cycle at the activity listed first in the sheet
        pos = {a.id: i for i, a in enumerate(activities)}
        k = min(range(len(order)), key=lambda i: pos[order[i]])
        order = order[k:] + order[:k]
        text = " -> ".join(order + [order[0]])
        sheet, cell = cell_of[(order[-1], order[0])]
        out.error("cycle", f"dependency cycle: {text}", sheet, cell, order[0],
                  fix="Remove or reverse one of these links: an activity cannot wait for "
                      "itself.")
