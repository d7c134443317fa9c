"""Every conversion option in one place: how it is read, its default, which value wins.

Each option's parser lives in :mod:`converter.options.parsers`.

A value may come from three places; the first that gives it wins:

1. the command line (``pertbook convert`` and ``pertbook watch`` take the same options),
   or a :class:`ConvertOptions` built by a caller of :func:`converter.api.convert`;
2. the input's settings sheet;
3. the default (:class:`converter.model.Settings`).

Each option has ONE parser, used for the command line, the settings sheet and the API
alike; a parser takes a cell value or a text and returns the value or raises
``ValueError`` with a message that says what was expected. :func:`resolve` applies the
order above and turns every bad value into a :class:`~converter.model.Problem` naming
its cell (or its command-line flag), so nothing stops at the first bad value.
"""

from __future__ import annotations

import argparse
import datetime as dt
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass

from converter.model import DISTRIBUTIONS, ERROR, Problem, Settings
from converter.options.parsers import (
    CONFIDENCE_EXAMPLE,
    DEFAULT_SIMULATION_MEMORY_MB,
    DISTRIBUTION_ALIASES,
    MIN_SIMULATION_MEMORY_MB,
    TIME_UNITS,
    DurationWithUnit,
    parse_baseline,
    parse_confidence,
    parse_correlation,
    parse_date,
    parse_default_range,
    parse_distribution,
    parse_due,
    parse_duration,
    parse_hours_per_day,
    parse_iterations,
    parse_memory_mb,
    parse_paths,
    parse_seed,
    parse_start_date,
    parse_time_unit,
    parse_trace,
)
from converter.values import parse_duration as in_time_units
from converter.values import parse_working_days

__all__ = [
    "BY_SETTING",
    "CONFIDENCE_EXAMPLE",
    "ConvertOptions",
    "DEFAULT_SIMULATION_MEMORY_MB",
    "DISTRIBUTION_ALIASES",
    "DurationWithUnit",
    "MIN_SIMULATION_MEMORY_MB",
    "OPTIONS",
    "Option",
    "SheetValue",
    "TIME_UNITS",
    "add_conversion_options",
    "options_from_args",
    "parse_baseline",
    "parse_confidence",
    "parse_correlation",
    "parse_date",
    "parse_default_range",
    "parse_distribution",
    "parse_due",
    "parse_duration",
    "parse_hours_per_day",
    "parse_iterations",
    "parse_memory_mb",
    "parse_paths",
    "parse_seed",
    "parse_start_date",
    "parse_time_unit",
    "parse_trace",
    "resolve",
]


# --------------------------------------------------------------------------- the options
@dataclass(frozen=True)
class Option:
    """One conversion option: its Settings field, parser and help.

    ``attr`` is the :class:`ConvertOptions` field and command-line option (``--due``);
    ``None`` for options given only on the settings sheet. The default is the
    :class:`~converter.model.Settings` field's own. ``setting`` ``None`` marks an option of
    the run alone (never read from the settings sheet, not a Settings field): its flag is
    ``name`` and its default ``default``.
    """

    setting: str | None
    attr: str | None
    parse: Callable[[object], object]
    help: str = ""
    metavar: str | None = None
    name: str | None = None
    default: object = None

    @property
    def flag(self) -> str | None:
        if self.attr is None:
            return None
        return "--" + (self.name or self.attr).replace("_", "-")

    @property
    def default_text(self) -> str:
        """The default in words, e.g. ``"10000"``, ``"50,80,90,95%"``, ``"none"``."""
        if self.setting is None:
            return "none" if self.default is None else str(self.default)
        value = getattr(Settings(), self.setting)
        if value is None:
            return "none"
        if self.setting == "confidence_levels":
            return ",".join(f"{c * 100:g}" for c in value) + "%"
        return f"{value:g}" if isinstance(value, float) else str(value)


OPTIONS: tuple[Option, ...] = (
    Option(
        "start_date",
        "start_date",
        parse_start_date,
        "project start date; dates are counted from it",
        "YYYY-MM-DD",
    ),
    Option(
        "time_unit",
        "time_unit",
        parse_time_unit,
        "the schedule's time unit: working days, weeks (working weeks), calendar days or "
        "working hours",
        "UNIT",
    ),
    Option("working_days", None, parse_working_days),
    Option(
        "hours_per_day",
        "hours_per_day",
        parse_hours_per_day,
        "working hours in one day, above 0 and at most 24: reads 16h or 2d, and dates a "
        "schedule in working hours",
        "H",
    ),
    Option(
        "due",
        "due",
        parse_due,
        "due date: a duration in the schedule's time unit (e.g. 60), one with a unit (12w) "
        "or a date YYYY-MM-DD (needs a start date)",
        "DUE",
    ),
    Option("iterations", "iterations", parse_iterations, "Monte Carlo iterations", "N"),
    Option("seed", "seed", parse_seed, "random seed (written into the output)", "S"),
    Option(
        "distribution",
        "distribution",
        parse_distribution,
        "duration distribution for the simulation",
        "|".join(DISTRIBUTIONS),
    ),
    Option(
        "correlation",
        "correlation",
        parse_correlation,
        "rank correlation among activities of the same group, 0 to below 1",
        "RHO",
    ),
    Option(
        "confidence_levels",
        "confidence",
        parse_confidence,
        'confidence levels in percent, e.g. "50,80,90" (or "50%,80%" or "0.5,0.8")',
        "LEVELS",
    ),
    Option("paths", "paths", parse_paths, "how many of the longest paths to list", "K"),
    Option(
        "status_date",
        "status_date",
        parse_due,
        "status date of a project in flight: progress is recorded as of the end of this "
        "day (YYYY-MM-DD, needs a start date) or offset in time units",
        "STATUS",
    ),
    Option(
        None,
        "simulation_memory_mb",
        parse_memory_mb,
        "memory budget of the simulation in MB, at least 32; beyond it the sensitivities "
        "come from the first iterations only, or the run is refused (exit 2). The "
        "watcher shares it among its workers",
        "MB",
        name="simulation_memory",
        default=DEFAULT_SIMULATION_MEMORY_MB,
    ),
    Option(
        "default_range",
        "default_range",
        parse_default_range,
        "range class (from the Ranges sheet) for activities with a Duration but no Range, "
        "or inline percentages such as 80/100/120",
        "CLASS",
    ),
    Option(
        None,
        "baseline",
        parse_baseline,
        "an earlier run's .analysis.json (or .analysis.xlsx) to compare with: adds the "
        'Changes sheet and the JSON\'s "changes"; with a status date, the progress checks '
        "judge what was due by its early finishes (missed activities, the baseline execution "
        "index)",
        "OLD.analysis.json",
    ),
    Option(
        None,
        "trace",
        parse_trace,
        "iterations the Trace sheet recomputes from their random numbers: a count (0: "
        "none; N: the first N of P80, P50, P90, the longest, P10, P95, P99) or a list of "
        'percentiles and max, e.g. "50,80,95,max"',
        "N|LIST",
        default="50,80,90,max",
    ),
)
BY_SETTING: dict[str, Option] = {o.setting: o for o in OPTIONS if o.setting is not None}


@dataclass
class ConvertOptions:
    """Options given by the caller (command line, watcher or API). ``None`` = not given.

    Values given here override the input's settings sheet, which overrides the defaults
    (:func:`resolve`). Each is read by the option's parser, so ``due="60"``,
    ``due=60.0`` and ``confidence=(50, 80)`` are all accepted.
    """

    due: str | float | dt.date | None = None
    json: bool = False
    iterations: int | None = None
    seed: int | None = None
    distribution: str | None = None
    correlation: float | None = None
    paths: int | None = None
    confidence: tuple[float, ...] | None = None
    start_date: str | dt.date | None = None
    simulate: bool = True
    progress: object | None = None  # callable(done, total) for the simulation
    simulation_workers: int | None = None  # processes for the simulation; None: from the cores
    simulation_memory_mb: int | None = None  # simulation memory budget (MB); None: 1024
    default_range: str | None = None  # range class for rows with a Duration and no Range
    status_date: str | float | dt.date | None = None  # progress as of this date / offset
    time_unit: str | None = None  # the schedule's time unit (working hours among them)
    hours_per_day: float | None = None  # working hours in one day (reads 16h; dates hours)
    baseline: str | None = None  # an earlier run to compare with (convert --baseline)
    trace: str | int | tuple[float, ...] | None = None  # traced iterations; None: P50/80/90, max


# --------------------------------------------------------------------------- command line
def _argument_type(option: Option) -> Callable[[str], object]:
    def parse(text: str) -> object:
        try:
            return option.parse(text)
        except (ValueError, TypeError) as exc:
            raise argparse.ArgumentTypeError(str(exc)) from None

    parse.__name__ = option.setting or option.attr or "value"
    return parse


def add_conversion_options(parser: argparse.ArgumentParser) -> None:
    """Add the conversion options (the same for ``convert`` and ``watch``) to ``parser``."""
    group = parser.add_argument_group("conversion options (override the settings sheet)")
    for option in OPTIONS:
        if option.flag is None:
            continue
        default = "" if option.default_text == "none" else f" (default {option.default_text})"
        group.add_argument(
            option.flag,
            dest=option.attr,
            type=_argument_type(option),
            metavar=option.metavar,
            help=(option.help + default).replace("%", "%%"),
        )
    group.add_argument(
        "--json",
        action="store_true",
        help="also write <stem>.analysis.json (also for invalid input)",
    )
    group.add_argument(
        "--no-simulation", action="store_true", help="skip the Monte Carlo simulation"
    )


def options_from_args(args: argparse.Namespace) -> ConvertOptions:
    """The :class:`ConvertOptions` of arguments parsed with :func:`add_conversion_options`."""
    given = {o.attr: getattr(args, o.attr) for o in OPTIONS if o.attr is not None}
    return ConvertOptions(json=args.json, simulate=not args.no_simulation, **given)


# --------------------------------------------------------------------------- precedence
@dataclass(frozen=True)
class SheetValue:
    """A value read from the settings sheet, with its place."""

    value: object
    sheet: str
    cell: str

    @property
    def where(self) -> str:
        return f"{self.sheet}!{self.cell}"


def resolve(
    sheet_values: Mapping[str, SheetValue],
    holidays: Iterable[SheetValue],
    options: ConvertOptions | None,
) -> tuple[Settings, list[Problem]]:
    """Settings from the defaults, overridden by the sheet, overridden by ``options``.

    Parameters
    ----------
    sheet_values
        Settings field -> the value found on the settings sheet.
    holidays
        The holiday dates found on the settings sheet.
    options
        What the caller gave (command line); ``None`` fields are not given.

    Returns
    -------
    (Settings, problems)
        Each field's origin is in ``Settings.sources`` ("settings sheet (Settings!B4)",
        "command line"; absent: the default). A bad value is a problem and leaves the
        field at the value from the place below it.
    """
    settings = Settings()
    problems: list[Problem] = []
    for key, given in sheet_values.items():
        try:
            setattr(settings, key, BY_SETTING[key].parse(given.value))
        except (ValueError, TypeError) as exc:
            problems.append(
                Problem(
                    ERROR,
                    "bad-setting",
                    f"setting {key.replace('_', ' ')}: {exc}",
                    given.sheet,
                    given.cell,
                )
            )
            continue
        settings.sources[key] = f"settings sheet ({given.where})"
    _resolve_holidays(settings, list(holidays), problems)
    for option in OPTIONS:
        value = None if options is None or option.attr is None else getattr(options, option.attr)
        if value is None:
            continue
        if option.attr == "trace" and not isinstance(value, tuple):
            try:  # not a setting: checked here, read again by the analysis
                option.parse(value)
            except (ValueError, TypeError) as exc:
                problems.append(Problem(ERROR, "bad-option", f"{option.flag}: {exc}"))
        if option.setting is None:
            continue
        try:
            setattr(settings, option.setting, option.parse(value))
        except (ValueError, TypeError) as exc:
            problems.append(Problem(ERROR, "bad-option", f"command line {option.flag}: {exc}"))
            continue
        settings.sources[option.setting] = "command line"
    problems += _due_in_time_units(settings, sheet_values.get("due"))
    problems += _due_needs_start(settings, sheet_values.get("due"))
    problems += _due_needs_start(settings, sheet_values.get("status_date"), "status_date")
    return settings, problems


def _resolve_holidays(settings: Settings, given: list[SheetValue], problems: list) -> None:
    days = []
    for g in given:
        try:
            days.append(parse_date(g.value))
        except ValueError as exc:
            problems.append(Problem(ERROR, "bad-setting", f"holiday {exc}", g.sheet, g.cell))
    if days:
        settings.holidays = tuple(sorted(set(days)))
        settings.sources["holidays"] = f"settings sheet ({given[0].sheet})"


def _due_in_time_units(settings: Settings, on_sheet: SheetValue | None) -> list[Problem]:
    """A due duration typed with a unit (``3w``) in the time unit, now that the time unit,
    ``Hours per day`` and the working week are known; a problem when it is too long."""
    due = settings.due
    if not isinstance(due, DurationWithUnit):
        return []
    s = settings
    x = in_time_units(due.text, s.time_unit, s.hours_per_day, len(s.working_days))
    try:
        settings.due = parse_duration(x)
    except ValueError as exc:
        settings.due = None
        from_sheet = settings.source_of("due").startswith("settings sheet") and on_sheet
        return [
            Problem(
                ERROR,
                "bad-setting" if from_sheet else "bad-option",
                f"{'setting due' if from_sheet else 'command line --due'}: "
                f'"{due.text}" is {x:,.6g} {settings.time_unit}: {exc}',
                on_sheet.sheet if from_sheet else None,
                on_sheet.cell if from_sheet else None,
            )
        ]
    return []


def _due_needs_start(
    settings: Settings, on_sheet: SheetValue | None, key: str = "due"
) -> list[Problem]:
    """A due date or status date (not a duration) needs a start date to count from."""
    value = getattr(settings, key)
    if settings.start_date is not None or not isinstance(value, dt.date):
        return []
    from_sheet = settings.source_of(key).startswith("settings sheet")
    words = key.replace("_", " ")
    flag = "--" + key.replace("_", "-")
    return [
        Problem(
            ERROR,
            f"{key.replace('_', '-')}-without-start" if key != "due" else "due-date-without-start",
            f"the {words if key != 'due' else 'due date'} {value.isoformat()} is a calendar "
            "date but there is no start date to count from"
            + ("" if from_sheet else f" ({flag} on the command line)"),
            on_sheet.sheet if from_sheet and on_sheet else None,
            on_sheet.cell if from_sheet and on_sheet else None,
            fix="Add a 'Start date' row to the settings sheet (or --start-date), or give "
            f"the {words if key != 'due' else 'due date'} as a number of time units.",
        )
    ]
